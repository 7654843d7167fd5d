"""Synthetic anechoic binaural scenes for the separation tests: far-field sources through the head model."""

from __future__ import annotations

import numpy as np
import scipy.fft as sfft

from hearnav.separation import steering_vector

FS = 16000


def voiced(rng: np.random.Generator, n: int, fs: int = FS) -> np.ndarray:
    """(n,) talker-like signal: a harmonic source (f0 100-220 Hz with vibrato) through three random formants,
    with a syllable-rate (3-5 Hz) on/off envelope."""
    t = np.arange(n) / fs
    f0 = rng.uniform(100, 220) * (1 + 0.05 * np.sin(2 * np.pi * rng.uniform(0.5, 2) * t))
    phase = 2 * np.pi * np.cumsum(f0) / fs
    formants = rng.uniform([300, 900, 2200], [800, 2000, 3200])
    x = np.zeros(n)
    for k in range(1, 40):
        fk = k * f0
        amp = sum(np.exp(-0.5 * ((fk - fc) / 120) ** 2) for fc in formants) / np.sqrt(k) + 0.02
        x += np.where(fk < fs / 2 - 500, amp, 0.0) * np.sin(k * phase + rng.uniform(0, 2 * np.pi))
    env = np.maximum(np.sin(2 * np.pi * rng.uniform(3, 5) * t + rng.uniform(0, 2 * np.pi)), 0) ** 2
    return x * env


def far_field_image(x: np.ndarray, azimuth: float, fs: int = FS) -> np.ndarray:
    """(2, n) ear signals of a far-field source x (n,) at an azimuth: the steering vector applied in the
    frequency domain (circular; callers cut away the ends)."""
    d = steering_vector(azimuth, sfft.rfftfreq(x.size, 1 / fs))
    return sfft.irfft(sfft.rfft(x)[None, :] * d.T, x.size, axis=-1)


def two_sources(seed: int, az_target: float, az_interferer: float, n: int = 8000, pad: int = 2000,
                kind: str = "voiced") -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Mixture (2, n), target image (2, n) and head-centre target reference (n,) of two equal-level sources."""
    rng = np.random.default_rng(seed)
    make = voiced if kind == "voiced" else (lambda r, m: r.standard_normal(m))
    s, v = make(rng, n + 2 * pad), make(rng, n + 2 * pad)
    v *= np.std(s) / np.std(v)
    target, interferer = far_field_image(s, az_target), far_field_image(v, az_interferer)
    cut = slice(pad, pad + n)
    return (target + interferer)[:, cut], target[:, cut], s[cut]
