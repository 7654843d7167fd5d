"""Processes share the store: equal seeds give equal episodes in two processes, and a second process maps the
pages the first one read instead of copying them.

Shared_Clean in /proc/PID/smaps_rollup counts the clean pages a process maps that other processes map too
(Linux kernel documentation, Documentation/filesystems/proc.rst, "smaps").
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from tests.world_fixtures import FAST_ACOUSTICS, ROOM

ROOT = Path(__file__).resolve().parents[2]
EPISODE = """
import json, sys
import numpy as np
from hearnav.env import HearNavEnv
env = HearNavEnv(scenes=[{room!r}], acoustics={acoustics!r}, budget=6)
obs, info = env.reset(seed=11)
rows = [[info["si_sdr_db"], info["input_si_sdr_db"], float(obs["binaural"].sum()), float(obs["map"].sum())]]
for action in [0, 1, 0, 0, 2, 3]:
    obs, reward, _, _, info = env.step(action)
    rows.append([reward, info["si_sdr_db"], float(obs["binaural"].sum()), float(obs["estimate"].sum())])
print(json.dumps(rows))
"""


def _run(code: str) -> str:
    """Run Python code in a fresh process with this checkout's hearnav and the test's environment variables."""
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, env=dict(os.environ), capture_output=True,
                         text=True, timeout=300)
    assert out.returncode == 0, out.stderr
    return out.stdout


@pytest.mark.slow
def test_equal_seeds_give_element_wise_equal_episodes_in_two_processes():
    code = EPISODE.format(room=ROOM, acoustics=FAST_ACOUSTICS)
    first = json.loads(_run(code))  # the first process builds the tables
    second = json.loads(_run(code))  # the second one maps them
    assert len(first) == 7
    assert first == second


ROLLUP = """
import json
from hearnav.acoustics import AcousticSettings
from hearnav.scene.library import load_named
from hearnav.tables import response_spectra

def shared_clean():
    for line in open("/proc/self/smaps_rollup"):
        if line.startswith("Shared_Clean:"):
            return int(line.split()[1]) * 1024

before = shared_clean()
spectra = response_spectra(load_named({room!r}), AcousticSettings(**{acoustics!r}), 1600)
print(json.dumps([before, shared_clean(), spectra.spectra.nbytes]))
"""


@pytest.mark.skipif(not Path("/proc/self/smaps_rollup").exists(), reason="needs Linux's /proc/PID/smaps_rollup")
def test_a_second_process_shares_the_pages_of_the_tables():
    from hearnav.acoustics import AcousticSettings
    from hearnav.scene.library import load_named
    from hearnav.tables import response_spectra

    spectra = response_spectra(load_named(ROOM), AcousticSettings(**FAST_ACOUSTICS), 1600)  # this process maps it
    assert float(np.abs(spectra.spectra[0, 0, 0]).sum()) > 0
    before, after, nbytes = json.loads(_run(ROLLUP.format(room=ROOM, acoustics=FAST_ACOUSTICS)))
    assert after - before >= 0.9 * nbytes  # the child's pages of the spectra are shared with this process
