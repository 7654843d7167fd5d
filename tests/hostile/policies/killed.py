"""A policy whose act kills its own process with SIGKILL, as the out-of-memory killer would."""

import os
import signal


class Killed:
    def reset(self, obs, info):
        pass

    def act(self, obs, info):
        os.kill(os.getpid(), signal.SIGKILL)
