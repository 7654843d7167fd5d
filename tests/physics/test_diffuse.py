"""Diffuse-field coherence (Cook et al. 1955), coherent noise mixing (Habets & Gannot 2007), head diffuse gain."""

import numpy as np
import pytest

from hearnav.physics import diffuse, head


def test_coherence_of_ears_17_5_cm_apart():
    # Cook, Waterhouse, Berendt, Edelman & Thompson, JASA 27(6), 1955: sin(kd)/(kd). For d = 0.175 m and
    # c = 343 m/s, kd = 0.4007 / 0.8015 / 1.6029 at 125 / 250 / 500 Hz, so sin(kd)/kd = 0.9734 / 0.8963 / 0.6236
    # (evaluated by hand); the first zero is at kd = pi, f = c / (2 d) = 980 Hz.
    gamma = diffuse.diffuse_coherence(np.array([0.0, 125.0, 250.0, 500.0, 343 / 0.35]), 0.175, 343.0)
    np.testing.assert_allclose(gamma, [1.0, 0.9734, 0.8963, 0.6236, 0.0], atol=1e-3)


def test_coherence_stays_small_above_1_khz():
    # sin(x)/x has its largest side lobe at x = 4.493, value -0.217 (common practice); kd > pi above 980 Hz.
    f = np.linspace(1000.0, 8000.0, 2000)
    assert np.max(np.abs(diffuse.diffuse_coherence(f, 0.175))) == pytest.approx(0.217, abs=0.002)


@pytest.mark.parametrize("gamma", [-0.2, 0.0, 0.6, 0.97, 1.0])
def test_mixing_gives_the_prescribed_coherence(gamma):
    # Habets & Gannot, JASA 122(6), 2007: X1 = a N1 + b N2, X2 = a N1 - b N2 with a^2 + b^2 = 1 and
    # a^2 - b^2 = gamma. Measured correlation of 200,000 samples within 0.01 (its standard error is < 0.003).
    a, b = diffuse.coherence_mix(np.array([gamma]))
    assert a[0] ** 2 + b[0] ** 2 == pytest.approx(1.0)
    assert a[0] ** 2 - b[0] ** 2 == pytest.approx(gamma)
    n1, n2 = np.random.default_rng(0).standard_normal((2, 200_000))
    x1, x2 = a * n1 + b * n2, a * n1 - b * n2
    assert np.corrcoef(x1, x2)[0, 1] == pytest.approx(gamma, abs=0.01)
    assert np.var(x1) == pytest.approx(1.0, abs=0.02)


def test_head_diffuse_gain_limits():
    # Brown & Duda 1998: |H| -> 1 at 0 Hz and -> alpha(beta) at high frequency. With alpha = A + B cos(k beta),
    # A = 1.05, B = 0.95, k = 180/150 = 1.2, and arrivals on the sphere (density sin(beta)/2):
    # E[cos(k beta)] = (1 + cos(k pi)) / (2 (1 - k^2)) = -0.217026, E[cos^2(k beta)] = 1/2 + (1 + cos(2 k pi)) /
    # (4 (1 - 4 k^2)) = 0.431249, so E[alpha^2] = A^2 + 2 A B (-0.217026) + B^2 (0.431249) = 1.058735
    # (integrals evaluated by hand).
    g = diffuse.diffuse_head_gain(np.array([0.0, 1e8]))
    assert g[0] == pytest.approx(1.0, abs=1e-6)
    assert g[1] == pytest.approx(1.058735, abs=1e-4)


def test_head_diffuse_gain_is_the_mean_over_directions():
    # Monte-Carlo over directions drawn uniformly on the sphere (common practice): same mean power within 0.5 %.
    rng = np.random.default_rng(3)
    u = rng.standard_normal((20_000, 3))
    u /= np.linalg.norm(u, axis=1, keepdims=True)
    beta = head.ear_angles(u, 0.0)[0]  # left ear
    omega = 2 * np.pi * np.array([500.0, 2000.0, 6000.0])
    mc = np.mean(np.abs(head.head_shadow(omega, beta)) ** 2, axis=0)
    np.testing.assert_allclose(diffuse.diffuse_head_gain(omega), mc, rtol=5e-3)
