"""The crash-safe episode file and the run manifest guard."""

from __future__ import annotations

import json
import math
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from hearnav.bench.results import (EpisodeResult, ResultsError, ResultWriter, append_row, check_manifest, comparable,
                                   done_keys, read_manifest, read_rows, repair, write_manifest)
from hearnav.errors import HearnavError

REPO = Path(__file__).resolve().parents[2]


def row(i: int, **extra) -> dict:
    return {"policy": "still", "episode_seed": i, "status": "ok", "gain_db": 0.5 * i, **extra}


def test_round_trip(tmp_path):
    path = tmp_path / "episodes.jsonl"
    rows = [row(0), row(1, note="ü"), row(2, nested={"a": [1, 2.5]})]
    append_row(path, rows[0])
    with ResultWriter(path) as writer:
        writer.append(rows[1])
        writer.append(rows[2])
    assert writer.closed
    assert read_rows(path) == rows
    lines = path.read_bytes().split(b"\n")
    assert lines[-1] == b"" and len(lines) == 4  # one line per row, newline-terminated
    assert lines[0] == json.dumps(rows[0], sort_keys=True).encode()  # sorted keys


def test_missing_file_has_no_rows(tmp_path):
    assert read_rows(tmp_path / "none.jsonl") == []


def test_nan_and_inf_become_null_and_numpy_becomes_python(tmp_path):
    path = tmp_path / "episodes.jsonl"
    append_row(path, row(0, gain_db=float("nan"), best=np.float32(2.0), worst=-math.inf,
                         trace=np.array([1.0, np.nan])))
    text = path.read_text()
    assert "NaN" not in text and "Infinity" not in text
    assert read_rows(path) == [row(0, gain_db=None, best=2.0, worst=None, trace=[1.0, None])]


def test_unserialisable_value_raises_our_error(tmp_path):
    with pytest.raises(ResultsError, match="expected a row of JSON values"):
        append_row(tmp_path / "e.jsonl", row(0, bad=object()))
    assert isinstance(ResultsError("x"), HearnavError)


def test_torn_last_line_is_ignored_then_repaired(tmp_path):
    path = tmp_path / "episodes.jsonl"
    for i in range(3):
        append_row(path, row(i))
    clean = path.read_bytes()
    with open(path, "ab") as fh:
        fh.write(b'{"episode_seed": 3, "pol')  # a write cut short by a crash
    assert read_rows(path) == [row(0), row(1), row(2)]
    with pytest.raises(ResultsError, match="partial last line.*repair"):
        append_row(path, row(3))  # appending now would glue two rows together
    assert repair(path) == len(b'{"episode_seed": 3, "pol')
    assert path.read_bytes() == clean
    append_row(path, row(3))
    assert read_rows(path) == [row(i) for i in range(4)]
    assert repair(path) == 0


def test_repair_completes_a_row_missing_only_its_newline(tmp_path):
    path = tmp_path / "episodes.jsonl"
    path.write_bytes(json.dumps(row(0)).encode() + b"\n" + json.dumps(row(1)).encode())
    assert read_rows(path) == [row(0), row(1)]
    assert repair(path) == 0
    assert path.read_bytes().endswith(b"\n")
    append_row(path, row(2))
    assert read_rows(path) == [row(0), row(1), row(2)]


def test_torn_middle_line_raises_with_line_number(tmp_path):
    path = tmp_path / "episodes.jsonl"
    good = [json.dumps(row(i)) for i in range(4)]
    path.write_text("\n".join([good[0], good[1], '{"episode_seed": 9, "pol', good[2], good[3]]) + "\n")
    with pytest.raises(ResultsError, match=r"episodes\.jsonl line 3: expected one JSON object per line"):
        read_rows(path)


