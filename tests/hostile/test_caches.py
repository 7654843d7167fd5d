"""Damaged, read-only and full caches and output folders (issue 11, items 5, 7, 12 and 14).

Every damaged cache file is reported in one line and rebuilt to the clean result; every failed write is one
line naming the folder and what to do; no lock files, no stale temporaries; files follow the user's umask.
Byte layouts come from the PKZIP APPNOTE (local file header 4.3.7, end of central directory 4.3.16) and the
NumPy .npy format (NEP 1: magic, version, little-endian header length, header text). We run as root here, so
read-only folders are simulated by failing every write under them as a read-only mount does (EROFS); the
chmod variant runs where the tests do not run as root.
"""

from __future__ import annotations

import builtins
import errno
import io
import json
import os
import signal
import struct
import subprocess
import sys
import tracemalloc
import zipfile
from pathlib import Path

import numpy as np
import pytest

from hearnav import files
from hearnav.acoustics import cache
from hearnav.bench import results, runner, session
from hearnav.bench.oracle import OracleCache
from hearnav.bench.suites import load_suite
from hearnav.cli import main
from hearnav.errors import CacheError
from hearnav.tables import store
from tests.acoustics.test_cache import assert_same_responses
from tests.conftest import make_scene, shoebox_dict

pytestmark = pytest.mark.timeout(120)  # a hang guard, not a speed goal
N_FLIPS = 400
RO_CACHE = "cannot write the response cache in {} (read-only file system): set HEARNAV_CACHE to a writable folder"
FULL_CACHE = ("cannot write the response cache in {} (no space left on device): free some space there, or set "
              "HEARNAV_CACHE to a folder on a disk with room")
RO_OUT = "cannot write results in {} (read-only file system): choose a writable --out folder"


@pytest.fixture(autouse=True)
def fresh_store():
    store.forget_open()
    yield
    store.forget_open()


class Refuse:
    """Fails writes under some folders with one errno, as a read-only mount (EROFS) or a full disk (ENOSPC)
    does; records what was attempted."""

    WRITE_FLAGS = os.O_WRONLY | os.O_RDWR | os.O_CREAT | os.O_TRUNC | os.O_APPEND

    def __init__(self, monkeypatch, code: int, mkdir: bool = True):
        self.roots: list[Path] = []
        self.code = code
        self.attempts: list[str] = []
        real_open, real_mkdir, real_builtin_open = os.open, os.mkdir, builtins.open

        def fake_open(path, flags, *args, **kw):
            if flags & self.WRITE_FLAGS:
                self._check("open", path)
            return real_open(path, flags, *args, **kw)

        def fake_mkdir(path, *args, **kw):
            if mkdir and not os.path.exists(path):
                self._check("mkdir", path)
            return real_mkdir(path, *args, **kw)

        def fake_builtin_open(path, mode="r", *args, **kw):
            if isinstance(path, (str, os.PathLike)) and any(c in mode for c in "wax+"):
                self._check("open", path)
            return real_builtin_open(path, mode, *args, **kw)

        def refuse(name):
            real = getattr(os, name)

            def fake(path, *args, **kw):
                self._check(name, path)
                return real(path, *args, **kw)
            return fake

        monkeypatch.setattr(os, "open", fake_open)
        monkeypatch.setattr(os, "mkdir", fake_mkdir)
        monkeypatch.setattr(builtins, "open", fake_builtin_open)
        for name in ("replace", "rename", "unlink", "rmdir", "utime"):
            monkeypatch.setattr(os, name, refuse(name))

    def under(self, folder: Path) -> Refuse:
        self.roots.append(Path(folder).resolve())
        return self

    def _check(self, op: str, path) -> None:
        path = Path(os.fspath(path)).resolve()
        if any(path == root or root in path.parents for root in self.roots):
            self.attempts.append(f"{op} {path}")
            raise OSError(self.code, os.strerror(self.code), str(path))


# --- item 5: damaged files are reported in one line and rebuilt ------------------------------------------------


