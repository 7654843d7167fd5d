"""A policy whose act raises KeyboardInterrupt, a BaseException that is not an Exception."""


class Interrupts:
    def reset(self, obs, info):
        pass

    def act(self, obs, info):
        raise KeyboardInterrupt
