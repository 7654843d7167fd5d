"""GCC-PHAT (Knapp & Carter 1976), Woodworth interaural delays and the spherical-head steering vector."""

import numpy as np
import pytest
import scipy.fft as sfft

from hearnav.physics import head
from hearnav.errors import ConfigError
from hearnav.separation import (
    SeparationContext,
    expected_itd,
    gcc_phat,
    steering_vector,
)
from hearnav.separation.beamform import das_weights
from hearnav.physics.head import azimuth_from_itd, ear_betas, ear_delays
from hearnav.separation.stft import stft_freqs

FS = 16000


def _delayed(x, seconds, fs=FS):
    """x delayed by a (fractional) number of seconds, as a circular band-limited shift."""
    omega = 2 * np.pi * sfft.rfftfreq(x.size, 1 / fs)
    return sfft.irfft(sfft.rfft(x) * np.exp(-1j * omega * seconds), x.size)


@pytest.mark.parametrize("delay", [-17, -3, 0, 1, 5, 40])
def test_gcc_phat_recovers_integer_delay(delay):
    # Knapp & Carter 1976: for x1(t) = x2(t - D) the PHAT-weighted cross-spectrum is exp(-j w D), whose inverse
    # transform is a delta at D, so an integer delay is recovered exactly. Positive tau: x1 lags x2.
    rng = np.random.default_rng(abs(delay))
    x2 = rng.standard_normal(4000)
    x1 = np.zeros_like(x2)
    if delay >= 0:
        x1[delay:] = x2[: x2.size - delay]
    else:
        x1[:delay] = x2[-delay:]
    tau, corr = gcc_phat(x1, x2, FS)
    assert tau == delay / FS
    assert corr.ndim == 1


def test_gcc_phat_max_tau_limits_the_search():
    # Common practice: the search window is [-max_tau, max_tau], correlation has 2 m + 1 lags.
    rng = np.random.default_rng(0)
    x = rng.standard_normal(2000)
    tau, corr = gcc_phat(np.roll(x, 4), x, FS, max_tau=10 / FS)
    assert tau == 4 / FS
    assert corr.shape == (21,)


@pytest.mark.parametrize("az_deg", [-90, -60, -20, 0, 30, 75, 90, 135, -150])
def test_gcc_phat_finds_woodworth_itd_within_one_sample(az_deg):
    # Woodworth & Schlosberg 1954 per-ear delays applied to white noise; GCC-PHAT (Knapp & Carter 1976)
    # between the left and the right ear peaks at the ITD within one sample (and within 1/4 sample with interp=4).
    az = np.deg2rad(az_deg)
    s = np.random.default_rng(az_deg + 200).standard_normal(8000)
    left, right = (_delayed(s, tau) for tau in ear_delays(az))
    itd = float(expected_itd(az))
    tau, _ = gcc_phat(left, right, FS, max_tau=1e-3)
    assert abs(tau - itd) <= 1 / FS
    tau4, _ = gcc_phat(left, right, FS, max_tau=1e-3, interp=4)
    assert abs(tau4 - itd) <= 0.25 / FS


@pytest.mark.parametrize("theta_deg", [0, 20, 45, 70, 90])
def test_expected_itd_is_woodworth(theta_deg):
    # Woodworth & Schlosberg 1954: |ITD| = (a/c)(theta + sin theta); the left ear leads for a source on the left,
    # so left-minus-right is negative there, positive on the right, and the same behind (front-back symmetry).
    theta = np.deg2rad(theta_deg)
    itd = (head.HEAD_RADIUS / 343.0) * (theta + np.sin(theta))
    assert expected_itd(theta) == pytest.approx(-itd, abs=1e-12)
    assert expected_itd(-theta) == pytest.approx(itd, abs=1e-12)
    assert expected_itd(np.pi - theta) == pytest.approx(-itd, abs=1e-12)


def test_expected_itd_at_the_side_is_0656_ms():
    # Woodworth formula at 90 degrees, a = 8.75 cm, c = 343 m/s: 0.656 ms (value in tests/acoustics/test_head.py).
    assert expected_itd(np.pi / 2) == pytest.approx(-0.656e-3, abs=1e-6)


def test_azimuth_from_itd_inverts_for_frontal_directions():
    # Common practice: the lateral angle is recovered from the ITD by inverting the (monotonic) Woodworth curve.
    az = np.deg2rad(np.array([-80.0, -30.0, 0.0, 10.0, 55.0, 90.0]))
    np.testing.assert_allclose(azimuth_from_itd(expected_itd(az)), az, atol=1e-3)


