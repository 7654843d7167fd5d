"""Delay-and-sum and MVDR weights (Capon 1969) over frequency bins."""

import numpy as np
import pytest

from hearnav.separation.beamform import apply_weights, combine, das_weights, mvdr_weights, spatial_covariance


def _random_case(seed, n_bins=64):
    rng = np.random.default_rng(seed)
    a = rng.standard_normal((n_bins, 2, 3)) + 1j * rng.standard_normal((n_bins, 2, 3))
    cov = a @ np.conj(np.swapaxes(a, -1, -2))  # Hermitian positive definite (rank 2 almost surely)
    d = rng.standard_normal((n_bins, 2)) + 1j * rng.standard_normal((n_bins, 2))
    return cov, d


@pytest.mark.parametrize("seed", range(5))
def test_mvdr_is_distortionless(seed):
    # Capon 1969: the MVDR weights satisfy the constraint w^H d = 1 in every bin.
    cov, d = _random_case(seed)
    w = mvdr_weights(cov, d)
    np.testing.assert_allclose(np.sum(np.conj(w) * d, axis=-1), 1.0, atol=1e-10)


def test_das_is_distortionless():
    # Delay-and-sum w = d / (d^H d) (Van Trees 2002) satisfies w^H d = 1.
    _, d = _random_case(7)
    np.testing.assert_allclose(np.sum(np.conj(das_weights(d)) * d, axis=-1), 1.0, atol=1e-12)


def test_mvdr_with_identity_covariance_is_delay_and_sum():
    # Textbook identity (Capon 1969 / Van Trees 2002): with R = I (white noise), R^-1 d / (d^H R^-1 d) = d / (d^H d).
    _, d = _random_case(8)
    cov = np.broadcast_to(np.eye(2, dtype=complex), (d.shape[0], 2, 2))
    np.testing.assert_allclose(mvdr_weights(cov, d), das_weights(d), atol=1e-12)


@pytest.mark.parametrize("seed", range(3))
def test_mvdr_minimises_output_power(seed):
    # Capon 1969: among all w with w^H d = 1, the MVDR weights give the least output power w^H R w.
    cov, d = _random_case(seed, n_bins=16)
    w = mvdr_weights(cov, d, loading=0.0)
    power = np.einsum("fi,fij,fj->f", np.conj(w), cov, w).real
    np.testing.assert_allclose(power, 1 / np.einsum("fi,fij,fj->f", np.conj(d), np.linalg.inv(cov), d).real,
                               rtol=1e-9)  # Capon's minimum power 1 / (d^H R^-1 d)
    rng = np.random.default_rng(seed + 10)
    for _ in range(5):  # any other distortionless w: w_mvdr + v with v^H d = 0
        v = rng.standard_normal(d.shape) + 1j * rng.standard_normal(d.shape)
        v -= (np.sum(np.conj(d) * v, axis=-1) / np.sum(np.abs(d) ** 2, axis=-1))[:, None] * d
        other = w + v
        assert np.all(np.einsum("fi,fij,fj->f", np.conj(other), cov, other).real >= power - 1e-9)


def test_mvdr_nulls_a_strong_interferer():
    # Textbook (Van Trees 2002, ch. 6): with R = s d_i d_i^H + sigma^2 I and s >> sigma^2 the MVDR response
    # towards the interferer d_i tends to zero; here below -40 dB.
    rng = np.random.default_rng(1)
    d = rng.standard_normal((8, 2)) + 1j * rng.standard_normal((8, 2))
    di = rng.standard_normal((8, 2)) + 1j * rng.standard_normal((8, 2))
    cov = 1e6 * np.einsum("fi,fj->fij", di, np.conj(di)) + np.eye(2)
    w = mvdr_weights(cov, d, loading=0.0)
    assert np.all(20 * np.log10(np.abs(np.sum(np.conj(w) * di, axis=-1))) < -40)


def test_spatial_covariance_and_apply_weights():
    # Definitions: R[f] = mean_t X X^H; Y = w^H X. Checked against explicit loops.
    rng = np.random.default_rng(2)
    spec = rng.standard_normal((2, 5, 7)) + 1j * rng.standard_normal((2, 5, 7))
    cov = spatial_covariance(spec)
    for f in range(5):
        np.testing.assert_allclose(cov[f], spec[:, f] @ np.conj(spec[:, f]).T / 7, atol=1e-12)
    w = rng.standard_normal((5, 2)) + 1j * rng.standard_normal((5, 2))
    y = apply_weights(w, spec)
    for f in range(5):
        np.testing.assert_allclose(y[f], np.conj(w[f]) @ spec[:, f], atol=1e-12)


@pytest.mark.parametrize("layout", ["frame-major complex64", "bin-major complex64", "complex128"])
def test_combine_is_the_weighted_sum_over_ears_in_every_layout(layout):
    # Definition Y(f, t) = sum_e wh[e, f] X_e(f, t); frame-major complex64 (our STFT's layout) takes the compiled
    # pass, the others numpy's, and both must equal explicit loops.
    rng = np.random.default_rng(3)
    spec = rng.standard_normal((2, 9, 6)) + 1j * rng.standard_normal((2, 9, 6))
    wh = rng.standard_normal((2, 9)) + 1j * rng.standard_normal((2, 9))
    if layout != "complex128":
        spec, wh = spec.astype(np.complex64), wh.astype(np.complex64)
    if layout == "frame-major complex64":
        spec = np.swapaxes(np.ascontiguousarray(np.swapaxes(spec, -1, -2)), -1, -2)
    y = combine(wh, spec)
    assert y.shape == (9, 6) and y.dtype == spec.dtype
    for f in range(9):
        for t in range(6):
            assert y[f, t] == pytest.approx(wh[0, f] * spec[0, f, t] + wh[1, f] * spec[1, f, t], rel=1e-5)


def test_binaural_mvdr_with_a_target_free_noise_covariance_is_distortionless_and_keeps_the_itf():
    # Hadad, Doclo & Gannot, IEEE/ACM TASLP 2016: the binaural MVDR filters with w = R_n^-1 d / (d^H R_n^-1 d),
    # distortionless towards the steering vector (w^H d = 1), and its output at ear e is d_e w^H X, so the target's
    # interaural transfer function d_L / d_R survives. Here R_n comes from the spatial mask (no target term).
    from binaural_scenes import FS, two_sources

    from hearnav.physics.steering import steering_vector
    from hearnav.separation.beamform import masked_covariance, to_ears
    from hearnav.separation.masks import spatial_mask
    from hearnav.separation.stft import stft, stft_freqs

    az = np.deg2rad(40)
    mix, image, _ = two_sources(3, az, np.deg2rad(-70))
    spec = stft(mix)
    d = steering_vector(az, stft_freqs(512, FS))
    noise = masked_covariance(spec, 1.0 - spatial_mask(spec, d))
    w = mvdr_weights(noise, d)
    np.testing.assert_allclose(np.sum(np.conj(w) * d, axis=-1), 1.0, atol=1e-9)  # w^H d = 1
    target_out = to_ears(d, apply_weights(w, stft(image)))  # the filter's output of the target alone
    ratio = target_out[0] / target_out[1]
    loud = np.abs(target_out[1]) > 1e-6 * np.abs(target_out[1]).max()
    np.testing.assert_allclose(ratio[loud], np.broadcast_to((d[:, 0] / d[:, 1])[:, None], ratio.shape)[loud],
                               rtol=1e-9)