@pytest.mark.timeout(30)  # only a hung subprocess gets near this; the test takes about a second
def test_sigkill_leaves_only_complete_rows(tmp_path):
    path = tmp_path / "episodes.jsonl"
    script = (
        "import sys\n"
        "from hearnav.bench.results import ResultWriter\n"
        "with ResultWriter(sys.argv[1]) as w:\n"
        "    i = 0\n"
        "    while True:\n"
        "        w.append({'policy': 'p', 'episode_seed': i, 'status': 'ok', 'pad': 'x' * 3000})\n"
        "        print(i, flush=True)\n"
        "        i += 1\n"
    )
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    proc = subprocess.Popen([sys.executable, "-c", script, str(path)], stdout=subprocess.PIPE, env=env, cwd=REPO)
    acknowledged = -1
    try:
        first = proc.stdout.readline()  # waits for the import (about a second; more on a loaded machine)
        if first:
            acknowledged = int(first)
        deadline = time.monotonic() + 1.0  # then let it write for at most a second
        while acknowledged < 50 and time.monotonic() < deadline:
            line = proc.stdout.readline()
            if not line:
                break
            acknowledged = int(line)
    finally:
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=5)
        # the pipe may hold acknowledgements we have not read yet: the last complete one is the truth
        for line in proc.stdout.read().split(b"\n")[:-1]:
            acknowledged = int(line)
        proc.stdout.close()
    assert proc.returncode == -signal.SIGKILL
    assert acknowledged >= 5, "the writer subprocess wrote fewer than 5 rows before it was killed"
    rows = read_rows(path)
    seeds = [r["episode_seed"] for r in rows]
    assert seeds == list(range(len(rows)))  # complete, in order, nothing skipped
    assert all(r["pad"] == "x" * 3000 for r in rows)
    # every row the writer reported as written is there; at most the one in flight is extra
    assert acknowledged + 1 <= len(rows) <= acknowledged + 2
    repair(path)
    append_row(path, {"policy": "p", "episode_seed": len(rows), "status": "ok", "pad": ""})
    assert len(read_rows(path)) == len(rows) + 1


def test_done_keys_takes_ok_and_failed_only():
    rows = [row(0), {"policy": "walk", "episode_seed": 1, "status": "failed"},
            {"policy": "walk", "episode_seed": 2, "status": "started"}, row(0)]
    assert done_keys(rows) == {("still", 0), ("walk", 1)}
    with pytest.raises(ResultsError, match="row 0: expected keys 'policy' and 'episode_seed'"):
        done_keys([{"status": "ok"}])


MANIFEST = {"suite": "small", "run_key": "abc123", "key_parts": {"suite": "s1", "scenes": {"room": "r1"}}}


def test_manifest_written_when_absent_and_accepted_when_same(tmp_path):
    out = tmp_path / "run"
    assert check_manifest(out, MANIFEST) == MANIFEST
    assert json.loads((out / "run.json").read_text()) == MANIFEST
    assert check_manifest(out, {**MANIFEST, "started": "later"}) == MANIFEST  # the stored one stays
    assert read_manifest(out) == MANIFEST
    assert [p.name for p in out.iterdir()] == ["run.json"]  # no temporary file left behind


def test_manifest_guard_refuses_another_key_and_names_the_changed_parts(tmp_path):
    out = tmp_path / "run"
    write_manifest(out, MANIFEST)
    with pytest.raises(ResultsError) as info:
        check_manifest(out, {"suite": "small", "run_key": "fff999",
                             "key_parts": {"suite": "s1", "scenes": {"room": "r2", "hall": "h1"}}})
    assert str(info.value) == (f"{out} holds results of another suite or scene version (key abc123, expected "
                               f"fff999; changed: scene hall, scene room): use a new --out folder")
    with pytest.raises(ResultsError, match="key abc123, expected abc124\\): use a new --out folder$"):
        check_manifest(out, {"run_key": "abc124"})  # no parts to compare: no list of changes
    assert read_manifest(out) == MANIFEST  # untouched


def test_manifest_guard_refuses_rows_of_another_key_even_without_a_manifest(tmp_path):
    out = tmp_path
    append_row(out / "episodes.jsonl", {**row(0), "run_key": "abc123"})
    append_row(out / "episodes.jsonl", row(1))  # a row of an older version: no key
    with pytest.raises(ResultsError) as info:
        check_manifest(out, MANIFEST)
    assert str(info.value) == (f"{out / 'episodes.jsonl'} line 2 holds results of another suite or scene version "
                               f"(key None, expected abc123): use a new --out folder")
    assert read_manifest(out) is None  # nothing written when refused


