"""Loudness and true peak of written audio against ITU-R BS.1770-4's own reference statements."""

import numpy as np
import pytest

from hearnav.bench.audio import LOUDNESS_LUFS, normalise_loudness, true_peak_db

FS = 48000


def test_true_peak_finds_the_peak_between_samples():
    # ITU-R BS.1770-4 Annex 2: sample peaks under-read a signal's peak between samples; a sine at fs/4 sampled at
    # 45 degrees of phase has every sample at 0.707 of its amplitude (-3.01 dB), and a 4x oversampling meter
    # reads its true peak (0 dB for amplitude 1) to within a fraction of a dB.
    t = np.arange(FS) / FS
    x = np.sin(2 * np.pi * FS / 4 * t + np.pi / 4)
    assert 20 * np.log10(np.max(np.abs(x))) == pytest.approx(-3.01, abs=0.01)
    assert true_peak_db(x) == pytest.approx(0.0, abs=0.5)


def test_a_stereo_sine_lands_at_the_stated_loudness():
    # ITU-R BS.1770-4, 2.1: a 0 dBFS 997 Hz sine in one channel (left, centre or right) reads -3.01 LKFS, so the same
    # sine in both channels reads 0.00 LKFS, and at -23 LUFS its amplitude is 10^(-23/20).
    t = np.arange(3 * FS) / FS
    sine = 0.3 * np.sin(2 * np.pi * 997 * t)
    out, gain = normalise_loudness(np.stack([sine, sine], axis=1), FS)
    assert np.max(np.abs(out)) == pytest.approx(10 ** (LOUDNESS_LUFS / 20), rel=0.02)
    assert gain == pytest.approx(LOUDNESS_LUFS - 20 * np.log10(0.3), abs=0.1)


def test_the_true_peak_ceiling_wins_over_loudness():
    # A sparse click train has little loudness and a high peak: normalising it to -23 LUFS would clip, so the
    # gain stops at the -1 dBTP ceiling (EBU R 128's maximum true peak).
    x = np.zeros((2 * FS, 2))
    x[::FS // 2] = 1.0
    out, _ = normalise_loudness(x, FS)
    assert true_peak_db(out) == pytest.approx(-1.0, abs=1e-6)


def test_silence_stays_silent():
    out, gain = normalise_loudness(np.zeros((FS, 2)), FS)
    assert not out.any() and gain == 0.0
