"""A policy whose act never returns; with HEARNAV_TEST_PID_FILE set it first writes its process id there."""

import os
import time


class Sleeps:
    def reset(self, obs, info):
        pass

    def act(self, obs, info):
        where = os.environ.get("HEARNAV_TEST_PID_FILE")
        if where:
            with open(where, "w") as fh:
                fh.write(str(os.getpid()))
        while True:
            time.sleep(3600)
