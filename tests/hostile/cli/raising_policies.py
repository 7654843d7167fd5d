"""Crafted policies whose own code fails while they are being made (read by tests/hostile/test_cli_args.py)."""


class Bad:
    """A policy class whose constructor raises."""

    def __init__(self):
        raise ValueError("boom")

    def reset(self, observation, info):
        pass

    def act(self, observation, info):
        return 3


def broken_factory():
    """A factory that raises, as one loading a missing model file would."""
    raise RuntimeError("model file 'weights.zip' is missing\nsecond line never shown")


class Needs:
    """A policy class that cannot be made with no arguments."""

    def __init__(self, model_path):
        self.model_path = model_path

    def reset(self, observation, info):
        pass

    def act(self, observation, info):
        return 3