def test_manifest_needs_the_result_key(tmp_path):
    with pytest.raises(ResultsError, match=r"got one without \['run_key'\]"):
        check_manifest(tmp_path, {"suite": "s", "suite_hash": "h", "code_version": "v"})


def test_write_manifest_replaces_atomically(tmp_path):
    write_manifest(tmp_path, MANIFEST)
    write_manifest(tmp_path, {**MANIFEST, "run_key": "new"})
    assert read_manifest(tmp_path)["run_key"] == "new"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["run.json"]


def test_comparable_drops_time_keys():
    r = row(0, wall_time_s=12.3, start_time="2024", Time=1, step_times=[1, 2], timings={"step": 1}, stats={"sep_time": 2.0, "k": 1},
            gain=float("nan"))
    assert comparable(r) == {"policy": "still", "episode_seed": 0, "status": "ok", "gain_db": 0.0,
                             "stats": {"k": 1}, "gain": None, "timings": {"step": 1}}  # "timings" lacks "time"
    assert "wall_time_s" in r  # the input is not modified


def test_comparable_matches_written_row(tmp_path):
    path = tmp_path / "episodes.jsonl"
    a = row(1, wall_time_s=1.0, score=np.float64(np.nan))
    append_row(path, a)
    b = {**read_rows(path)[0], "wall_time_s": 99.0}
    assert comparable(a) == comparable(b)


# A row as hearnav bench wrote it before rows were typed (field names and JSON types of that file format).
WRITTEN_ROW = {"policy": "random-walk", "privileged": False, "episode_index": 2, "episode_seed": 2900114516,
               "oracle_gain_db": 3.25, "status": "ok", "error": None, "scene": "maple-flat", "target_cue": "bearing",
               "start_si_sdr_db": -12.5, "start_input_si_sdr_db": -14.0, "start_full_si_sdr_db": -8.0,
               "start_input_full_si_sdr_db": -9.0, "final_si_sdr_db": -10.0, "final_full_si_sdr_db": -6.0,
               "best_si_sdr_db": -9.5, "gain_db": 2.5, "mean_gain_db": 1.25, "step_gains_db": [0.0, 2.5, None],
               "eval_windows_scored": 8,
               "quiet_windows": 1, "episode_return": 2.5, "normalised_gain": 0.77,
               "path_length_m": 1.5, "steps": 20, "collisions": 1,
               "final_pose": {"cell": 4, "heading": 1, "x": 1.0, "y": 2.5}, "poses": [[3, 1], [4, 1]],
               "collided_steps": [], "target_category": "talker", "distractor_categories": ["hum", "noise"],
               "start_xy": [0.5, 2.0],
               "wall_time_s": 0.75, "run_key": "e75931e1cb882ff2"}


def test_episode_result_round_trips_through_the_file(tmp_path):
    result = EpisodeResult.from_dict(WRITTEN_ROW)
    assert result.extra == {} and result.to_dict() == WRITTEN_ROW  # every field of the format is known
    path = tmp_path / "episodes.jsonl"
    with ResultWriter(path) as writer:
        writer.append(result)
    assert read_rows(path) == [WRITTEN_ROW]
    assert EpisodeResult.from_dict(read_rows(path)[0]) == result


def test_episode_result_reads_rows_of_other_versions():
    old = {k: v for k, v in WRITTEN_ROW.items() if k != "start_input_si_sdr_db"} | {"note": "x"}
    result = EpisodeResult.from_dict(old)
    assert result.start_input_si_sdr_db is None and result.extra == {"note": "x"}
    assert result.to_dict()["note"] == "x" and result.gain_db == 2.5
    with pytest.raises(ResultsError) as info:
        EpisodeResult.from_dict({"status": "ok"})
    assert str(info.value) == ("expected a row with keys 'policy' and 'episode_seed', got ['status']: "
                               "the row was not written by this benchmark")
