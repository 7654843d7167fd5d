"""Coloured broadband noise with a slow amplitude modulation.

The power spectrum of a voice is proportional to ``f ** -beta`` (flat below 20 Hz): ``beta`` 0 is
white, 1 pink (-3 dB per octave), 2 brown (-6 dB per octave). The seen pool uses the classic colours
0, 1 and 2, the unseen pool the in-between colours 0.5 and 1.5 and faster modulation.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from hearnav.sounds.common import check_pool, n_samples, spread, table_rng, take_rng
from hearnav.sounds.dsp import power_law_gain, random_curve, shaped_noise

NAME = "noise"


@dataclass(frozen=True)
class NoiseVoice:
    """Parameters of one noise."""

    beta: float  #: power spectrum exponent: PSD proportional to f ** -beta
    am_rate_hz: float  #: rate of the knots of the slow random gain curve
    am_depth: float  #: gain swings within 1 +- am_depth


POOL_BETAS = {"seen": (0.0, 1.0, 2.0), "unseen": (0.5, 1.5)}
POOL_RANGES = {
    "seen": {"am_rate_hz": ((0.1, 0.3),), "am_depth": ((0.15, 0.35),)},
    "unseen": {"am_rate_hz": ((0.4, 0.8),), "am_depth": ((0.4, 0.55),)},
}
VARIANTS_PER_COLOUR = 2


@functools.cache
def voices(pool: str) -> tuple[NoiseVoice, ...]:
    """The fixed voices of a pool: every colour of the pool, twice, with different modulation."""
    check_pool(pool)
    betas = np.repeat(POOL_BETAS[pool], VARIANTS_PER_COLOUR)
    rng = table_rng(NAME, pool)
    rates, depths = (spread(rng, betas.size, POOL_RANGES[pool][key]) for key in ("am_rate_hz", "am_depth"))
    return tuple(NoiseVoice(float(b), float(r), float(d)) for b, r, d in zip(betas, rates, depths))


def synthesise(voice: NoiseVoice, rng: np.random.Generator, n: int, fs: int) -> np.ndarray:
    """One take of a noise voice.

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    noise = shaped_noise(rng, n, fs, power_law_gain(voice.beta))
    return noise * (1.0 + voice.am_depth * random_curve(rng, n, fs, voice.am_rate_hz))


def generate(voice: int, pool: str, take: int, duration_s: float, fs: int) -> np.ndarray:
    """Registry generator of the ``noise`` category (see :func:`hearnav.sounds.generate`)."""
    return synthesise(voices(pool)[voice], take_rng(NAME, pool, voice, take), n_samples(duration_s, fs), fs)
