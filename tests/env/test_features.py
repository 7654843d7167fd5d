"""Band features of the observation against straightforward reference computations.

References: Welch's method (P. D. Welch, IEEE Trans. Audio Electroacoust. 15(2), 1967) averages the
periodograms of overlapping windowed frames; the Fourier shift theorem gives a delayed copy the phase
-2 pi f d / fs; an ear scaled by g has an ILD of 20 log10(g) dB by definition.
"""

from __future__ import annotations

import numpy as np
import pytest

from hearnav.env.features import (
    ILD_DB,
    LEVEL_DB,
    FeatureExtractor,
    band_matrix,
    segment_matrix,
)
from hearnav.errors import ConfigError
from hearnav.separation.stft import n_frames, stft, stft_freqs

FS, N = 16000, 7680


def extractor(**kw) -> FeatureExtractor:
    return FeatureExtractor(FS, N, kw.get("bands", 16), kw.get("segments", 4))


def direct_features(x: np.ndarray, fe: FeatureExtractor) -> np.ndarray:
    """(5, S, B) from complex128 spectra by the definitions: Welch band powers, their ratio, the cross-spectrum's angle."""
    spec = np.swapaxes(stft(x.astype(np.float64)), -1, -2)[:, fe.picked]  # (2, K, F)
    avg = fe.frames.T.astype(float)
    bands = fe.bands.astype(float)
    power = avg @ np.abs(spec) ** 2 @ bands
    cross = avg @ (spec[0] * np.conj(spec[1])) @ bands
    level = 10 * np.log10(power + 1e-12)
    return np.stack([level[0], level[1], level[0] - level[1], np.cos(np.angle(cross)), np.sin(np.angle(cross))])


def test_binaural_features_equal_the_definitions():
    fe = extractor()
    x = 0.01 * np.random.default_rng(0).standard_normal((2, N)).astype(np.float32)
    np.testing.assert_allclose(fe.binaural(stft(x)), direct_features(x, fe), atol=2e-4)


def test_shared_stft_frames_equal_the_mono_frames():
    # The feature frames picked from the separator's STFT (hop 128) are the frames of an STFT at hop 256.
    fe = extractor()
    x = 0.01 * np.random.default_rng(1).standard_normal((2, N)).astype(np.float32)
    np.testing.assert_allclose(fe.binaural(stft(x))[0], fe.mono_signal(x[0])[0], atol=1e-5)
    assert fe.n_picked == len(range(1, n_frames(N, 512, 128), 2))


def test_ild_of_a_scaled_ear():
    # ILD definition: an ear scaled by g = 0.5 is 20 log10(2) = 6.02 dB quieter in every band.
    fe = extractor()
    left = 0.01 * np.random.default_rng(2).standard_normal(N).astype(np.float32)
    feats = fe.binaural(stft(np.stack([left, 0.5 * left])))
    np.testing.assert_allclose(feats[2], 20 * np.log10(2.0), atol=1e-3)
    np.testing.assert_allclose(feats[3], 1.0, atol=1e-5)  # same phase: IPD 0


def test_ipd_of_a_delayed_ear_follows_the_shift_theorem():
    # Fourier shift theorem: a right ear delayed by d samples leads the left by 2 pi f d / fs at frequency f.
    fe = extractor(bands=8)
    d = 2
    sig = 0.01 * np.random.default_rng(3).standard_normal(N + d).astype(np.float32)
    feats = fe.binaural(stft(np.stack([sig[d:], sig[:-d]])))
    freqs = stft_freqs(512, FS)
    for b in range(3):  # low bands, where the phase does not wrap within a band
        centre = np.average(freqs, weights=fe.bands[:, b])
        want = 2 * np.pi * centre * d / FS
        assert np.angle(feats[3, :, b] + 1j * feats[4, :, b]).mean() == pytest.approx(want, abs=0.1)


def test_silence_gives_the_lower_bound_and_zero_phase():
    fe = extractor()
    feats = fe.binaural(stft(np.zeros((2, N), np.float32)))
    assert (feats[0:2] == LEVEL_DB[0]).all() and (feats[2] == 0).all()
    assert (feats[3] == 1).all() and (feats[4] == 0).all()
    assert ILD_DB[0] < 0 < ILD_DB[1]


def test_band_matrix_gives_every_band_a_bin():
    # 64 bands: the lowest ones are narrower than a 31.25 Hz bin and borrow the bin nearest their centre
    assert (band_matrix(512, FS, 64).sum(axis=0) >= 1).all()
    m = band_matrix(512, FS, 16)
    assert (m.sum(axis=1) <= 1).all() and m[stft_freqs(512, FS) < 100.0].sum() == 0


def test_segments_average_their_frames():
    m = segment_matrix(np.arange(8) * 100.0 + 50, 800, 4)
    np.testing.assert_allclose(m.sum(axis=0), 1.0)
    assert (np.count_nonzero(m, axis=0) == 2).all()


def test_too_many_segments_is_a_clear_error():
    with pytest.raises(ConfigError, match=r"n_segments too large for 1600-sample windows \(expected at most 7 "
                                          r"segments of one feature frame or more, got 32\)"):
        FeatureExtractor(FS, 1600, 16, 32)


def test_any_layout_and_precision_gives_the_same_features():
    # The compiled pass reads C-contiguous complex64 frames; other inputs are converted first (common practice:
    # a conversion must not change the result beyond single-precision rounding).
    fe = extractor()
    rng = np.random.default_rng(4)
    x = 0.01 * rng.standard_normal((2, N)).astype(np.float32)
    y = 0.01 * rng.standard_normal(N).astype(np.float32)
    spec, mono = stft(x), stft(y)
    binaural, levels = fe.observe(spec, mono)
    double = fe.observe(spec.astype(np.complex128), np.ascontiguousarray(mono, np.complex128))
    np.testing.assert_allclose(double[0], binaural, atol=1e-5)
    np.testing.assert_allclose(double[1], levels, atol=1e-5)
    np.testing.assert_array_equal(fe.mono(mono), levels)
    np.testing.assert_array_equal(fe.binaural(spec), binaural)
    two = fe.observe(spec, mono, spec[0])[1]
    np.testing.assert_array_equal(two[0], levels[0])
    np.testing.assert_array_equal(two[1], binaural[0])  # the left ear's levels, as a mono spectrum
