"""Registry, argument checks, determinism and draw()."""

from __future__ import annotations

import hashlib
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import hearnav.sounds as sounds
from hearnav.errors import SoundError

BUILTIN = ("talker", "music", "alarm", "hum", "noise")


def test_builtin_categories_in_registration_order():
    # the five names of the brief, in the order they were registered
    assert sounds.categories()[:5] == BUILTIN
    assert sounds.CATEGORIES == sounds.categories()
    assert sounds.POOLS == ("seen", "unseen")
    assert sounds.DEFAULT_FS == 16000


def test_reference_rms_is_minus_26_dbfs():
    # 20 log10(0.05) = -26.02 dB (arithmetic)
    assert 20 * np.log10(sounds.REFERENCE_RMS) == pytest.approx(-26.02, abs=0.01)


@pytest.mark.parametrize("category", BUILTIN)
def test_same_arguments_give_identical_samples(category):
    a = sounds.generate(category, "seen", 1, 3, 1.5)
    b = sounds.generate(category, "seen", 1, 3, 1.5)
    assert np.array_equal(a, b)


@pytest.mark.parametrize("category", BUILTIN)
def test_other_take_voice_or_pool_gives_other_samples(category):
    base = sounds.generate(category, "seen", 0, 0, 1.5)
    assert not np.array_equal(base, sounds.generate(category, "seen", 0, 1, 1.5))
    assert not np.array_equal(base, sounds.generate(category, "seen", 1, 0, 1.5))
    assert not np.array_equal(base, sounds.generate(category, "unseen", 0, 0, 1.5))


def test_identical_in_a_fresh_process_with_other_hash_seed():
    # seeds must not depend on Python's salted hash(): compare against a subprocess
    root = Path(__file__).resolve().parents[2]
    code = (
        "import hashlib, hearnav.sounds as s\n"
        "print(hashlib.sha256(s.generate('talker', 'unseen', 2, 7, 1.0).tobytes()).hexdigest())"
    )
    env = {**os.environ, "PYTHONHASHSEED": "12345", "PYTHONPATH": str(root)}
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True)
    here = hashlib.sha256(sounds.generate("talker", "unseen", 2, 7, 1.0).tobytes()).hexdigest()
    assert out.stdout.strip() == here


def test_unknown_category_suggests_the_close_name():
    with pytest.raises(SoundError, match=r"unknown sound category 'talkr'.*did you mean 'talker'"):
        sounds.generate("talkr", "seen", 0, 0, 1.0)


def test_unknown_category_lists_valid_names():
    with pytest.raises(SoundError, match=r"unknown sound category 'xyz'.*valid names: .*alarm.*talker"):
        sounds.pool_size("xyz", "seen")


def test_unknown_pool():
    with pytest.raises(SoundError, match=r"unknown sound pool 'unsen'.*did you mean 'unseen'"):
        sounds.generate("noise", "unsen", 0, 0, 1.0)
    with pytest.raises(SoundError, match=r"unknown sound pool 'test'.*valid names: seen, unseen"):
        sounds.generate("noise", "test", 0, 0, 1.0)


def test_voice_out_of_range():
    count = sounds.pool_size("talker", "seen")
    with pytest.raises(SoundError, match=rf"voice of talker/seen must be in 0\.\.{count - 1}, got {count}"):
        sounds.generate("talker", "seen", count, 0, 1.0)
    with pytest.raises(SoundError, match=r"got -1"):
        sounds.generate("talker", "seen", -1, 0, 1.0)


@pytest.mark.parametrize("duration", [0.0, -1.0, float("nan"), float("inf")])
def test_bad_duration(duration):
    with pytest.raises(SoundError, match=r"duration must be a finite number of seconds > 0, got"):
        sounds.generate("noise", "seen", 0, 0, duration)


def test_low_sample_rate():
    with pytest.raises(SoundError, match=r"sample rate must be at least 8000 Hz, got 4000 Hz"):
        sounds.generate("noise", "seen", 0, 0, 1.0, fs=4000)


def test_non_integer_voice_and_negative_take():
    with pytest.raises(SoundError, match=r"voice must be an integer, got 1\.5"):
        sounds.generate("noise", "seen", 1.5, 0, 1.0)
    with pytest.raises(SoundError, match=r"take must be a non-negative integer, got -2"):
        sounds.generate("noise", "seen", 0, -2, 1.0)


