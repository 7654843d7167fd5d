"""Active level and normalisation."""

from __future__ import annotations

import numpy as np
import pytest

from hearnav.errors import SoundError
from hearnav.sounds.level import REFERENCE_RMS, active_rms, normalise_level

FS = 16000


def sine(amplitude: float, seconds: float, freq: float = 440.0) -> np.ndarray:
    return amplitude * np.sin(2 * np.pi * freq * np.arange(int(seconds * FS)) / FS)


def test_active_level_of_a_steady_sine_is_its_rms():
    # RMS of a sinusoid of amplitude A is A / sqrt(2) (textbook fact)
    assert active_rms(sine(0.3, 2.0)) == pytest.approx(0.3 / np.sqrt(2), rel=1e-3)


def test_pauses_do_not_lower_the_active_level():
    # half the time silent: plain RMS drops by sqrt(2), the active level must not (the purpose of an
    # active speech level, ITU-T P.56 [from memory])
    x = np.concatenate([sine(0.3, 1.0), np.zeros(FS), sine(0.3, 1.0), np.zeros(FS)])
    assert np.sqrt(np.mean(x**2)) == pytest.approx(0.3 / 2, rel=1e-3)
    assert active_rms(x) == pytest.approx(0.3 / np.sqrt(2), rel=0.01)


def test_a_quiet_tail_within_the_margin_stays_active():
    # a part 6 dB down lies inside the 15.9 dB margin, so it counts (common practice)
    x = np.concatenate([sine(0.2, 1.0), sine(0.1, 1.0)])
    assert active_rms(x) == pytest.approx(np.sqrt(np.mean(x**2)), rel=1e-3)


def test_normalise_gives_the_reference_level_as_float32():
    x = np.concatenate([sine(0.7, 0.5), np.zeros(FS // 2)])
    y = normalise_level(x)
    assert y.dtype == np.float32 and y.shape == x.shape
    assert active_rms(y) == pytest.approx(REFERENCE_RMS, rel=1e-5)


def test_normalise_rejects_silence_nan_and_bad_shapes():
    with pytest.raises(SoundError, match=r"cannot normalise a silent sound: .* got all samples zero"):
        normalise_level(np.zeros(1000))
    with pytest.raises(SoundError, match=r"silent sound: .* got -1[0-9]{2}\.[0-9] dBFS"):
        normalise_level(np.full(1000, 1e-6))
    with pytest.raises(SoundError, match=r"NaN or infinite"):
        normalise_level(np.array([0.1, np.nan]))
    with pytest.raises(SoundError, match=r"shape \(2, 3\): expected a non-empty mono array"):
        normalise_level(np.ones((2, 3)))
