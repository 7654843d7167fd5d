"""Dry sounds in the store: each voice's takes rendered once, equal to a fresh rendering, keyed by everything they
depend on, damaged or stale parts rebuilt, user categories not stored, the folder bounded."""

from __future__ import annotations

import json
import os

import numpy as np
import pytest

from hearnav import sounds
from hearnav.errors import SoundError
from hearnav.tables import sounds as clips

FS = 16000
N = 4000


@pytest.fixture(autouse=True)
def counted(monkeypatch, tmp_path):
    """Count the generator's calls; every test gets its own store and an empty memo of opened voices."""
    monkeypatch.setenv("HEARNAV_CACHE", str(tmp_path / "cache"))
    clips.forget_opened()
    calls = []
    real = sounds.generate

    def generate(*args):
        calls.append(args)
        return real(*args)

    monkeypatch.setattr(clips.sounds, "generate", generate)
    yield calls
    clips.forget_opened()


def folders() -> list:
    return sorted(p for p in clips.sounds_dir().iterdir() if not p.name.startswith("."))


def test_a_voice_s_takes_are_rendered_once_and_equal_a_fresh_rendering(counted):
    first = clips.voice_clips("talker", "seen", 1, N, FS)
    assert len(counted) == clips.TAKES and first.shape == (clips.TAKES, N) and first.dtype == np.float32
    assert not first.flags.writeable
    clips.forget_opened()  # a new process: opened from the files, not rendered again
    again = clips.voice_clips("talker", "seen", 1, N, FS)
    assert len(counted) == clips.TAKES
    for take in range(clips.TAKES):
        want = clips.render_clip("talker", "seen", 1, take, N, FS)
        np.testing.assert_array_equal(first[take], want)
        np.testing.assert_array_equal(again[take], want)
    assert len(folders()) == 1


def test_a_clip_is_the_generated_sound_with_its_tail_cross_faded_into_its_start():
    fade = round(clips.LOOP_FADE_S * FS)
    x = sounds.generate("hum", "seen", 0, 2, (N + fade) / FS, FS)
    clip = clips.render_clip("hum", "seen", 0, 2, N, FS)
    np.testing.assert_array_equal(clip[fade:], x[fade:N])
    # The loop joins without a step: the clip starts where the generated sound goes on after its end, and the
    # cross-fade ends on the sound's own samples (an equal-power fade, common practice).
    tol = 2e-3 * np.abs(x).max()
    assert abs(clip[0] - x[N]) < tol and abs(clip[fade - 1] - x[fade - 1]) < tol
    assert not np.allclose(clip[:fade], x[:fade], atol=tol)


@pytest.mark.parametrize("change", [{"voice": 0}, {"n": N + 1}, {"pool": "unseen"}, {"fs": 8000}])
def test_every_argument_keys_the_clips(counted, change):
    args = {"category": "noise", "pool": "seen", "voice": 1, "n": N, "fs": FS}
    clips.voice_clips(*args.values())
    new = {**args, **change}
    other = clips.voice_clips(*new.values())
    assert len(counted) == 2 * clips.TAKES and len(folders()) == 2
    np.testing.assert_array_equal(other[0], clips.render_clip(new["category"], new["pool"], new["voice"], 0,
                                                              new["n"], new["fs"]))


@pytest.mark.parametrize("stale", ["generator", "takes"])
def test_a_changed_generator_or_number_of_takes_never_reuses_stale_clips(counted, monkeypatch, stale):
    clips.voice_clips("noise", "seen", 0, N, FS)
    clips.forget_opened()
    if stale == "generator":  # other sound code or numpy/scipy versions
        monkeypatch.setattr(clips, "_generator_identity", lambda: "another generator")
    else:
        monkeypatch.setattr(clips, "TAKES", clips.TAKES + 1)
    again = clips.voice_clips("noise", "seen", 0, N, FS)
    assert len(counted) == 2 * clips.TAKES - (stale == "takes") and len(folders()) == 2
    assert again.shape == (clips.TAKES, N)


def test_a_damaged_clip_file_is_detected_and_rebuilt(counted, capsys):
    want = np.array(clips.voice_clips("noise", "seen", 0, N, FS))
    (folder,) = folders()
    with open(folder / "clips.npy", "r+b") as f:
        f.seek(-4, os.SEEK_END)
        f.write(b"\xff\xff\xff\xff")
    clips.forget_opened()
    capsys.readouterr()
    np.testing.assert_array_equal(clips.voice_clips("noise", "seen", 0, N, FS), want)
    assert len(counted) == 2 * clips.TAKES
    assert capsys.readouterr().err.startswith(f"hearnav: note: {folder / 'clips.npy'}: CRC-32 mismatch")