def header_positions(data: bytes) -> list[int]:
    """Offsets of every header byte of an uncompressed .npz: zip local headers, .npy headers, central directory."""
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        infos = z.infolist()
    positions: list[int] = []
    for info in infos:
        o = info.header_offset
        assert data[o:o + 4] == b"PK\x03\x04"  # APPNOTE 4.3.7: local file header signature
        name_len, extra_len = struct.unpack("<HH", data[o + 26:o + 30])
        start = o + 30 + name_len + extra_len
        assert data[start:start + 6] == b"\x93NUMPY" and data[start + 6] == 1  # NEP 1, version 1.0
        header_len = struct.unpack("<H", data[start + 8:start + 10])[0]
        positions += range(o, start + 10 + header_len)
    eocd = data.rindex(b"PK\x05\x06")  # APPNOTE 4.3.16: end of central directory record
    cd = struct.unpack("<I", data[eocd + 16:eocd + 20])[0]
    assert data[cd:cd + 4] == b"PK\x01\x02"
    return positions + list(range(cd, len(data)))


def flips(data: bytes, n: int, seed: int) -> list[tuple[int, int]]:
    """``n`` distinct (offset, bit) single-bit flips over the header bytes, from a SeedSequence."""
    rng = np.random.default_rng(np.random.SeedSequence(seed))
    positions = header_positions(data)
    picked = rng.choice(len(positions), size=min(n, len(positions)), replace=False)
    return [(positions[k], int(rng.integers(8))) for k in picked]


def flipped(data: bytes, offset: int, bit: int) -> bytes:
    out = bytearray(data)
    out[offset] ^= 1 << bit
    return bytes(out)


def test_every_single_bit_flip_in_the_headers_is_refused_or_harmless(built, tmp_path):
    responses, path, key = built
    clean = path.read_bytes()
    copy = tmp_path / "flipped.npz"
    refused = 0
    for offset, bit in flips(clean, N_FLIPS, seed=11):
        copy.write_bytes(flipped(clean, offset, bit))
        try:
            got = cache.load(copy, key)
        except CacheError as exc:
            assert "\n" not in str(exc) and str(exc).startswith(f"{copy}: "), (offset, bit, str(exc))
            refused += 1
        else:  # a flip in a field the reader does not use (a timestamp, an unused attribute): same data
            assert_same_responses(got, responses)
    assert refused > N_FLIPS // 2


def test_a_flipped_file_is_reported_in_one_line_and_rebuilt_to_the_clean_result(built, scene, fast_settings, capsys):
    responses, path, key = built
    clean = path.read_bytes()
    damaging = []
    for offset, bit in flips(clean, 60, seed=5):
        path.write_bytes(flipped(clean, offset, bit))
        try:
            cache.load(path, key)
        except CacheError:
            damaging.append((offset, bit))
    for offset, bit in damaging[:3]:
        path.write_bytes(flipped(clean, offset, bit))
        capsys.readouterr()
        again = cache.load_or_build(scene, fast_settings)
        lines = capsys.readouterr().err.splitlines()
        assert len(lines) == 1
        assert lines[0].startswith(f"hearnav: note: {path}: ") and lines[0].endswith("; rebuilding")
        assert_same_responses(again, responses)
        assert_same_responses(cache.load(path, key), responses)


def _replace_member(path: Path, name: str, payload: bytes) -> None:
    """Rewrite the .npz with one member's bytes replaced (a well-formed zip around a crafted .npy)."""
    with zipfile.ZipFile(path) as z:
        members = {info.filename: z.read(info) for info in z.infolist()}
    members[f"{name}.npy"] = payload
    with zipfile.ZipFile(path, "w", zipfile.ZIP_STORED) as z:
        for member, data in members.items():
            z.writestr(member, data)


def _huge_header(dtype: str, n: int) -> bytes:
    """A .npy 1.0 header (NEP 1) declaring ``n`` elements, padded to a multiple of 64 bytes."""
    text = repr({"descr": dtype, "fortran_order": False, "shape": (n,)}).encode()
    pad = 64 - (10 + len(text) + 1) % 64
    return b"\x93NUMPY\x01\x00" + struct.pack("<H", len(text) + pad + 1) + text + b" " * pad + b"\n"


