"""A policy whose act raises."""


class Raises:
    def reset(self, obs, info):
        pass

    def act(self, obs, info):
        raise ValueError("no idea where to go")