def test_draw_is_reproducible_and_reports_its_choice():
    def rng():
        return np.random.default_rng(np.random.SeedSequence(2024))

    x, info = sounds.draw("alarm", "unseen", rng(), 1.0)
    y, info2 = sounds.draw("alarm", "unseen", rng(), 1.0)
    assert info == info2 and np.array_equal(x, y)
    assert set(info) == {"category", "pool", "voice", "take"}
    assert 0 <= info["voice"] < sounds.pool_size("alarm", "unseen")
    assert np.array_equal(x, sounds.generate(duration_s=1.0, **info))


def test_draw_covers_every_voice():
    rng = np.random.default_rng(np.random.SeedSequence(7))
    count = sounds.pool_size("hum", "unseen")
    seen = {sounds.draw("hum", "unseen", rng, 0.05)[1]["voice"] for _ in range(60)}
    assert seen == set(range(count))


def test_draw_rejects_a_non_generator():
    with pytest.raises(SoundError, match=r"rng must be a numpy\.random\.Generator, got int"):
        sounds.draw("noise", "seen", 3, 1.0)


def test_register_user_category(scratch_names):
    def chirp(voice, pool, take, duration_s, fs):
        t = np.arange(round(duration_s * fs)) / fs
        return np.sin(2 * np.pi * (300 + 100 * voice + 50 * take) * t)

    scratch_names.append("user-chirp")
    sounds.register_category("user-chirp", chirp, {"seen": 3, "unseen": 2})
    assert sounds.categories()[-1] == "user-chirp"
    assert "user-chirp" in sounds.CATEGORIES
    assert sounds.pool_size("user-chirp", "unseen") == 2
    x = sounds.generate("user-chirp", "seen", 2, 1, 0.5)
    assert x.dtype == np.float32 and x.shape == (8000,)
    assert sounds.active_rms(x) == pytest.approx(sounds.REFERENCE_RMS, rel=1e-3)
    with pytest.raises(SoundError, match=r"category 'user-chirp' is already registered"):
        sounds.register_category("user-chirp", chirp)
    sounds.unregister_category("user-chirp")
    assert "user-chirp" not in sounds.categories()


def test_register_default_one_voice_per_pool(scratch_names):
    scratch_names.append("user-one")
    sounds.register_category("user-one", lambda v, p, t, d, fs: np.ones(round(d * fs)))
    assert [sounds.pool_size("user-one", p) for p in sounds.POOLS] == [1, 1]


@pytest.mark.parametrize(
    "name, generator, n_voices, message",
    [
        ("", np.ones, None, r"sound category name must be a lower-case letter, then lower-case letters, digits"),
        ("Chirp", np.ones, None, r"sound category name must be a lower-case letter.*\(got 'Chirp'\)"),
        ("ok", "not callable", None, r"generator of category 'ok' must be callable, got str"),
        ("ok", np.ones, {"seen": 2}, r"n_voices of category 'ok' must be a dict with the keys \['seen', 'unseen'\]"),
        ("ok", np.ones, {"seen": 2, "unseen": 0}, r"n_voices\['unseen'\] of category 'ok' must be at least 1, got 0"),
    ],
)
def test_register_rejects_bad_arguments(name, generator, n_voices, message):
    with pytest.raises(SoundError, match=message):
        sounds.register_category(name, generator, n_voices)
    assert "ok" not in sounds.categories()


def test_generator_of_wrong_length_or_silent(scratch_names):
    scratch_names.extend(["user-short", "user-silent"])
    sounds.register_category("user-short", lambda v, p, t, d, fs: np.ones(10))
    sounds.register_category("user-silent", lambda v, p, t, d, fs: np.zeros(round(d * fs)))
    wrong_shape = r"generator of category 'user-short' returned shape \(10,\), expected \(8000,\)"
    with pytest.raises(SoundError, match=wrong_shape):
        sounds.generate("user-short", "seen", 0, 0, 0.5)
    with pytest.raises(SoundError, match=r"user-silent/seen voice 0 take 0: cannot normalise a silent sound"):
        sounds.generate("user-silent", "seen", 0, 0, 0.5)


def test_integral_float_sample_rate_is_accepted():
    assert sounds.generate("noise", "seen", 0, 0, 0.5, fs=16000.0).shape == (8000,)
    with pytest.raises(SoundError, match=r"sample rate fs must be an integer, got 16000\.5"):
        sounds.generate("noise", "seen", 0, 0, 0.5, fs=16000.5)


def test_voice_tables_reject_unknown_pools():
    from hearnav.sounds import talker

    with pytest.raises(SoundError, match=r"unknown sound pool 'held-out'"):
        talker.voices("held-out")