@pytest.mark.parametrize("layout, reason", [
    ("current", "BadArray: <f2 array of shape (4000000000,), expected <f2 of shape"),
    ("without the array table", "BadArray: header declares 8000000000 bytes of data, more than the "),
])
def test_a_header_declaring_4e9_elements_is_refused_before_allocating(built, scene, fast_settings, layout, reason):
    responses, path, key = built
    if layout != "current":  # a file of an earlier version: its metadata list no shapes
        with np.load(path) as data:
            meta = json.loads(str(data["meta"]))
        del meta["arrays"]
        _replace_member(path, "meta", _npy(np.asarray(json.dumps(meta))))
    _replace_member(path, "tail", _huge_header("<f2", 4_000_000_000) + responses.tail.tobytes())
    tracemalloc.start()  # NumPy reports its array allocations to tracemalloc
    try:
        with pytest.raises(CacheError):
            cache.load(path, key)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert peak < 1 << 28  # 4e9 float16 would be 8 GB; the whole file is 1.4 MB
    lines: list[str] = []
    again = cache.load_or_build(scene, fast_settings, report=lines.append)
    assert len(lines) == 1 and reason in lines[0] and lines[0].endswith("; rebuilding")
    assert_same_responses(again, responses)


def _npy(a: np.ndarray) -> bytes:
    buf = io.BytesIO()
    np.save(buf, a)
    return buf.getvalue()


def _part_builder(calls: list[int]):
    def build(out: store.PartWriter) -> None:
        calls.append(1)
        out.put("a", np.arange(12, dtype=np.float32).reshape(3, 4))
        out.put("b", np.arange(5, dtype=np.complex64))
    return build


def test_every_single_bit_flip_in_a_table_part_s_headers_is_reported_and_rebuilt():
    calls: list[int] = []
    folder = store.tables_dir() / "part"
    store.open_part(folder, "k", ("a", "b"), _part_builder(calls), keep=False)
    clean = {name: (folder / f"{name}.npy").read_bytes() for name in ("a", "b")}
    rng = np.random.default_rng(np.random.SeedSequence(7))
    for k in range(100):
        name = ("a", "b")[k % 2]
        header_len = 10 + struct.unpack("<H", clean[name][8:10])[0]  # NEP 1 version 1.0 header
        offset, bit = int(rng.integers(header_len)), int(rng.integers(8))
        (folder / f"{name}.npy").write_bytes(flipped(clean[name], offset, bit))
        lines: list[str] = []
        part = store.open_part(folder, "k", ("a", "b"), _part_builder(calls), keep=False, report=lines.append)
        assert len(lines) <= 1 and all("\n" not in line and line.endswith("; rebuilding") for line in lines)
        np.testing.assert_array_equal(part["a"], np.arange(12, dtype=np.float32).reshape(3, 4))
        np.testing.assert_array_equal(part["b"], np.arange(5, dtype=np.complex64))
        for other in ("a", "b"):
            (folder / f"{other}.npy").write_bytes(clean[other])
    assert len(calls) > 50  # most flips damage the header and force a rebuild


def test_a_truncated_oracle_file_is_reported_and_recomputed(tmp_path, monkeypatch, capsys):
    suite = load_suite("smoke").model_copy(update={"episodes": 3})
    seeds = suite.episode_seeds()
    computed: list[int] = []

    class FakePool:  # the bound of a seed, without building the environment or starting workers
        def __init__(self, *args):
            pass

        def __enter__(self):
            return self

        def __exit__(self, *exc):
            return False

        def run(self, groups):
            for (seed,) in groups:
                computed.append(seed)
                yield seed, seed % 7 - 0.5

    monkeypatch.setattr(runner, "WorkerPool", FakePool)
    folder = tmp_path / "oracle"
    want = runner.compute_oracles(suite, folder, workers=1)
    path = OracleCache(folder, suite.result_key()).path
    path.write_bytes(path.read_bytes()[:-7])  # cut inside the last entry
    computed.clear()
    capsys.readouterr()
    assert runner.compute_oracles(suite, folder, workers=1) == want
    err = capsys.readouterr().err
    assert err.startswith(f"hearnav: note: {path}: unreadable oracle file (expected a JSON object of episode seed: "
                          f"bound, got JSONDecodeError: ")
    assert err.endswith("; recomputing\n") and err.count("\n") == 1
    assert sorted(computed) == sorted(seeds)
    assert json.loads(path.read_text()) == {str(s): v for s, v in want.items()}


