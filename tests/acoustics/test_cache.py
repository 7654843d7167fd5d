"""The on-disk response cache: keys, round trips, damage detection, atomic writes, concurrent builders."""

from __future__ import annotations

import json
import multiprocessing as mp
import os
import zipfile
from pathlib import Path

import numpy as np
import pytest

from hearnav.acoustics import cache
from hearnav.acoustics.responses import Responses, build_responses
from hearnav.acoustics.settings import AcousticSettings
from hearnav.errors import CacheError
from hearnav.scene.grid import build_grid
from hearnav.scene.loader import from_dict
from tests.conftest import make_scene, shoebox_dict

FIELDS = tuple(Responses.__dataclass_fields__)


def assert_same_responses(a: Responses, b: Responses) -> None:
    """Element-wise equality of every field (dtype and shape included)."""
    for name in FIELDS:
        x, y = getattr(a, name), getattr(b, name)
        if isinstance(x, np.ndarray):
            assert x.dtype == y.dtype and x.shape == y.shape, name
            assert np.array_equal(x, y), name
        else:
            assert x == y, name


# --- where files go and how they are keyed ------------------------------------------------------------


def test_cache_dir_honours_the_environment_variable(tmp_path, monkeypatch, scene, fast_settings):
    monkeypatch.setenv("HEARNAV_CACHE", str(tmp_path / "elsewhere"))
    assert cache.cache_dir() == tmp_path / "elsewhere"
    assert cache.cache_path(scene, fast_settings).parent == tmp_path / "elsewhere"
    cache.load_or_build(scene, fast_settings)
    assert [p.suffix for p in (tmp_path / "elsewhere").glob("*.npz")] == [".npz"]


def test_cache_dir_falls_back_to_the_xdg_cache_home(tmp_path, monkeypatch):
    # XDG Base Directory Specification: user cache files go under $XDG_CACHE_HOME
    monkeypatch.delenv("HEARNAV_CACHE")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    assert cache.cache_dir() == tmp_path / "xdg" / "hearnav"


def test_key_is_stable_for_the_same_scene_text_and_settings(fast_settings):
    one, two = make_scene(spacing=1.0), make_scene(spacing=1.0)
    assert one is not two
    assert cache.cache_key(one, fast_settings) == cache.cache_key(two, fast_settings)
    assert cache.cache_key(one, fast_settings) == cache.cache_key(one, AcousticSettings(**fast_settings.model_dump()))


def test_key_changes_with_the_scene_text(scene, fast_settings):
    other = make_scene(spacing=1.0, absorption=0.3)
    assert other.text != scene.text
    assert cache.cache_key(other, fast_settings) != cache.cache_key(scene, fast_settings)
    assert cache.cache_path(other, fast_settings) != cache.cache_path(scene, fast_settings)


@pytest.mark.parametrize("change", [{"fs": 8000}, {"seed": 1}, {"ism_order": 1}, {"air_absorption": True}])
def test_key_changes_with_a_result_changing_setting(scene, fast_settings, change):
    changed = fast_settings.model_copy(update=change)
    assert cache.cache_key(scene, changed) != cache.cache_key(scene, fast_settings)


def test_key_ignores_the_thread_count(scene, fast_settings):
    threaded = fast_settings.model_copy(update={"n_threads": 4})
    assert threaded.n_threads != fast_settings.n_threads
    assert cache.cache_key(scene, threaded) == cache.cache_key(scene, fast_settings)
    assert cache.cache_path(scene, threaded) == cache.cache_path(scene, fast_settings)


# --- round trip -----------------------------------------------------------------------------------------


def test_save_load_round_trip_is_element_wise_equal(built, tmp_path):
    responses, _, key = built
    path = tmp_path / "copy.npz"
    cache.save(responses, path, key)
    assert_same_responses(cache.load(path, key), responses)


def test_load_or_build_returns_what_it_stored(built, scene, fast_settings):
    responses, path, _ = built
    mtime = path.stat().st_mtime_ns
    built_again = []
    again = cache.load_or_build(scene, fast_settings, progress=built_again.append)
    assert built_again == []  # a hit: nothing was rendered
    assert path.stat().st_mtime_ns == mtime
    assert_same_responses(again, responses)


def test_cache_file_loads_without_pickle(built):
    _, path, _ = built
    with np.load(path, allow_pickle=False) as data:
        arrays = {name: data[name] for name in data.files}
    assert set(FIELDS) <= set(arrays)
    assert all(a.dtype != object for a in arrays.values())


