"""A policy whose act calls sys.exit(3) (crafted for tests/hostile/test_policies.py)."""

import sys


class Exits:
    def reset(self, obs, info):
        pass

    def act(self, obs, info):
        sys.exit(3)