def test_gcc_phat_bad_input_raises():
    with pytest.raises(ConfigError, match=r"x1 as a non-empty finite \(n,\) array, got shape \(2, 3\)"):
        gcc_phat(np.ones((2, 3)), np.ones(3), FS)
    with pytest.raises(ConfigError, match="interp as an integer >= 1, got 0"):
        gcc_phat(np.ones(3), np.ones(3), FS, interp=0)
    with pytest.raises(ConfigError, match="fs > 0"):
        gcc_phat(np.ones(3), np.ones(3), 0)


def test_steering_vector_shape_and_dc():
    # Brown & Duda 1998: H -> 1 at low frequency and every delay vanishes at DC, so d(0) = [1, 1].
    freqs = np.fft.rfftfreq(512, 1 / FS)
    d = steering_vector(0.7, freqs)
    assert d.shape == (257, 2)
    np.testing.assert_allclose(d[0], [1, 1], atol=1e-12)
    assert steering_vector(np.array([0.1, 0.2, 0.3]), freqs).shape == (3, 257, 2)


def test_steering_vector_at_the_left_side():
    # Brown & Duda 1998 alpha values (tests/acoustics/test_head.py): at +90 deg the left ear faces the source
    # (beta = 0, high-frequency gain 2, +6 dB) and the right ear is opposite (beta = 180 deg, alpha 0.281).
    w0 = 343.0 / head.HEAD_RADIUS
    f_high = np.array([2000 * w0 / (2 * np.pi)])
    d = steering_vector(np.pi / 2, f_high)[0]
    assert abs(d[0]) == pytest.approx(2.0, abs=1e-3)
    assert abs(d[1]) == pytest.approx(0.281, abs=1e-3)


def test_steering_vector_symmetries():
    # Symmetries of the spherical-head model (Woodworth / Brown & Duda depend only on beta): mirroring the
    # azimuth swaps the ears; front and back (az and pi - az) give the same horizontal-plane cues.
    freqs = np.linspace(0, 8000, 129)
    for az in np.deg2rad([10.0, 45.0, 120.0]):
        np.testing.assert_allclose(steering_vector(-az, freqs), steering_vector(az, freqs)[:, ::-1], atol=1e-12)
        np.testing.assert_allclose(steering_vector(np.pi - az, freqs), steering_vector(az, freqs), atol=1e-12)


def test_steering_vector_matches_head_model():
    # Definition (hearnav.physics.head): d_e(w) = H(w, beta_e) exp(-j w tau_e) with beta_e from ear_angles
    # for a listener facing +x and the arrival direction (cos az, sin az, 0).
    az = 0.4
    freqs = np.linspace(0, 8000, 65)
    omega = 2 * np.pi * freqs
    beta = head.ear_angles(np.array([[np.cos(az), np.sin(az), 0.0]]), 0.0)[:, 0]
    expected = head.head_shadow(omega, beta) * np.exp(-1j * omega * head.woodworth_delay(beta)[:, None])
    np.testing.assert_allclose(steering_vector(az, freqs), expected.T, atol=1e-12)


def test_scalar_azimuths_take_the_same_ear_angles_as_arrays():
    # Geometry (common practice): with the ears on the +-90 degree axes, cos(beta) = +-sin(azimuth); the scalar
    # shortcut must agree with the general ear_angles path.
    az = np.random.default_rng(3).uniform(-7, 7, 200)
    np.testing.assert_allclose(np.array([ear_betas(float(a)) for a in az]), ear_betas(az), atol=1e-12)


@pytest.mark.parametrize("azimuth", [0.0, 0.4, np.pi / 2, -2.5, np.pi])
def test_context_steering_is_the_steering_vector_on_the_stft_bins(azimuth):
    # Brown & Duda's H(w, beta) = L(w) + alpha(beta) P(w) is an identity of the model (hearnav.physics.head),
    # so the context's cached-basis form must equal steering_vector to rounding.
    ctx = SeparationContext(fs=FS, azimuth=azimuth)
    np.testing.assert_allclose(ctx.steering(), steering_vector(azimuth, stft_freqs(512, FS)), atol=1e-12)


@pytest.mark.parametrize("azimuth", [0.0, 0.4, np.pi / 2, -2.5, np.pi])
def test_context_das_conjugate_is_the_conjugate_delay_and_sum_weights(azimuth):
    # Delay-and-sum w = d / (d^H d) (Van Trees 2002) of the steering vector; the context computes w^H directly in
    # single precision, so it must match to single-precision rounding and pass the target undistorted.
    ctx = SeparationContext(fs=FS, azimuth=azimuth)
    d = steering_vector(azimuth, stft_freqs(512, FS))
    wh = ctx.das_conjugate()
    assert wh.dtype == np.complex64 and wh.shape == (2, 257) and not wh.flags.writeable
    np.testing.assert_allclose(wh, np.conj(das_weights(d)).T, rtol=1e-6, atol=1e-7)
    np.testing.assert_allclose(np.sum(wh * d.T, axis=0), 1.0, atol=1e-6)  # w^H d = 1