@pytest.mark.parametrize("text", ['["not", "bounds"]', '{"12": "x"}', '{"seed": 1.0}', '\x00\xff', '[' * 5000])
def test_an_oracle_file_that_is_not_bounds_is_reported_and_ignored(tmp_path, text):
    path = tmp_path / "oracle-d.json"
    path.write_bytes(text.encode("latin-1"))
    lines: list[str] = []
    assert OracleCache(tmp_path, "d", report=lines.append).values == {}
    assert len(lines) == 1 and lines[0].startswith(f"{path}: unreadable oracle file (expected a JSON object")


# --- item 7: read-only and full folders --------------------------------------------------------------------------


def test_a_valid_cache_in_a_read_only_folder_loads_without_writing_a_lock(built, scene, fast_settings, private_cache,
                                                                          monkeypatch):
    responses, path, _ = built
    calls: list[int] = []
    folder = store.tables_dir() / "part"
    store.open_part(folder, "k", ("a", "b"), _part_builder(calls))
    store.forget_open()
    before = sorted(p.relative_to(private_cache) for p in private_cache.rglob("*"))
    refuse = Refuse(monkeypatch, errno.EROFS).under(private_cache)
    assert_same_responses(cache.load_or_build(scene, fast_settings), responses)
    part = store.open_part(folder, "k", ("a", "b"), _part_builder(calls))
    np.testing.assert_array_equal(part["b"], np.arange(5, dtype=np.complex64))
    assert refuse.attempts == [] and calls == [1]
    monkeypatch.undo()
    assert sorted(p.relative_to(private_cache) for p in private_cache.rglob("*")) == before


def _tiny_scene_file(tmp_path: Path) -> Path:
    import yaml

    path = tmp_path / "tiny.yaml"
    path.write_text(yaml.safe_dump(shoebox_dict(spacing=1.0, name="tiny")))
    return path


def _cli(argv, capsys) -> tuple[int, list[str]]:
    code = main([str(a) for a in argv])
    out = capsys.readouterr()
    return code, (out.out + out.err).splitlines()


@pytest.mark.parametrize("exists", [True, False])
def test_building_into_a_read_only_cache_is_one_line_naming_it(tmp_path, private_cache, monkeypatch, capsys, exists):
    scene_file = _tiny_scene_file(tmp_path)
    if exists:
        private_cache.mkdir()
    Refuse(monkeypatch, errno.EROFS).under(private_cache if exists else tmp_path)
    code, lines = _cli(["scenes", "build", scene_file], capsys)
    assert code == 2
    assert lines == [f"hearnav: error: {RO_CACHE.format(private_cache)}"]


def test_a_full_cache_is_one_line_naming_it(tmp_path, private_cache, monkeypatch, capsys):
    scene_file = _tiny_scene_file(tmp_path)
    Refuse(monkeypatch, errno.ENOSPC, mkdir=False).under(private_cache)
    code, lines = _cli(["scenes", "build", scene_file], capsys)
    assert code == 2
    assert lines == [f"hearnav: error: {FULL_CACHE.format(private_cache)}"]


