"""Melodic instrument-like tones: additive synthesis of notes drawn from a scale, with occasional chords.

An instrument is a harmonic spectrum (roll-off, weight of the even harmonics, optional spectral hump),
an ADSR envelope, vibrato and, for struck or plucked sounds, upper harmonics that die away faster.
The seen and unseen pools use different instruments, scales, registers and tempi.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from hearnav.sounds.common import n_samples, pool_columns, take_rng
from hearnav.sounds.dsp import harmonic_sum

NAME = "music"


@dataclass(frozen=True)
class Instrument:
    """Timbre of one instrument."""

    name: str
    slope_db_per_octave: float  #: harmonic amplitude roll-off (negative)
    even_gain: float  #: extra gain of the even harmonics (small for clarinet-like tones)
    n_harmonics: int
    attack_s: float
    decay_s: float
    sustain: float  #: sustain level relative to the attack peak
    release_s: float
    damping: float  #: extra decay per harmonic number, in 1/s (0 for sustained instruments)
    vibrato: float  #: relative depth of the frequency vibrato
    vibrato_hz: float
    hump_hz: float = 0.0  #: centre of a spectral hump (0 for none)

    def harmonic_amplitudes(self, f0_hz: float) -> np.ndarray:
        """Amplitudes of harmonics 1..n_harmonics of a note at ``f0_hz``.

        Returns
        -------
        numpy.ndarray, shape (n_harmonics,)
        """
        k = np.arange(1, self.n_harmonics + 1)
        amps = 10.0 ** (self.slope_db_per_octave * np.log2(k) / 20.0)
        amps[1::2] *= self.even_gain
        if self.hump_hz > 0:
            amps *= 1.0 + 3.0 * np.exp(-0.5 * (np.log2(k * f0_hz / self.hump_hz) / 0.5) ** 2)
        return amps / amps.sum()


INSTRUMENTS: dict[str, Instrument] = {
    instrument.name: instrument
    for instrument in (
        # seen pool
        Instrument("flute", -12.0, 1.0, 6, 0.06, 0.1, 0.8, 0.08, 0.0, 0.004, 5.0),
        Instrument("clarinet", -5.0, 0.12, 12, 0.03, 0.08, 0.85, 0.06, 0.0, 0.0, 5.0),
        Instrument("plucked", -7.0, 1.0, 14, 0.004, 0.7, 0.0, 0.25, 1.5, 0.0, 5.0),
        Instrument("organ", -4.0, 1.0, 8, 0.01, 0.05, 1.0, 0.05, 0.0, 0.0, 5.0),
        # unseen pool
        Instrument("brass", -3.0, 1.0, 16, 0.08, 0.1, 0.85, 0.1, 0.0, 0.003, 5.5, hump_hz=1200.0),
        Instrument("bowed", -6.0, 1.0, 18, 0.12, 0.1, 0.9, 0.15, 0.0, 0.008, 6.0),
        Instrument("mallet", -14.0, 1.0, 5, 0.002, 0.4, 0.0, 0.3, 6.0, 0.0, 5.0),
        Instrument("reed", -5.0, 0.6, 14, 0.03, 0.1, 0.8, 0.08, 0.0, 0.005, 5.0, hump_hz=1600.0),
    )
}
#: Scales as semitone offsets from the root (textbook interval patterns).
SCALES: dict[str, tuple[int, ...]] = {
    "major": (0, 2, 4, 5, 7, 9, 11),
    "natural minor": (0, 2, 3, 5, 7, 8, 10),
    "major pentatonic": (0, 2, 4, 7, 9),
    "harmonic minor": (0, 2, 3, 5, 7, 8, 11),
    "dorian": (0, 2, 3, 5, 7, 9, 10),
    "whole tone": (0, 2, 4, 6, 8, 10),
}
POOL_CHOICES = {
    "seen": {"instruments": ("flute", "clarinet", "plucked", "organ"), "scales": ("major", "natural minor")},
    "unseen": {
        "instruments": ("brass", "bowed", "mallet", "reed"),
        "scales": ("major pentatonic", "harmonic minor", "dorian", "whole tone"),
    },
}
#: Root note (MIDI number) and tempo (beats per minute) ranges per pool.
POOL_RANGES = {
    "seen": {"root_midi": ((55.0, 64.0),), "tempo_bpm": ((96.0, 120.0),)},
    "unseen": {"root_midi": ((66.0, 72.0),), "tempo_bpm": ((72.0, 88.0), (132.0, 150.0))},
}
POOL_SIZES = {"seen": 8, "unseen": 4}
CHORD_PROBABILITY = 0.15
REST_PROBABILITY = 0.08
_STEPS = np.array([-3, -2, -1, 0, 1, 2, 3])
_STEP_P = np.array([0.05, 0.15, 0.3, 0.05, 0.3, 0.1, 0.05])
_BEATS = np.array([0.5, 1.0, 1.5, 2.0])
_BEAT_P = np.array([0.35, 0.4, 0.1, 0.15])


@dataclass(frozen=True)
class MusicVoice:
    """One player: an instrument, a scale, a root note and a tempo."""

    instrument: str
    scale: str
    root_midi: int
    tempo_bpm: float


@functools.cache
def voices(pool: str) -> tuple[MusicVoice, ...]:
    """The fixed voices of a pool (every instrument of the pool, each with a scale of the pool)."""
    _, (roots, tempi) = pool_columns(NAME, pool, POOL_SIZES, POOL_RANGES, ("root_midi", "tempo_bpm"))
    instruments, scales = POOL_CHOICES[pool]["instruments"], POOL_CHOICES[pool]["scales"]
    n = len(roots)
    return tuple(
        MusicVoice(instruments[i % len(instruments)], scales[(i + i // len(instruments)) % len(scales)],
                   int(round(roots[i])), float(tempi[i]))
        for i in range(n)
    )


def midi_to_hz(midi: np.ndarray | float) -> np.ndarray | float:
    """Equal-tempered frequency of a MIDI note number, A4 = MIDI 69 = 440 Hz (ISO 16)."""
    return 440.0 * 2.0 ** ((np.asarray(midi, dtype=float) - 69.0) / 12.0)


def adsr(n_held: int, n_total: int, fs: float, instrument: Instrument) -> np.ndarray:
    """Attack-decay-sustain-release envelope: held for ``n_held`` samples, then released.

    Returns
    -------
    numpy.ndarray, shape (n_total,)
    """
    t = np.arange(n_total) / fs
    a, d = instrument.attack_s, instrument.decay_s
    ads = np.interp(t, [0.0, a, a + d], [0.0, 1.0, instrument.sustain])
    if instrument.sustain == 0.0:
        ads = np.where(t < a, ads, np.exp(-(t - a) * 3.0 / d))
    held_s = n_held / fs
    at_release = float(np.interp(held_s, t, ads)) if n_total else 0.0
    release = at_release * np.clip(1.0 - (t - held_s) / instrument.release_s, 0.0, 1.0)
    return np.where(t < held_s, ads, np.minimum(ads, release))


def note_samples(
    midi: float, n_held: int, fs: float, instrument: Instrument, rng: np.random.Generator
) -> np.ndarray:
    """One note of an instrument, including its release tail.

    Returns
    -------
    numpy.ndarray, shape (n_held + round(release_s * fs),)
    """
    n_total = n_held + int(round(instrument.release_s * fs))
    f0 = float(midi_to_hz(midi))
    t = np.arange(n_total) / fs
    vib_rate = instrument.vibrato_hz * rng.uniform(0.9, 1.1)
    freq = f0 * (1.0 + instrument.vibrato * np.sin(2.0 * np.pi * vib_rate * t + rng.uniform(0, 2 * np.pi)))
    phase = f0 * t - f0 * instrument.vibrato / (2 * np.pi * vib_rate) * np.cos(2 * np.pi * vib_rate * t)
    decay = np.exp(-instrument.damping * t) if instrument.damping > 0 else None
    tone = harmonic_sum(phase + rng.uniform(0, 1), instrument.harmonic_amplitudes(f0), freq, fs, decay)
    return tone * adsr(n_held, n_total, fs, instrument)


Note = tuple[float, float, list[float], float]


def melody(rng: np.random.Generator, voice: MusicVoice, duration_s: float) -> list[Note]:
    """Notes of one take: ``(onset_s, length_s, midi_numbers, velocity)``; chords hold three notes.

    The melody is a random walk over the scale degrees within two octaves around the root.
    """
    scale = SCALES[voice.scale]
    size = len(scale)
    beat_s = 60.0 / voice.tempo_bpm
    degree, t, notes = 0, 0.0, []

    def to_midi(d: int) -> float:
        return float(voice.root_midi + 12 * (d // size) + scale[d % size])

    while t < duration_s:
        length = float(rng.choice(_BEATS, p=_BEAT_P)) * beat_s
        if rng.random() >= REST_PROBABILITY or not notes:  # a take never opens with a rest
            degree = int(np.clip(degree + rng.choice(_STEPS, p=_STEP_P), -size, 2 * size))
            chord = [degree, degree - 2, degree - 4] if rng.random() < CHORD_PROBABILITY else [degree]
            notes.append((t, length, [to_midi(d) for d in chord], float(rng.uniform(0.6, 1.0))))
        t += length
    return notes


def synthesise(voice: MusicVoice, rng: np.random.Generator, n: int, fs: int) -> np.ndarray:
    """One take of a player.

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    instrument = INSTRUMENTS[voice.instrument]
    tail = int(round(instrument.release_s * fs))
    out = np.zeros(n + tail + 1)
    for onset_s, length_s, midis, velocity in melody(rng, voice, n / fs):
        start = int(round(onset_s * fs))
        n_held = max(1, int(round(length_s * fs * 0.95)))
        for k, midi in enumerate(midis):
            note = note_samples(midi, n_held, fs, instrument, rng) * velocity * (1.0 if k == 0 else 0.6)
            stop = min(start + note.size, out.size)
            out[start:stop] += note[: stop - start]
    return out[:n]


def generate(voice: int, pool: str, take: int, duration_s: float, fs: int) -> np.ndarray:
    """Registry generator of the ``music`` category (see :func:`hearnav.sounds.generate`)."""
    return synthesise(voices(pool)[voice], take_rng(NAME, pool, voice, take), n_samples(duration_s, fs), fs)
