"""A policy whose act raises an exception that cannot be turned into text."""


class Unprintable(Exception):
    def __str__(self):
        raise RuntimeError("no text for you")


class RaisesUnprintable:
    def reset(self, obs, info):
        pass

    def act(self, obs, info):
        raise Unprintable()