def test_a_disk_filling_up_during_a_save_keeps_the_old_file_and_leaves_no_temporary(built, monkeypatch):
    responses, path, key = built
    before = path.read_bytes()
    real_savez = np.savez

    def savez_then_full(f, **arrays):
        real_savez(f, **{k: arrays[k] for k in list(arrays)[:3]})
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(np, "savez", savez_then_full)
    with pytest.raises(CacheError) as err:
        cache.save(responses, path, key)
    assert str(err.value) == FULL_CACHE.format(path.parent)
    assert path.read_bytes() == before
    assert sorted(p.name for p in path.parent.iterdir()) == [path.name]


def test_a_read_only_out_folder_is_one_line_naming_it(tmp_path, monkeypatch, capsys):
    out = tmp_path / "ro" / "run"
    (tmp_path / "ro").mkdir()
    Refuse(monkeypatch, errno.EROFS).under(tmp_path / "ro")
    code, lines = _cli(["bench", "--suite", "smoke", "--policy", "still", "--out", out], capsys)
    assert code == 2
    # the command line checks --out before any work (hearnav/cli/paths.py); the library's own line is below
    assert lines == [f"hearnav: error: --out '{out}': expected a folder path that can be created, found that "
                     f"'{out}' cannot be written (Read-only file system); give a new or existing folder you can "
                     f"write to"]
    with pytest.raises(results.ResultsError) as err:
        session.run("smoke", ["still"], out)
    assert str(err.value) == RO_OUT.format(out)


def test_a_full_out_folder_is_one_line_naming_it(tmp_path, monkeypatch):
    out = tmp_path / "run"
    with results.ResultWriter(out / results.EPISODES_FILE) as writer:
        monkeypatch.setattr(os, "fsync", lambda fd: (_ for _ in ()).throw(OSError(errno.ENOSPC, "full")))
        with pytest.raises(results.ResultsError) as err:
            writer.append({"policy": "still", "episode_seed": 1})
    assert str(err.value) == (f"cannot write results in {out} (no space left on device): free some space there, "
                              f"or choose an --out folder on a disk with room")
    with pytest.raises(results.ResultsError, match=r"\(no space left on device\): free some space there"):
        results.write_json(out / "summary.json", {"a": 1})
    monkeypatch.undo()
    assert sorted(p.name for p in out.iterdir()) == [results.EPISODES_FILE]


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes into a chmod 0o555 folder; simulated above instead")
def test_a_chmod_read_only_cache_loads_and_refuses_to_build_in_one_line(built, scene, fast_settings, private_cache):
    responses, _, _ = built
    private_cache.chmod(0o555)
    try:
        assert_same_responses(cache.load_or_build(scene, fast_settings), responses)
        other = make_scene(spacing=1.0, absorption=0.3)
        with pytest.raises(CacheError) as err:
            cache.load_or_build(other, fast_settings)
        assert str(err.value) == RO_CACHE.format(private_cache).replace("read-only file system", "permission denied")
    finally:
        private_cache.chmod(0o755)


# --- item 14: no lock files --------------------------------------------------------------------------------------


def test_builds_leave_no_lock_file(built, private_cache):
    store.open_part(store.tables_dir() / "part", "k", ("a", "b"), _part_builder([]))
    names = [p.name for p in private_cache.rglob("*")]
    assert not [n for n in names if n.endswith(".lock") or n == files.LOCKS]
    assert not [n for n in names if n.endswith(".tmp")]


def test_a_waiter_whose_lock_file_was_removed_locks_afresh(tmp_path):
    # The holder removes the lock file on release; a process that opened the old file before then must not
    # think it holds the lock while a newcomer locks the new file.
    import fcntl

    target = tmp_path / "x.npz"
    lock_path = tmp_path / files.LOCKS / "x.npz.lock"
    with files.build_lock(target, files.cache_place("the response cache")):
        stale = os.open(lock_path, os.O_RDWR)  # a waiter that opened the file while it was held
    fcntl.flock(stale, fcntl.LOCK_EX)  # it gets the old, removed file once the holder is gone
    assert not files._same_file(stale, lock_path)
    os.close(stale)
    with files.build_lock(target, files.cache_place("the response cache")):
        assert lock_path.exists()
    assert not lock_path.exists() and not lock_path.parent.exists()