def test_loading_with_another_key_is_refused(built):
    _, path, key = built
    with pytest.raises(CacheError, match=r"cache key mismatch \(expected not-the-key, got " + key):
        cache.load(path, "not-the-key")


# --- damaged files ----------------------------------------------------------------------------------------


def test_truncated_file_is_unreadable(built):
    _, path, key = built
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])
    with pytest.raises(CacheError, match=r"unreadable cache file \(expected a complete \.npz, got BadZipFile"):
        cache.load(path, key)


def test_empty_file_is_unreadable(built):
    _, path, key = built
    path.write_bytes(b"")
    with pytest.raises(CacheError, match=r"unreadable cache file \(expected a complete \.npz, got BadZipFile"):
        cache.load(path, key)


def test_one_flipped_byte_in_the_middle_is_detected(built):
    # np.savez writes an uncompressed zip; the flip lands in an array's data, where the zip member's
    # CRC-32 (checked by zipfile on a full read) fails before the cache's own checksum is reached
    _, path, key = built
    data = bytearray(path.read_bytes())
    data[len(data) // 2] ^= 0xFF
    path.write_bytes(bytes(data))
    with pytest.raises(CacheError, match=r"unreadable cache file .*Bad CRC-32"):
        cache.load(path, key)


def _rewrite(path: Path, **replace: np.ndarray) -> None:
    """Rewrite a cache file as a well-formed zip with some arrays replaced (the stored checksum kept)."""
    with np.load(path, allow_pickle=False) as data:
        arrays = {name: data[name] for name in data.files}
    arrays.update(replace)
    with open(path, "wb") as f:
        np.savez(f, **arrays)


def test_changed_data_in_a_well_formed_file_fail_the_checksum(built):
    responses, path, key = built
    tail = responses.tail.copy()
    tail[0, 0, 0, tail.shape[-1] // 2] += np.float16(0.5)
    _rewrite(path, tail=tail)
    with zipfile.ZipFile(path) as z:
        assert z.testzip() is None  # the zip itself is sound
    with pytest.raises(CacheError, match=r"cache checksum mismatch \(expected [0-9a-f]{12}\.\.\., the data differ\)"):
        cache.load(path, key)


def test_a_file_lacking_a_field_is_refused(built, tmp_path):
    responses, _, key = built
    arrays = cache._encode(responses, key)
    del arrays["spot_names"]
    # a consistent checksum over what is left, so that only the missing field is wrong
    meta = json.loads(str(arrays["meta"]))
    meta["checksum"] = cache._checksum({k: v for k, v in arrays.items() if k != "meta"})
    del meta["arrays"]["spot_names"]
    arrays["meta"] = np.asarray(json.dumps(meta))
    path = tmp_path / "partial.npz"
    with open(path, "wb") as f:
        np.savez(f, **arrays)
    with pytest.raises(CacheError, match=r"cache file lacks \['spot_names'\] \(expected every response field\)"):
        cache.load(path, key)


@pytest.mark.parametrize("damage", ["truncate", "flip", "tamper"])
def test_load_or_build_reports_one_line_and_rebuilds(built, scene, fast_settings, damage):
    responses, path, key = built
    data = bytearray(path.read_bytes())
    if damage == "truncate":
        path.write_bytes(bytes(data[: len(data) // 3]))
    elif damage == "flip":
        data[len(data) // 2] ^= 0x01
        path.write_bytes(bytes(data))
    else:
        _rewrite(path, first_gain=responses.first_gain * 2)
    lines, rendered = [], []
    again = cache.load_or_build(scene, fast_settings, progress=rendered.append, report=lines.append)
    assert len(lines) == 1
    assert "\n" not in lines[0]
    assert lines[0].startswith(str(path)) and lines[0].endswith("; rebuilding")
    expected = "cache checksum mismatch" if damage == "tamper" else "unreadable cache file"
    assert expected in lines[0]
    assert sum(rendered) == len(responses.centres)  # really rebuilt
    assert_same_responses(again, responses)
    assert_same_responses(cache.load(path, key), responses)  # and the file is valid again


def test_load_or_build_without_report_still_rebuilds(built, scene, fast_settings):
    responses, path, key = built
    path.write_bytes(b"not a zip at all")
    assert_same_responses(cache.load_or_build(scene, fast_settings), responses)
    assert_same_responses(cache.load(path, key), responses)


# --- atomic writes ----------------------------------------------------------------------------------------


def test_save_leaves_no_temporary_file(built, tmp_path):
    responses, path, key = built
    assert list(path.parent.glob("*.tmp")) == []
    target = tmp_path / "fresh" / "r.npz"
    cache.save(responses, target, key)
    assert target.is_file()
    assert list(target.parent.iterdir()) == [target]


def test_failed_save_keeps_the_old_file_and_no_temporary(built, monkeypatch):
    responses, path, key = built
    before = path.read_bytes()
    real_savez = np.savez

    def savez_then_fail(f, **arrays):
        real_savez(f, **{k: arrays[k] for k in list(arrays)[:3]})  # part of the file is written...
        raise OSError("disk full (simulated)")  # ...then the write fails

    monkeypatch.setattr(np, "savez", savez_then_fail)
    altered = Responses(**{**{k: getattr(responses, k) for k in FIELDS}, "first_gain": responses.first_gain * 2})
    with pytest.raises(OSError, match=r"disk full \(simulated\)"):
        cache.save(altered, path, key)
    assert path.read_bytes() == before
    assert list(path.parent.glob("*.tmp")) == []
    assert sorted(p.name for p in path.parent.iterdir()) == [path.name]  # no temporary, no lock file
    monkeypatch.undo()
    assert_same_responses(cache.load(path, key), responses)


# --- concurrent builders ----------------------------------------------------------------------------------


def _build_in_child(scene_data: dict, settings_data: dict, barrier, results) -> None:
    """Child process: wait for the other builder, then load or build; send back what it got."""
    scene = from_dict(scene_data, "test")
    settings = AcousticSettings(**settings_data)
    rendered: list[int] = []
    barrier.wait(timeout=60)
    responses = cache.load_or_build(scene, settings, progress=rendered.append)
    results.put((os.getpid(), sum(rendered), {k: getattr(responses, k) for k in FIELDS}))


def test_two_processes_building_at_once_leave_one_valid_file(private_cache, fast_settings):
    method = "fork" if "fork" in mp.get_all_start_methods() else "spawn"
    ctx = mp.get_context(method)
    scene_data = shoebox_dict(spacing=1.0)
    barrier, results = ctx.Barrier(2), ctx.Queue()
    workers = [ctx.Process(target=_build_in_child, args=(scene_data, fast_settings.model_dump(), barrier, results))
               for _ in range(2)]
    for w in workers:
        w.start()
    got = [results.get(timeout=120) for _ in workers]  # read before join: the queue pipe must drain
    for w in workers:
        w.join(timeout=60)
        assert w.exitcode == 0
    assert got[0][0] != got[1][0]  # two different processes
    n_cells = len(got[0][2]["centres"])
    # the build lock lets one build while the other waits and then loads its file
    assert sorted(g[1] for g in got) == [0, n_cells]
    files = sorted(p.name for p in private_cache.iterdir())
    assert len([f for f in files if f.endswith(".npz")]) == 1
    assert not [f for f in files if f.endswith(".tmp")]
    scene = from_dict(scene_data, "test")
    on_disk = cache.load(cache.cache_path(scene, fast_settings), cache.cache_key(scene, fast_settings))
    first, second = (Responses(**g[2]) for g in got)
    assert_same_responses(first, second)
    assert_same_responses(on_disk, first)


# --- reproducibility --------------------------------------------------------------------------------------


def test_equal_seeds_give_equal_results_and_another_seed_changes_only_the_tail(scene, fast_settings):
    grid = build_grid(scene, fast_settings.n_headings)
    one = build_responses(scene, grid, fast_settings)
    two = build_responses(scene, grid, fast_settings)
    assert_same_responses(one, two)
    other = build_responses(scene, grid, fast_settings.model_copy(update={"seed": 7}))
    # the image-source early part does not depend on the seed ...
    for name in ("early", "first_delay", "first_gain", "line_of_sight", "centres"):
        assert np.array_equal(getattr(other, name), getattr(one, name)), name
    # ... the noise-based tail does, all over
    assert other.tail.shape == one.tail.shape
    assert not np.array_equal(other.tail, one.tail)
    differs = np.any(other.tail != one.tail, axis=-1)  # (C, S, 2)
    assert differs.all()


def test_a_first_build_says_what_it_builds_and_a_cached_load_says_nothing(tmp_path, monkeypatch, scene, fast_settings):
    # Feedback on long work: the first use of a scene names it and estimates the time; later loads are silent.
    monkeypatch.setenv("HEARNAV_CACHE", str(tmp_path))
    said = []
    cache.load_or_build(scene, fast_settings, report=said.append)
    assert len(said) == 1
    assert said[0].startswith(f"building responses for {scene.name} (first use, about ") and \
        said[0].endswith(" s; cached for later runs)")
    cache.load_or_build(scene, fast_settings, report=said.append)
    assert len(said) == 1
