"""Parts of the store: built once, reused only under their key, damage detected and rebuilt, writes atomic.

The checksum is CRC-32 as zlib computes it (RFC 1952's CRC, the one gzip and PNG use); the files are NumPy's
.npy format (NEP 1), read back with numpy.load.
"""

from __future__ import annotations

import json
import zlib

import numpy as np
import pytest

from hearnav.tables import store

NAMES = ("a", "b")


@pytest.fixture(autouse=True)
def fresh(monkeypatch, tmp_path):
    monkeypatch.setenv("HEARNAV_CACHE", str(tmp_path / "cache"))
    store.forget_open()
    yield
    store.forget_open()


def arrays() -> dict[str, np.ndarray]:
    rng = np.random.default_rng(0)
    return {"a": rng.standard_normal((3, 4)).astype(np.float32),
            "b": (rng.standard_normal(5) + 1j * rng.standard_normal(5)).astype(np.complex64)}


class Builder:
    """Counts its builds; writes :func:`arrays` and one scalar."""

    def __init__(self):
        self.calls = 0

    def __call__(self, out: store.PartWriter) -> None:
        self.calls += 1
        for name, a in arrays().items():
            out.put(name, a)
        out.scalars["n"] = 7


def open_it(build, key="k1", report=None, keep=True):
    lines = []
    part = store.open_part(store.tables_dir() / "part", key, NAMES, build, keep=keep, report=report or lines.append)
    return part, lines


def assert_same(part) -> None:
    for name, want in arrays().items():
        got = part[name]
        assert got.dtype == want.dtype and got.shape == want.shape
        np.testing.assert_array_equal(got, want)
        assert not got.flags.writeable
    assert part.scalars == {"n": 7}


def test_a_part_is_built_once_then_reused_from_disk():
    build = Builder()
    first, _ = open_it(build)
    assert_same(first)
    store.forget_open()
    second, lines = open_it(build)
    assert_same(second)
    assert build.calls == 1 and lines == []
    assert open_it(build)[0] is second  # this process keeps the parts it opened


def test_the_arrays_are_npy_files_the_manifest_describes():
    open_it(Builder())
    folder = store.tables_dir() / "part"
    manifest = json.loads((folder / "manifest.json").read_text())
    assert manifest["key"] == "k1"
    for name, want in arrays().items():
        # numpy.load reads the .npy format (NEP 1); zlib.crc32 is the reference CRC-32
        loaded = np.load(folder / f"{name}.npy")
        np.testing.assert_array_equal(loaded, want)
        entry = manifest["arrays"][name]
        assert (entry["dtype"], tuple(entry["shape"])) == (want.dtype.str, want.shape)
        assert entry["crc32"] == zlib.crc32(want.tobytes())


def test_another_key_rebuilds_with_a_report():
    build = Builder()
    open_it(build, "k1")
    store.forget_open()
    _, lines = open_it(build, "k2")
    assert build.calls == 2
    assert lines == [f"{store.tables_dir() / 'part'}: manifest key 'k1' (format 1), expected 'k2' (format 1); rebuilding"]


def _damage_bytes(folder):
    path = folder / "a.npy"
    raw = bytearray(path.read_bytes())
    raw[-1] ^= 0xFF
    path.write_bytes(bytes(raw))
    return f"{path}: CRC-32 mismatch (the bytes differ from those written); rebuilding"


def _truncate(folder):
    path = folder / "b.npy"
    path.write_bytes(path.read_bytes()[:-8])
    return f"{path}: expected a file of 168 bytes (header and data), got 160; rebuilding"


def _lose_manifest(folder):
    (folder / "manifest.json").unlink()
    return f"{folder}: no manifest.json (expected a complete part); rebuilding"


def _wrong_shape(folder):
    manifest = json.loads((folder / "manifest.json").read_text())
    manifest["arrays"]["a"]["shape"] = [4, 3]
    (folder / "manifest.json").write_text(json.dumps(manifest))
    return f"{folder / 'a.npy'}: <f4 array of shape (3, 4), expected <f4 of shape (4, 3); rebuilding"


def _lose_array(folder):
    manifest = json.loads((folder / "manifest.json").read_text())
    del manifest["arrays"]["b"]
    (folder / "manifest.json").write_text(json.dumps(manifest))
    return f"{folder}: manifest lacks arrays ['b']; rebuilding"


@pytest.mark.parametrize("damage", [_damage_bytes, _truncate, _lose_manifest, _wrong_shape, _lose_array])
def test_a_damaged_part_is_reported_in_one_line_and_rebuilt(damage):
    build = Builder()
    open_it(build)
    store.forget_open()
    want = damage(store.tables_dir() / "part")
    part, lines = open_it(build)
    assert build.calls == 2
    assert len(lines) == 1 and "\n" not in lines[0] and lines[0].startswith(want)
    assert_same(part)


def test_a_failed_build_leaves_no_part_and_no_temporary_folder():
    def failing(out):
        out.put("a", np.zeros(3))
        raise RuntimeError("boom")

    with pytest.raises(RuntimeError, match="boom"):
        open_it(failing)
    assert list(store.tables_dir().iterdir()) == []  # no part, no temporary folder, no lock file


def test_a_crashed_build_s_leftovers_are_removed_by_the_next_build():
    folder = store.tables_dir() / "part"
    leftover = folder.with_name(".part.x1y2.tmp")
    leftover.mkdir(parents=True)
    (leftover / "a.npy").write_bytes(b"half")
    open_it(Builder())
    assert not leftover.exists()


def test_clips_are_not_kept_open_and_another_builder_s_part_is_used():
    build = Builder()
    part, _ = open_it(build, keep=False)
    assert_same(part)
    assert store._open == {}
    # a second builder that finds the part in place when it renames keeps the one already there
    folder = store.tables_dir() / "part"
    before = (folder / "manifest.json").stat().st_ino
    store._build(folder, "k1", NAMES, build)
    assert (folder / "manifest.json").stat().st_ino == before


def test_a_process_keeps_at_most_max_open_parts(monkeypatch):
    monkeypatch.setattr(store, "MAX_OPEN", 2)
    for k in range(3):
        store.open_part(store.tables_dir() / f"p{k}", "k", NAMES, Builder())
    assert list(store._open) == [store.tables_dir() / "p1", store.tables_dir() / "p2"]


def test_the_store_lives_beside_the_response_cache(tmp_path):
    from hearnav.acoustics.cache import cache_dir

    assert store.tables_dir() == cache_dir() / "tables" == tmp_path / "cache" / "tables"
