"""Result keys and the run-folder lock (issue 11, items 2 and 9).

A run folder, its rows and the oracle-bound cache are keyed by everything that changes a result, so an edited
scene file under the same name recomputes its bounds, and a rerun into the old ``--out`` is refused in one
line; rows carry the key, so a deleted ``run.json`` lets no other run's rows in; a second run on a folder in
use fails at once. The lock is ``flock`` on ``DIR/.lock`` (POSIX ``flock`` semantics, as in Linux flock(2):
a lock taken through another open file description conflicts, even in the same process).
"""

from __future__ import annotations

import fcntl
import json
import shutil
from pathlib import Path

import pytest
import yaml

from hearnav.bench.keys import code_version
from hearnav.bench.results import LOCK_FILE, read_rows
from hearnav.bench.suites import load_suite
from hearnav.cli import main
from hearnav.errors import short_repr
from hearnav.scene.library import clear_cache
from tests.conftest import shoebox_dict
from tests.world_fixtures import FAST_ACOUSTICS

HERE = Path(__file__).parent / "keys"
ROOM = "keys-room"
SUITE = {"name": "keys-tiny", "episodes": 2, "seed": 7,
         "env": {"scenes": [ROOM], "acoustics": FAST_ACOUSTICS, "budget": 2, "target_category": ["talker", "noise"]}}
# A hang guard, not a speed goal: a second run that waited for the lock would never return.
pytestmark = pytest.mark.timeout(120)


def _scene(absorption: float) -> dict:
    """A 6 x 4 m shoebox with two spots; its surfaces absorb ``absorption`` in every band."""
    spots = [{"name": "a", "position": [1.0, 1.0], "height": 1.5}, {"name": "b", "position": [5.0, 3.0], "height": 1.2}]
    return shoebox_dict(absorption=absorption, spots=spots, name=ROOM)


@pytest.fixture
def setup(tmp_path, monkeypatch):
    """A HEARNAV_SCENES folder with the room, the tiny suite's file and the results folder to use."""
    scenes = tmp_path / "scenes"
    scenes.mkdir()
    (scenes / f"{ROOM}.yaml").write_text(yaml.safe_dump(_scene(0.2)))
    monkeypatch.setenv("HEARNAV_SCENES", str(scenes))
    clear_cache()
    suite = tmp_path / "keys-tiny.yaml"
    suite.write_text(yaml.safe_dump(SUITE))
    yield scenes / f"{ROOM}.yaml", suite, tmp_path / "run"
    clear_cache()


def _bench(suite: Path, out: Path, capsys) -> tuple[int, str]:
    code = main(["bench", "--suite", str(suite), "--policy", "still", "--out", str(out)])
    err = capsys.readouterr().err.strip()
    assert "Traceback" not in err
    return code, err


def _key(suite: Path) -> str:
    clear_cache()
    return load_suite(str(suite)).result_key()


def _refusal(where: str, found: str, expected: str, detail: str = "") -> str:
    return (f"hearnav: error: {where} holds results of another suite or scene version (key {found}, expected "
            f"{expected}{detail}): use a new --out folder")


def test_an_edited_scene_recomputes_its_bounds_and_its_old_folder_is_refused(setup, capsys, private_cache):
    scene, suite, out = setup
    assert _bench(suite, out, capsys)[0] == 0
    old_key, old_rows = _key(suite), read_rows(out / "episodes.jsonl")
    manifest = (out / "run.json").read_text()
    assert sorted(p.name for p in (private_cache / "oracle").iterdir()) == [f"oracle-{old_key}.json"]

    scene.write_text(yaml.safe_dump(_scene(0.6)))  # the same name, other walls
    new_key = _key(suite)
    assert new_key != old_key
    code, err = _bench(suite, out, capsys)
    assert code == 2 and err == _refusal(out, old_key, new_key, f"; changed: scene {ROOM}")
    assert read_rows(out / "episodes.jsonl") == old_rows and (out / "run.json").read_text() == manifest

    fresh = out.parent / "fresh"
    assert _bench(suite, fresh, capsys)[0] == 0
    assert sorted(p.name for p in (private_cache / "oracle").iterdir()) == sorted(
        [f"oracle-{old_key}.json", f"oracle-{new_key}.json"])
    old_bounds = [r["oracle_gain_db"] for r in old_rows]
    new_bounds = [r["oracle_gain_db"] for r in read_rows(fresh / "episodes.jsonl")]
    assert all(a != b for a, b in zip(old_bounds, new_bounds))  # recomputed, not the stale bound

    # rows, manifest and summary carry the key of the run that wrote them
    assert {r["run_key"] for r in read_rows(fresh / "episodes.jsonl")} == {new_key}
    assert json.loads((fresh / "run.json").read_text())["run_key"] == new_key
    assert json.loads((fresh / "summary.json").read_text())["run_key"] == new_key
    assert (fresh / LOCK_FILE).exists()  # left behind, empty and unlocked: the next run takes it
    assert _bench(suite, fresh, capsys)[0] == 0  # a resume under the same key is accepted