# --- item 12: stale temporaries and modes ------------------------------------------------------------------------

_KILLED_WRITER = """
import sys, time
from pathlib import Path
from hearnav import files
def write(f):
    f.write(b"half")
    f.flush()
    print("writing", flush=True)
    time.sleep(120)
files.atomic_write(Path(sys.argv[1]), write, files.cache_place("the response cache"))
"""


def test_a_temporary_left_by_a_killed_save_is_removed_by_the_next_write(built, tmp_path):
    responses, path, key = built
    target = path.parent / "other.npz"
    child = subprocess.Popen([sys.executable, "-c", _KILLED_WRITER, str(target)], stdout=subprocess.PIPE,
                             env={**os.environ, "PYTHONPATH": str(Path(__file__).parents[2])})
    assert child.stdout.readline() == b"writing\n"
    child.send_signal(signal.SIGKILL)
    child.wait(timeout=30)
    orphans = [p for p in path.parent.iterdir() if p.name.endswith(".tmp")]
    assert [p.name.startswith(".other.npz.") for p in orphans] == [True] and not target.exists()
    # a live writer's temporary (pid 1 runs as long as the machine) and an unrelated dot file are kept
    live = path.parent / f".live.npz.{files._HOST}.1.0123abcd.tmp"
    live.write_bytes(b"in progress")
    unrelated = path.parent / ".notes.tmp"
    unrelated.write_bytes(b"mine")
    cache.save(responses, path, key)
    assert not orphans[0].exists()
    assert live.exists() and unrelated.exists()


def test_a_temporary_older_than_a_day_is_stale_whoever_made_it(tmp_path):
    old = tmp_path / ".x.npz.elsewhere.1.0123abcd.tmp"
    old.write_bytes(b"")
    assert not files.is_stale(old)  # another host's process: it may be running
    day_ago = old.stat().st_mtime - files.STALE_AGE_S - 60
    os.utime(old, (day_ago, day_ago))
    assert files.is_stale(old)
    assert files.remove_stale_tmp(tmp_path) == [old] and not old.exists()


@pytest.mark.parametrize("umask", [0o022, 0o002, 0o077])
def test_created_files_and_folders_follow_the_umask(built, scene, fast_settings, private_cache, tmp_path, umask):
    responses, path, key = built
    previous = os.umask(umask)
    try:
        path.unlink()
        cache.load_or_build(scene, fast_settings)
        folder = store.tables_dir() / f"part-{umask:o}"
        store.open_part(folder, "k", ("a", "b"), _part_builder([]))
        OracleCache(private_cache / "oracle", "d").put(1, 0.5)
        out = tmp_path / f"run-{umask:o}"
        results.write_json(out / "summary.json", {"a": 1})
        with results.ResultWriter(out / results.EPISODES_FILE) as writer:
            writer.append({"policy": "still", "episode_seed": 1})
    finally:
        os.umask(previous)
    made = [path, folder / "a.npy", folder / "manifest.json", private_cache / "oracle" / "oracle-d.json",
            out / "summary.json", out / results.EPISODES_FILE]
    assert {str(p): oct(p.stat().st_mode & 0o777) for p in made} == {str(p): oct(0o666 & ~umask) for p in made}
    assert oct(folder.stat().st_mode & 0o777) == oct(0o777 & ~umask)


def test_a_plan_into_a_read_only_folder_is_one_line_naming_it(tmp_path, monkeypatch, capsys):
    scene_file = _tiny_scene_file(tmp_path)
    (tmp_path / "ro").mkdir()
    Refuse(monkeypatch, errno.EROFS).under(tmp_path / "ro")
    code, lines = _cli(["scenes", "show", scene_file, "--out", tmp_path / "ro" / "plan.png"], capsys)
    assert code == 2
    ro = tmp_path / "ro"
    assert lines == [f"hearnav: error: --out '{ro / 'plan.png'}': expected a file path whose folder can be created, "
                     f"found that '{ro}' cannot be written (Read-only file system); give a new or existing folder "
                     f"you can write to"]
