"""The spherical-head ear model against Woodworth's formula and Brown & Duda (1998)."""

import numpy as np
import pytest

from hearnav.physics import head

A, C = 0.0875, 343.0


def test_woodworth_itd_front_and_side():
    # Woodworth & Schlosberg (1954): ITD = (a/c)(theta + sin theta); 0 at the front, 0.656 ms at 90 degrees
    # for a = 8.75 cm, c = 343 m/s (Woodworth's formula evaluated by hand: (0.0875 / 343)(pi/2 + 1) = 0.656 ms). Formula to 1 microsecond.
    assert head.woodworth_itd(0.0) == pytest.approx(0.0, abs=1e-9)
    assert head.woodworth_itd(np.pi / 2) == pytest.approx(0.656e-3, abs=1e-6)


@pytest.mark.parametrize("theta_deg", [0, 15, 30, 45, 60, 75, 90])
def test_per_ear_delays_give_woodworth_itd(theta_deg):
    # The per-ear delays (-a/c cos(beta) lit side, a/c (beta - pi/2) shadow side) differ by Woodworth's ITD.
    theta = np.deg2rad(theta_deg)
    direction = np.array([[np.cos(theta), np.sin(theta), 0.0]])  # source to the left of a listener facing +x
    beta = head.ear_angles(direction, 0.0)[:, 0]
    itd = head.woodworth_delay(beta[1]) - head.woodworth_delay(beta[0])
    assert itd == pytest.approx(head.woodworth_itd(theta), abs=1e-9)


@pytest.mark.parametrize("beta_deg, alpha", [(0, 2.0), (90, 0.756), (150, 0.1), (180, 0.281)])
def test_brown_duda_alpha_values(beta_deg, alpha):
    # Brown & Duda 1998, alpha_min = 0.1, theta_min = 150 deg; alpha(beta) = (1 + a_min/2) + (1 - a_min/2) cos(beta / theta_min * 180 deg)
    # (their eq. 2) evaluated by hand at these angles.
    assert head.shadow_alpha(np.deg2rad(beta_deg)) == pytest.approx(alpha, abs=1e-3)


def test_head_shadow_limits():
    # |H| -> 1 at low frequency and -> alpha at high frequency (Brown & Duda 1998): +6.02 dB facing the ear,
    # -20 dB at 150 degrees, within 0.5 dB.
    w0 = C / A
    low, high = np.array([1e-3 * w0]), np.array([2000 * w0])
    for beta_deg, db in [(0, 6.02), (150, -20.0)]:
        beta = np.deg2rad(beta_deg)
        assert 20 * np.log10(abs(head.head_shadow(low, beta)[0])) == pytest.approx(0.0, abs=0.01)
        assert 20 * np.log10(abs(head.head_shadow(high, beta)[0])) == pytest.approx(db, abs=0.5)


def test_head_shadow_is_affine_in_alpha():
    # H = L + alpha P with L = 1/(1 + j w/2w0) and P = (j w/2w0)/(1 + j w/2w0): algebra of Brown & Duda's filter.
    omega = np.linspace(0, 2 * np.pi * 8000, 257)
    beta = np.deg2rad(np.array([0, 40, 90, 130, 180]))
    low, p = head.shadow_basis(omega)
    expected = low[None, :] + head.shadow_alpha(beta)[:, None] * p[None, :]
    np.testing.assert_allclose(head.head_shadow(omega, beta), expected, rtol=1e-12, atol=1e-12)


def test_ear_axes_left_is_counter_clockwise():
    # Common practice: facing +x, the left ear points to +y.
    axes = head.ear_axes(0.0)
    np.testing.assert_allclose(axes[0], [0, 1, 0], atol=1e-12)
    np.testing.assert_allclose(axes[1], [0, -1, 0], atol=1e-12)
