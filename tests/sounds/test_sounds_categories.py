"""Properties every registered category must have, in both pools."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

import hearnav.sounds as sounds
from hearnav.sounds import alarm, hum, music, noise, talker
from hearnav.sounds.builtin import BUILTIN

CASES = [(c, p) for c in sounds.categories() for p in sounds.POOLS]


@pytest.mark.parametrize("category, pool", CASES)
@pytest.mark.parametrize("fs", [16000, 8000])
def test_every_voice_meets_the_output_contract(category, pool, fs):
    duration = 2.0
    for voice in range(sounds.pool_size(category, pool)):
        x = sounds.generate(category, pool, voice, 11, duration, fs)
        assert x.shape == (round(duration * fs),)
        assert x.dtype == np.float32
        assert np.all(np.isfinite(x))
        # scaled to the reference active level (definition of generate); plain RMS can only be lower
        assert sounds.active_rms(x, fs) == pytest.approx(sounds.REFERENCE_RMS, rel=0.01)
        assert np.sqrt(np.mean(x.astype(np.float64) ** 2)) <= sounds.REFERENCE_RMS * 1.01
        assert np.max(np.abs(x)) < 1.0  # no clipping in a float WAV (common practice)
        assert np.mean(np.abs(x) > 1e-4) > 0.3  # not silent most of the time


@pytest.mark.parametrize("category, pool", CASES)
def test_length_follows_round_duration_times_fs(category, pool):
    # n = round(duration_s * fs), e.g. 0.33333 s at 16 kHz -> 5333 samples
    assert sounds.generate(category, pool, 0, 0, 0.33333).shape == (5333,)
    assert sounds.generate(category, pool, 0, 0, 1.0, 22050).shape == (22050,)


@pytest.mark.parametrize("module", BUILTIN, ids=lambda m: m.NAME)
def test_pools_share_no_voice(module):
    seen, unseen = module.voices("seen"), module.voices("unseen")
    assert len(seen) == sounds.pool_size(module.NAME, "seen")
    assert len(unseen) == sounds.pool_size(module.NAME, "unseen")
    assert not set(seen) & set(unseen)
    assert len(set(seen)) == len(seen) and len(set(unseen)) == len(unseen)


def _values(voices, field):
    return np.array([getattr(v, field) for v in voices])


def _gap(a: np.ndarray, b: np.ndarray) -> float:
    """Smallest distance between a value of a and a value of b."""
    return float(np.min(np.abs(a[:, None] - b[None, :])))


@pytest.mark.parametrize(
    "module, fields",
    [
        (talker, ("f0_hz", "formant_scale", "syllable_rate_hz", "breathiness", "open_quotient")),
        (hum, ("even_gain", "blade_hz", "motor_hz", "mod_rate_hz")),
        (alarm, ("f_low_hz", "f_high_hz")),
        (noise, ("beta", "am_rate_hz")),
    ],
    ids=lambda x: getattr(x, "NAME", "fields"),
)
def test_unseen_parameters_lie_outside_the_seen_ones(module, fields):
    # held-out evaluation needs pools whose parameter values differ, not just new seeds (brief)
    for field in fields:
        assert _gap(_values(module.voices("seen"), field), _values(module.voices("unseen"), field)) > 0, field


@pytest.mark.parametrize(
    "module, fields", [(music, ("instrument", "scale")), (alarm, ("pattern", "timbre"))], ids=["music", "alarm"]
)
def test_unseen_uses_other_instruments_scales_patterns(module, fields):
    for field in fields:
        assert not set(_values(module.voices("seen"), field)) & set(_values(module.voices("unseen"), field))


def test_music_registers_differ():
    seen = _values(music.voices("seen"), "root_midi")
    unseen = _values(music.voices("unseen"), "root_midi")
    assert seen.max() < unseen.min()


def test_voices_are_frozen_parameter_sets():
    voice = talker.voices("seen")[0]
    with pytest.raises(dataclasses.FrozenInstanceError):
        voice.f0_hz = 1.0  # type: ignore[misc]