def test_whitespace_comments_and_description_keep_the_key(setup):
    scene, suite, _ = setup
    before = _key(suite)
    data = _scene(0.2)
    data["description"] = "the same room, described again"
    scene.write_text("# a comment\n\n" + yaml.safe_dump(data, indent=4, sort_keys=False))
    assert _key(suite) == before
    data["spots"][1]["height"] = 1.3  # content: the key changes
    scene.write_text(yaml.safe_dump(data))
    assert _key(suite) != before


@pytest.mark.parametrize("crafted, found", [("foreign-rows.jsonl", "0123456789abcdef"),  # another run's rows
                                            ("keyless-rows.jsonl", "None")])  # rows of a version before keys
def test_rows_of_another_key_are_refused_without_a_manifest(setup, capsys, crafted, found):
    _, suite, out = setup
    out.mkdir()
    shutil.copy(HERE / crafted, out / "episodes.jsonl")  # as if run.json had been deleted
    code, err = _bench(suite, out, capsys)
    assert code == 2 and err == _refusal(out / "episodes.jsonl line 1", found, _key(suite))
    assert sorted(p.name for p in out.iterdir()) == [LOCK_FILE, "episodes.jsonl"]  # no run.json written
    assert (out / "episodes.jsonl").read_bytes() == (HERE / crafted).read_bytes()  # nothing lost


def test_a_huge_key_in_a_row_is_shown_bounded(setup, capsys):
    _, suite, out = setup
    out.mkdir()
    row = json.loads((HERE / "foreign-rows.jsonl").read_text())
    (out / "episodes.jsonl").write_text(json.dumps({**row, "run_key": "A" * 100_000}) + "\n")
    code, err = _bench(suite, out, capsys)
    assert code == 2 and err == _refusal(out / "episodes.jsonl line 1", short_repr("A" * 100_000), _key(suite))


def test_a_manifest_of_a_version_before_keys_is_refused(setup, capsys):
    _, suite, out = setup
    out.mkdir()
    shutil.copy(HERE / "old-run.json", out / "run.json")
    code, err = _bench(suite, out, capsys)
    # it is also of an older scoring (model2): the message says so (issue 12, item 6)
    assert code == 2 and err == (f"hearnav: error: {out} holds results of another hearnav version, scored "
                                 f"differently (code '0.1.0+model2', expected {code_version()}; key None, expected "
                                 f"{_key(suite)}): scores of different versions cannot be compared; use a new --out "
                                 f"folder")


def test_a_rerun_after_deleting_the_manifest_under_another_suite_is_refused(setup, capsys):
    _, suite, out = setup
    assert _bench(suite, out, capsys)[0] == 0
    first = _key(suite)
    (out / "run.json").unlink()
    suite.write_text(yaml.safe_dump({**SUITE, "seed": 8}))
    code, err = _bench(suite, out, capsys)
    assert code == 2 and err == _refusal(out / "episodes.jsonl line 1", first, _key(suite))


def test_a_second_run_on_a_folder_in_use_fails_at_once(setup, capsys):
    _, suite, out = setup
    out.mkdir()
    with open(out / LOCK_FILE, "w") as held:  # the first run, holding the folder
        fcntl.flock(held, fcntl.LOCK_EX | fcntl.LOCK_NB)
        code, err = _bench(suite, out, capsys)
    assert code == 2
    assert err == (f"hearnav: error: {out} is in use by another run (expected a results folder no other run "
                   f"writes to, found {LOCK_FILE} locked): wait for that run to end or use a new --out folder")
    assert sorted(p.name for p in out.iterdir()) == [LOCK_FILE]  # no manifest, no rows


def test_an_edited_plug_in_file_changes_the_key(setup, tmp_path):
    import importlib.util

    from hearnav.separation import register_separator
    from hearnav.separation.registry import SEPARATORS

    _, suite, _ = setup
    plugin = tmp_path / "keys_plugin.py"
    plugin.write_text("def left(mixture, ctx):\n    return mixture[0]\n")
    spec = importlib.util.spec_from_file_location("keys_plugin", plugin)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    register_separator("keys-left", module.left)
    try:
        suite.write_text(yaml.safe_dump({**SUITE, "env": {**SUITE["env"], "separator": "keys-left"}}))
        before = _key(suite)
        plugin.write_text("def left(mixture, ctx):\n    return mixture[1]\n")  # same name, other code
        assert _key(suite) != before
    finally:
        SEPARATORS.remove("keys-left")
