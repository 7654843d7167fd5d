"""Packaging: every subpackage is in the wheel, and an installed wheel runs the smoke suite on its own data."""

import json
import os
import shutil
import subprocess
import sys
import sysconfig
import tomllib
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def test_every_subpackage_is_listed():
    # The package list in pyproject.toml is explicit (it maps the data folders into hearnav.bundled), so a new
    # subpackage must be added there or the wheel silently lacks it.
    listed = set(tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]["packages"])
    found = {".".join(p.parent.relative_to(ROOT).parts) for p in (ROOT / "hearnav").rglob("__init__.py")}
    assert found <= listed
    assert listed - found == {"hearnav.bundled.scenes", "hearnav.bundled.configs", "hearnav.bundled.baselines"}


@pytest.mark.slow
def test_an_installed_wheel_runs_the_smoke_suite(tmp_path):
    # A wheel in a fresh virtual environment, run from a folder outside the repository: the scenes, the suite
    # and the still baseline must come from the package data. The new environment reuses this one's
    # dependencies through a path entry (not a site directory, so this checkout's editable install is unseen).
    source = tmp_path / "source"  # a copy, so the build leaves no build/ folder in the checkout and reads none
    shutil.copytree(ROOT, source, ignore=shutil.ignore_patterns(".git", ".venv", "build", "dist", "results", "out",
                                                                "__pycache__", "*.egg-info", ".pytest_cache"))
    wheels = tmp_path / "wheels"
    subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w", str(wheels), str(source)],
                   check=True, capture_output=True)
    venv = tmp_path / "venv"
    subprocess.run([sys.executable, "-m", "venv", "--without-pip", str(venv)], check=True)
    python = venv / "bin" / "python"
    site = Path(subprocess.run([python, "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
                               check=True, capture_output=True, text=True).stdout.strip())
    (site / "deps.pth").write_text(sysconfig.get_paths()["purelib"] + "\n")
    subprocess.run([sys.executable, "-m", "pip", "install", "-q", "--no-deps", "--target", str(site),
                    *map(str, wheels.glob("hearnav-*.whl"))], check=True, capture_output=True)
    work = tmp_path / "elsewhere"
    work.mkdir()
    env = {**os.environ, "HEARNAV_CACHE": str(tmp_path / "cache"), "PYTHONPATH": ""}
    env.pop("HEARNAV_SCENES", None)
    where = subprocess.run([python, "-c", "import hearnav, hearnav.bundled as b; print(hearnav.__file__); "
                            "print(b.folder('scenes'))"], cwd=work, env=env, check=True, capture_output=True,
                           text=True).stdout.split()
    assert all(Path(p).is_relative_to(site) for p in where), where
    run = subprocess.run([python, "-m", "hearnav", "bench", "--suite", "smoke", "--policy", "still", "--out",
                          str(work / "out")], cwd=work, env=env, capture_output=True, text=True)
    assert run.returncode == 0, run.stderr[-2000:]
    rows = [json.loads(line) for line in (work / "out" / "episodes.jsonl").read_text().splitlines()]
    assert len(rows) == 8 and {r["policy"] for r in rows} == {"still"} and all(r["status"] == "ok" for r in rows)
