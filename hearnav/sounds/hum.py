"""Appliance hum: mains harmonics, a fan's blade-pass tone and broadband motor noise, slowly modulated.

Every pool holds 50 Hz and 60 Hz appliances (the two nominal mains frequencies of IEC 60038).
Seen appliances are transformer-like (the even harmonics, led by twice the mains frequency, dominate:
magnetostriction, a textbook fact) with slow fans and low-pitched motor noise; unseen appliances are
rectifier-like (odd harmonics dominate) with faster fans, higher motor noise and faster modulation.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from hearnav.sounds.common import check_pool, n_samples, take_rng, voice_columns
from hearnav.sounds.dsp import harmonic_sum, phase_cycles, random_curve, shaped_noise

NAME = "hum"
MAINS_HZ = (50.0, 60.0)
N_HARMONICS = 20
#: Standard deviation in Hz of the grid frequency of one take (common practice: grids hold
#: their nominal frequency within a few hundredths of a hertz most of the time).
MAINS_DEVIATION_HZ = 0.02


@dataclass(frozen=True)
class HumVoice:
    """One appliance."""

    mains_hz: float
    slope_db: float  #: harmonic roll-off, dB per harmonic number
    even_gain: float  #: gain of the even harmonics relative to the odd ones
    blade_hz: float  #: fan blade-pass frequency
    blade_level: float  #: blade tone RMS relative to the mains hum RMS
    motor_hz: float  #: centre of the motor noise band
    motor_level: float  #: motor noise RMS relative to the mains hum RMS
    mod_rate_hz: float
    mod_depth: float

    def harmonic_amplitudes(self) -> np.ndarray:
        """Amplitudes of mains harmonics 1..N_HARMONICS (largest is 1).

        Returns
        -------
        numpy.ndarray, shape (N_HARMONICS,)
        """
        k = np.arange(1, N_HARMONICS + 1)
        amps = 10.0 ** (-self.slope_db * (k - 1) / 20.0)
        amps[1::2] *= self.even_gain
        return amps / amps.max()


POOL_RANGES = {
    "seen": {
        "slope_db": ((2.0, 3.5),), "even_gain": ((1.5, 3.0),), "blade_hz": ((80.0, 140.0),),
        "blade_level": ((0.1, 0.25),), "motor_hz": ((250.0, 600.0),), "motor_level": ((0.2, 0.4),),
        "mod_rate_hz": ((0.05, 0.2),), "mod_depth": ((0.1, 0.3),),
    },
    "unseen": {
        "slope_db": ((1.0, 1.8),), "even_gain": ((0.2, 0.5),), "blade_hz": ((150.0, 260.0),),
        "blade_level": ((0.25, 0.4),), "motor_hz": ((800.0, 2000.0),), "motor_level": ((0.45, 0.7),),
        "mod_rate_hz": ((0.25, 0.6),), "mod_depth": ((0.3, 0.5),),
    },
}
POOL_SIZES = {"seen": 6, "unseen": 4}


@functools.cache
def voices(pool: str) -> tuple[HumVoice, ...]:
    """The fixed voices of a pool, alternating 50 Hz and 60 Hz mains."""
    check_pool(pool)
    table = voice_columns(NAME, pool, POOL_SIZES[pool], POOL_RANGES[pool])
    return tuple(HumVoice(MAINS_HZ[i % 2], **v) for i, v in enumerate(table))


def _unit_rms(x: np.ndarray) -> np.ndarray:
    rms = np.sqrt(np.mean(x**2))
    return x / rms if rms > 0 else x


def synthesise(voice: HumVoice, rng: np.random.Generator, n: int, fs: int) -> np.ndarray:
    """One take of an appliance.

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    mains = voice.mains_hz + MAINS_DEVIATION_HZ * rng.standard_normal()
    amps = voice.harmonic_amplitudes()
    hum = harmonic_sum(np.arange(n) * (mains / fs), amps, mains, fs,
                       offsets=rng.uniform(0.0, 2.0 * np.pi, amps.size))
    blade_freq = voice.blade_hz * (1.0 + 0.005 * random_curve(rng, n, fs, 0.3))
    blade = harmonic_sum(phase_cycles(blade_freq, fs, rng.uniform()), np.array([1.0, 0.4]), blade_freq, fs)

    def motor_gain(f: np.ndarray) -> np.ndarray:
        band = np.exp(-0.5 * (np.log2(np.maximum(f, 1.0) / voice.motor_hz) / 0.7) ** 2)
        return band + 0.15 * (np.maximum(f, 20.0) / voice.motor_hz) ** -0.5

    motor = shaped_noise(rng, n, fs, motor_gain)
    swell = 1.0 + voice.mod_depth * random_curve(rng, n, fs, voice.mod_rate_hz)
    hum = _unit_rms(hum) * (1.0 + 0.2 * voice.mod_depth * random_curve(rng, n, fs, voice.mod_rate_hz))
    return hum + swell * (voice.blade_level * _unit_rms(blade) + voice.motor_level * motor)


def generate(voice: int, pool: str, take: int, duration_s: float, fs: int) -> np.ndarray:
    """Registry generator of the ``hum`` category (see :func:`hearnav.sounds.generate`)."""
    return synthesise(voices(pool)[voice], take_rng(NAME, pool, voice, take), n_samples(duration_s, fs), fs)
