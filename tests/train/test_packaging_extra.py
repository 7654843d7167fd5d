"""torch and stable-baselines3 live in the train extra; the README's test command and .ci/run install it."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def _names(requirements: list[str]) -> set[str]:
    return {re.split(r"[<>=!\[ ;]", r, maxsplit=1)[0].lower().replace("_", "-") for r in requirements}


def test_torch_and_sb3_are_only_in_the_train_extra():
    project = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
    assert not _names(project["dependencies"]) & {"torch", "stable-baselines3"}
    assert {"torch", "stable-baselines3"} <= _names(project["optional-dependencies"]["train"])


def test_readme_test_command_is_the_ci_command_and_installs_the_train_extra():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    ci = [line for line in (ROOT / ".ci" / "run").read_text().splitlines() if "pip install" in line]
    assert len(ci) == 1 and "'.[train,test]'" in ci[0]
    assert f"    {ci[0]}\n" in readme  # the README shows exactly the command CI runs
    main_job = [line for line in readme.splitlines() if line.strip().endswith("hearnav demo --out results/demo")]
    assert len(main_job) == 1 and "torch" not in main_job[0]  # the main job runs on the base install


def test_shipped_agent_is_package_data_with_its_record():
    setup = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]
    assert {"*.npz", "*.json"} <= set(setup["package-data"]["hearnav.train.agents"])
    assert "train/*.yaml" in setup["package-data"]["hearnav.bundled.configs"]
