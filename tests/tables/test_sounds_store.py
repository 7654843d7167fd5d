"""Dry sounds in the store: generated once, equal to a fresh generation, bounded, user categories not stored."""

from __future__ import annotations

import os

import numpy as np
import pytest

from hearnav import sounds
from hearnav.tables import sounds as clips

FS = 16000
N = 4000


@pytest.fixture(autouse=True)
def counted(monkeypatch, tmp_path):
    """Count the generator's calls; every test gets its own store."""
    monkeypatch.setenv("HEARNAV_CACHE", str(tmp_path / "cache"))
    calls = []
    real = sounds.generate

    def generate(*args):
        calls.append(args)
        return real(*args)

    monkeypatch.setattr(clips.sounds, "generate", generate)
    return calls


def test_a_clip_is_generated_once_and_equals_a_fresh_generation(counted):
    first = clips.dry_signal("talker", "seen", 1, 7, N, FS)
    again = clips.dry_signal("talker", "seen", 1, 7, N, FS)
    assert len(counted) == 1
    want = sounds.generate("talker", "seen", 1, 7, N / FS, FS)  # counted too: a fresh generation
    for got in (first, again):
        assert got.dtype == want.dtype and not got.flags.writeable
        np.testing.assert_array_equal(got, want)
    assert len(list(clips.sounds_dir().iterdir())) == 1


@pytest.mark.parametrize("change", [{"take": 8}, {"voice": 0}, {"n": N + 1}, {"pool": "unseen"}])
def test_every_argument_keys_the_clip(counted, change):
    args = {"category": "hum", "pool": "seen", "voice": 1, "take": 7, "n": N}
    clips.dry_signal(*args.values(), FS)
    new = {**args, **change}
    other = clips.dry_signal(*new.values(), FS)
    assert len(counted) == 2 and len(list(clips.sounds_dir().iterdir())) == 2
    category, pool, voice, take, n = new.values()
    np.testing.assert_array_equal(other, sounds.generate(category, pool, voice, take, n / FS, FS))


def test_a_user_category_is_generated_every_time_and_not_stored(counted):
    sounds.register_category("beep-test", lambda voice, pool, take, duration_s, fs: np.ones(round(duration_s * fs)))
    try:
        for _ in range(2):
            np.testing.assert_array_equal(clips.dry_signal("beep-test", "seen", 0, 0, N, FS),
                                          sounds.generate("beep-test", "seen", 0, 0, N / FS, FS))
    finally:
        sounds.unregister_category("beep-test")
    assert len(counted) == 4
    assert not clips.sounds_dir().exists()


def test_a_damaged_clip_is_rebuilt(counted, capsys):
    want = np.array(clips.dry_signal("noise", "seen", 0, 3, N, FS))
    (folder,) = clips.sounds_dir().iterdir()
    with open(folder / "signal.npy", "r+b") as f:
        f.seek(-4, os.SEEK_END)
        f.write(b"\xff\xff\xff\xff")
    capsys.readouterr()
    np.testing.assert_array_equal(clips.dry_signal("noise", "seen", 0, 3, N, FS), want)
    assert len(counted) == 2
    assert capsys.readouterr().err.startswith(f"hearnav: note: {folder / 'signal.npy'}: CRC-32 mismatch")


def test_the_folder_keeps_the_most_recently_used_clips_within_its_bound(counted, monkeypatch):
    for take in range(3):
        clips.dry_signal("noise", "seen", 0, take, N, FS)
    folders = {f.name: f for f in clips.sounds_dir().iterdir()}
    size = sum(p.stat().st_size for p in next(iter(folders.values())).iterdir())
    for age, folder in enumerate(sorted(folders.values())):  # give them distinct, known use times
        os.utime(folder, (1_000_000 + age, 1_000_000 + age))
    oldest = sorted(folders.values())[0]
    monkeypatch.setattr(clips, "SOUNDS_BYTES", 3 * size)
    clips.dry_signal("noise", "seen", 0, 99, N, FS)  # a fourth clip: the least recently used one goes
    left = set(clips.sounds_dir().iterdir())
    assert len(left) == 3 and oldest not in left
    assert not [p for p in clips.sounds_dir().parent.rglob(".*")]  # no trash or temporary folder left