def test_a_part_of_another_key_in_the_clips_place_is_rebuilt(counted, capsys):
    clips.voice_clips("noise", "seen", 0, N, FS)
    (folder,) = folders()
    manifest = json.loads((folder / "manifest.json").read_text())
    (folder / "manifest.json").write_text(json.dumps({**manifest, "key": "0" * 20}))
    clips.forget_opened()
    capsys.readouterr()
    clips.voice_clips("noise", "seen", 0, N, FS)
    assert len(counted) == 2 * clips.TAKES
    assert f"{folder}: manifest key '00000000000000000000'" in capsys.readouterr().err
    assert json.loads((folder / "manifest.json").read_text())["key"] == manifest["key"]


def test_signals_of_nearly_equal_lengths_share_their_clips():
    step = round(clips.CLIP_STEP_S * FS)
    assert clips.clip_length(1, FS) == clips.clip_length(step, FS) == step
    assert clips.clip_length(step + 1, FS) == 2 * step


def test_a_dry_signal_is_its_take_looped_from_the_offset():
    length = clips.clip_length(N, FS)
    clip = clips.voice_clips("alarm", "seen", 2, length, FS)[3]
    for offset in (0, 1, length - N, length - N + 1, length - 1, 7 * length + 123, 2**31 - 2):
        got = clips.dry_signal("alarm", "seen", 2, 3, offset, N, FS)
        assert got.flags.writeable and got.dtype == np.float32
        np.testing.assert_array_equal(got, np.roll(clip, -(offset % length))[:N])


@pytest.mark.parametrize("take", [-1, clips.TAKES, 1.0, True, "0"])
def test_a_take_outside_the_rendered_ones_is_refused(take):
    with pytest.raises(SoundError) as err:
        clips.dry_signal("noise", "seen", 0, take, 0, N, FS)
    assert str(err.value) == (f"take must be an integer in 0..{clips.TAKES - 1} (the takes rendered per voice), "
                              f"got {take!r}; draw it with rng.integers({clips.TAKES})")


def test_the_pools_share_no_clip():
    seen = [clips.voice_clips("noise", "seen", v, N, FS) for v in range(sounds.pool_size("noise", "seen"))]
    unseen = [clips.voice_clips("noise", "unseen", v, N, FS) for v in range(sounds.pool_size("noise", "unseen"))]
    assert not any(np.array_equal(a, b) for s in seen for a in s for u in unseen for b in u)


def test_a_user_category_is_rendered_every_time_and_not_stored(counted):
    def ramp(voice, pool, take, duration_s, fs):
        return np.sin(np.arange(round(duration_s * fs)) * (0.01 + 0.001 * take))

    sounds.register_category("ramp-test", ramp)
    try:
        for _ in range(2):
            clip = clips.render_clip("ramp-test", "seen", 0, 2, clips.clip_length(N, FS), FS)
            np.testing.assert_array_equal(clips.dry_signal("ramp-test", "seen", 0, 2, 100, N, FS),
                                          np.roll(clip, -100)[:N])
        assert clips.prerender(["ramp-test", "noise"], "seen", N, FS) == sounds.pool_size("noise", "seen")
    finally:
        sounds.unregister_category("ramp-test")
    assert len(counted) == 4 + sounds.pool_size("noise", "seen") * clips.TAKES
    assert all(f.name.startswith("noise-") for f in folders())


def test_prerender_builds_every_voice_of_a_pool_in_the_given_folder(counted, tmp_path):
    root = tmp_path / "elsewhere"
    assert clips.prerender(["alarm"], "unseen", N, FS, root) == sounds.pool_size("alarm", "unseen")
    assert len(list(root.glob("alarm-unseen-*"))) == sounds.pool_size("alarm", "unseen")
    assert not clips.sounds_dir().exists()


def test_the_folder_keeps_the_most_recently_used_clips_within_its_bound(counted, monkeypatch):
    for voice in range(3):
        clips.voice_clips("noise", "seen", voice, N, FS)
    found = folders()
    size = sum(p.stat().st_size for p in found[0].iterdir())
    for age, folder in enumerate(found):  # give them distinct, known use times
        os.utime(folder, (1_000_000 + age, 1_000_000 + age))
    monkeypatch.setattr(clips, "SOUNDS_BYTES", 3 * size)
    clips.voice_clips("noise", "unseen", 0, N, FS)  # a fourth part: the least recently used one goes
    left = set(folders())
    assert len(left) == 3 and found[0] not in left
    assert not [p for p in clips.sounds_dir().parent.rglob(".*") if p.name != ".locks"]  # no trash or temporary
