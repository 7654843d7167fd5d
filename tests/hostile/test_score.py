"""Issue 12 (honest scoring), attacks on the new interfaces: a results folder of the old scoring under --out, and
separators that keep the old mono interface or return the ears the wrong way round.

Crafted files in tests/hostile/score/: ``old-scoring-run.json`` (the manifest of a run scored against the old
head-centre reference, code version 0.1.0+model2) and ``old-scoring-rows.jsonl`` (one of its rows, with the old
``start_ear_si_sdr_db`` field).
"""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pytest
import yaml

from hearnav.bench.keys import code_version
from hearnav.bench.suites import load_suite
from hearnav.cli import main
from hearnav.errors import SeparatorError
from hearnav.scene.library import clear_cache
from hearnav.separation import SeparationContext, get_separator, register_separator
from hearnav.separation.registry import unregister_separator
from tests.conftest import shoebox_dict
from tests.world_fixtures import FAST_ACOUSTICS

HERE = Path(__file__).parent / "score"
ROOM = "score-room"
# A hang guard, not a speed goal.
pytestmark = pytest.mark.timeout(120)


@pytest.fixture
def setup(tmp_path, monkeypatch):
    """A HEARNAV_SCENES folder with a small room, and a tiny suite file using ``separator`` (set by the test)."""
    scenes = tmp_path / "scenes"
    scenes.mkdir()
    spots = [{"name": "a", "position": [1.0, 1.0], "height": 1.5}, {"name": "b", "position": [5.0, 3.0], "height": 1.2}]
    (scenes / f"{ROOM}.yaml").write_text(yaml.safe_dump(shoebox_dict(spots=spots, name=ROOM)))
    monkeypatch.setenv("HEARNAV_SCENES", str(scenes))
    clear_cache()

    def suite(separator: str = "delay-and-sum") -> Path:
        path = tmp_path / "score-tiny.yaml"
        path.write_text(yaml.safe_dump({"name": "score-tiny", "episodes": 1, "seed": 7, "env": {
            "scenes": [ROOM], "acoustics": FAST_ACOUSTICS, "budget": 2, "separator": separator,
            "target_category": ["noise"]}}))
        return path

    yield suite, tmp_path / "run"
    clear_cache()


def _bench(suite: Path, out: Path, capsys) -> tuple[int, str]:
    code = main(["bench", "--suite", str(suite), "--policy", "still", "--out", str(out)])
    err = capsys.readouterr().err.strip().splitlines()
    assert not any("Traceback" in line for line in err)
    return code, err[0] if err else ""


def test_a_results_folder_of_the_old_scoring_is_refused_and_kept(setup, capsys):
    suite, out = setup
    path = suite()
    out.mkdir()
    shutil.copy(HERE / "old-scoring-run.json", out / "run.json")
    shutil.copy(HERE / "old-scoring-rows.jsonl", out / "episodes.jsonl")
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    code, line = _bench(path, out, capsys)
    clear_cache()
    key = load_suite(str(path)).result_key()
    assert code == 2
    assert line == (f"hearnav: error: {out} holds results of another hearnav version, scored differently (code "
                    f"'0.1.0+model2', expected {code_version()}; key 9f1c2b7a4d6e8f01, expected {key}): scores of "
                    f"different versions cannot be compared; use a new --out folder")
    assert {p.name: p.read_bytes() for p in out.iterdir() if p.name != ".lock"} == before  # nothing lost


@pytest.fixture
def scratch():
    names: list[str] = []
    yield names
    for name in names:
        unregister_separator(name)


def test_a_separator_with_the_old_mono_interface_is_refused_in_one_line(setup, capsys, scratch):
    suite, out = setup
    register_separator("old-mono", lambda mixture, ctx: mixture.mean(axis=0))
    scratch.append("old-mono")
    code, line = _bench(suite("old-mono"), out, capsys)
    assert code == 2
    assert line.startswith("hearnav: error: ")
    assert line.endswith("separator 'old-mono' must return a finite (2, 7680) estimate (the target at the left and "
                         "right ear), got shape (7680,); return one row per ear")


def test_a_separator_returning_ears_as_columns_is_refused(scratch):
    register_separator("columns", lambda mixture, ctx: mixture.T)
    scratch.append("columns")
    with pytest.raises(SeparatorError) as err:
        get_separator("columns")(np.zeros((2, 100)), SeparationContext(16000, 0.0))
    assert str(err.value) == ("separator 'columns' must return a finite (2, 100) estimate (the target at the left and "
                              "right ear), got shape (100, 2); return one row per ear")
