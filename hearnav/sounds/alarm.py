"""Alarms: beeping, two-tone, sweeping, warbling and chirping tones between 1 and 3.5 kHz.

The seen pool uses steady beeps, two-tone alternation and rising sweeps at 1-2.4 kHz with sine or
square-wave timbres; the unseen pool uses warbles, the temporal-three cadence and falling chirps at
2.5-3.5 kHz with piezo or buzzer timbres.
"""

from __future__ import annotations

import functools
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from hearnav.sounds.common import n_samples, pool_columns, take_rng
from hearnav.sounds.dsp import harmonic_sum, phase_cycles, smooth_gate

NAME = "alarm"
#: Rise and fall time of every tone burst (common practice: a few ms to avoid clicks).
RAMP_S = 0.004
#: Harmonic amplitudes (fundamental first) of each timbre.
TIMBRES: dict[str, tuple[float, ...]] = {
    "sine": (1.0,),
    "square": (1.0, 0.0, 1 / 3, 0.0, 1 / 5, 0.0, 1 / 7),
    "piezo": (1.0, 0.45, 0.25, 0.1),
    "buzzer": (1.0, 0.5, 1 / 3, 0.25, 0.2, 1 / 6),
}
#: On and off time ranges in seconds per pattern; the warble also has a modulation rate range in Hz.
TIMING: dict[str, dict[str, tuple[float, float]]] = {
    "beep": {"on_s": (0.1, 0.4), "off_s": (0.1, 0.5)},
    "two_tone": {"on_s": (0.25, 0.6), "off_s": (0.0, 0.05)},
    "sweep": {"on_s": (0.6, 1.5), "off_s": (0.05, 0.4)},
    "warble": {"on_s": (1.0, 3.0), "off_s": (0.3, 1.0), "rate_hz": (4.0, 10.0)},
    # ISO 8201 temporal-three evacuation signal: 0.5 s on, 0.5 s off, three times, then 1.5 s off
    # [from memory]; here on and off vary around 0.5 s.
    "triple": {"on_s": (0.4, 0.6), "off_s": (0.4, 0.6)},
    "chirp": {"on_s": (0.08, 0.2), "off_s": (0.05, 0.15)},
}
POOL_CHOICES = {
    "seen": {"patterns": ("beep", "two_tone", "sweep"), "timbres": ("sine", "square")},
    "unseen": {"patterns": ("warble", "triple", "chirp"), "timbres": ("piezo", "buzzer")},
}
POOL_RANGES = {
    "seen": {"f_low_hz": ((1000.0, 1500.0),), "f_high_hz": ((1700.0, 2400.0),)},
    "unseen": {"f_low_hz": ((2500.0, 2850.0),), "f_high_hz": ((3050.0, 3500.0),)},
}
POOL_SIZES = {"seen": 6, "unseen": 6}


@dataclass(frozen=True)
class AlarmVoice:
    """One alarm: a pattern, its two frequencies, its cadence and its timbre."""

    pattern: str
    timbre: str
    f_low_hz: float
    f_high_hz: float
    on_s: float
    off_s: float
    rate_hz: float = 0.0


@functools.cache
def voices(pool: str) -> tuple[AlarmVoice, ...]:
    """The fixed voices of a pool: each pattern of the pool with each timbre of the pool."""
    rng, (f_low, f_high) = pool_columns(NAME, pool, POOL_SIZES, POOL_RANGES, ("f_low_hz", "f_high_hz"))
    patterns, timbres = POOL_CHOICES[pool]["patterns"], POOL_CHOICES[pool]["timbres"]
    out = []
    for i in range(len(f_low)):
        pattern = patterns[i % len(patterns)]
        timing = {key: float(rng.uniform(*span)) for key, span in TIMING[pattern].items()}
        out.append(AlarmVoice(pattern, timbres[(i // len(patterns)) % len(timbres)], float(f_low[i]),
                              float(f_high[i]), **timing))
    return tuple(out)


Pattern = Callable[[np.ndarray, AlarmVoice], tuple[np.ndarray, np.ndarray]]


def _beep(t: np.ndarray, v: AlarmVoice) -> tuple[np.ndarray, np.ndarray]:
    return np.full(t.size, v.f_high_hz), np.mod(t, v.on_s + v.off_s) < v.on_s


def _two_tone(t: np.ndarray, v: AlarmVoice) -> tuple[np.ndarray, np.ndarray]:
    second = np.mod(t, 2.0 * v.on_s) >= v.on_s
    return np.where(second, v.f_low_hz, v.f_high_hz), np.mod(t, v.on_s) < v.on_s - v.off_s


def _sweep(t: np.ndarray, v: AlarmVoice) -> tuple[np.ndarray, np.ndarray]:
    u = np.mod(t, v.on_s + v.off_s) / v.on_s
    return v.f_low_hz + (v.f_high_hz - v.f_low_hz) * np.minimum(u, 1.0), u < 1.0


def _warble(t: np.ndarray, v: AlarmVoice) -> tuple[np.ndarray, np.ndarray]:
    mid, dev = 0.5 * (v.f_low_hz + v.f_high_hz), 0.5 * (v.f_high_hz - v.f_low_hz)
    return mid + dev * np.sin(2.0 * np.pi * v.rate_hz * t), np.mod(t, v.on_s + v.off_s) < v.on_s


def _triple(t: np.ndarray, v: AlarmVoice) -> tuple[np.ndarray, np.ndarray]:
    slot = v.on_s + v.off_s
    return np.full(t.size, v.f_low_hz), (np.mod(np.floor(t / slot), 4) < 3) & (np.mod(t, slot) < v.on_s)


def _chirp(t: np.ndarray, v: AlarmVoice) -> tuple[np.ndarray, np.ndarray]:
    u = np.mod(t, v.on_s + v.off_s) / v.on_s
    return v.f_high_hz - (v.f_high_hz - v.f_low_hz) * np.minimum(u, 1.0), u < 1.0


#: Pattern functions: times in seconds, shape (n,) -> (frequency in Hz, gate), both shape (n,).
PATTERNS: dict[str, Pattern] = {
    "beep": _beep, "two_tone": _two_tone, "sweep": _sweep,
    "warble": _warble, "triple": _triple, "chirp": _chirp,
}


def synthesise(voice: AlarmVoice, rng: np.random.Generator, n: int, fs: int) -> np.ndarray:
    """One take of an alarm: the cadence starts inside its first tone, tuning and timing vary by +-2-5 %.

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    tempo = rng.uniform(0.95, 1.05)
    t = np.arange(n) / fs * tempo + rng.uniform(0.0, 0.8) * voice.on_s
    freq, gate = PATTERNS[voice.pattern](t, voice)
    freq = freq * rng.uniform(0.98, 1.02)
    tone = harmonic_sum(phase_cycles(freq, fs, rng.uniform()), np.array(TIMBRES[voice.timbre]), freq, fs)
    return tone * smooth_gate(gate.astype(float), int(round(RAMP_S * fs)))


def generate(voice: int, pool: str, take: int, duration_s: float, fs: int) -> np.ndarray:
    """Registry generator of the ``alarm`` category (see :func:`hearnav.sounds.generate`)."""
    return synthesise(voices(pool)[voice], take_rng(NAME, pool, voice, take), n_samples(duration_s, fs), fs)
