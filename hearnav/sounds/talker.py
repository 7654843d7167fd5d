"""Speech-like talker: a source-filter model with phrases, syllables, vowels and unvoiced consonants.

A take is a sequence of phrases separated by pauses. Each phrase holds syllables at the voice's
syllable rate; a syllable is an optional unvoiced consonant (fricative noise or a stop burst) and a
voiced vowel nucleus. The voiced source is a Rosenberg pulse train with declination, accents, jitter,
shimmer and breath noise; it drives four formant resonators whose targets move smoothly from vowel to
vowel, updated every 5 ms.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from hearnav.sounds.common import check_pool, n_samples, take_rng, voice_columns
from hearnav.sounds.dsp import cosine_interp, shaped_noise
from hearnav.sounds.formant import BANDWIDTHS_HZ, resonator_sos, time_varying_filter, vowel_table
from hearnav.sounds.glottal import excitation_rms, glottal_excitation

NAME = "talker"
#: Formant and pitch update interval in seconds (cascade synthesisers commonly use 5 ms).
FRAME_S = 0.005
#: Unvoiced consonants: centre frequency (Hz, before formant scaling), bandwidth (octaves),
#: duration range (s), and F1/F2 locus (Hz) the formants move towards.
CONSONANTS: dict[str, tuple[float, float, tuple[float, float], tuple[float, float]]] = {
    "s": (5500.0, 0.6, (0.06, 0.10), (350.0, 1800.0)),
    "sh": (3000.0, 0.5, (0.06, 0.10), (350.0, 2100.0)),
    "f": (4000.0, 1.5, (0.05, 0.09), (350.0, 1100.0)),
    "t": (4000.0, 1.0, (0.015, 0.03), (350.0, 1800.0)),
    "k": (2200.0, 0.8, (0.015, 0.03), (350.0, 1600.0)),
}
_CONSONANT_LEVEL = 0.35  # consonant RMS relative to the vowels' RMS (common practice: 8-10 dB weaker)


@dataclass(frozen=True)
class TalkerVoice:
    """Parameters of one talker."""

    f0_hz: float  #: median fundamental frequency
    f0_span: float  #: relative pitch range: F0 stays within f0_hz * (1 +- f0_span)
    formant_scale: float  #: vocal-tract scaling of all formants (1.0 = adult male tract)
    syllable_rate_hz: float  #: mean syllables per second
    breathiness: float  #: aspiration noise relative to the pulse excitation
    open_quotient: float  #: open share of the glottal period
    jitter: float  #: relative standard deviation of F0 per 5 ms frame
    shimmer: float  #: relative standard deviation of the pulse amplitude per period

    @property
    def f0_range(self) -> tuple[float, float]:
        """Lowest and highest F0 in Hz this voice can produce."""
        return self.f0_hz * (1.0 - self.f0_span), self.f0_hz * (1.0 + self.f0_span)


#: Parameter ranges per pool. Each voice ``i`` takes range ``i % len(ranges)`` of every parameter,
#: so low voices have long vocal tracts. The pools' pitch, tract, rate, breathiness and open-quotient
#: ranges do not overlap.
POOL_RANGES: dict[str, dict[str, tuple[tuple[float, float], ...]]] = {
    "seen": {
        "f0_hz": ((98.0, 118.0), (178.0, 200.0)),
        "f0_span": ((0.10, 0.13),),
        "formant_scale": ((0.96, 1.02), (1.13, 1.19)),
        "syllable_rate_hz": ((3.6, 4.6),),
        "breathiness": ((0.03, 0.10),),
        "open_quotient": ((0.50, 0.60),),
        "jitter": ((0.004, 0.010),),
        "shimmer": ((0.03, 0.06),),
    },
    "unseen": {
        "f0_hz": ((122.0, 140.0), (152.0, 172.0)),
        "f0_span": ((0.14, 0.18),),
        "formant_scale": ((1.04, 1.08), (1.09, 1.12)),
        "syllable_rate_hz": ((3.0, 3.4), (4.8, 5.4)),
        "breathiness": ((0.12, 0.20),),
        "open_quotient": ((0.62, 0.70),),
        "jitter": ((0.004, 0.010),),
        "shimmer": ((0.03, 0.06),),
    },
}
POOL_SIZES = {"seen": 12, "unseen": 6}


@functools.cache
def voices(pool: str) -> tuple[TalkerVoice, ...]:
    """The fixed voices of a pool (``"seen"``: 12, ``"unseen"``: 6)."""
    check_pool(pool)
    return tuple(TalkerVoice(**v) for v in voice_columns(NAME, pool, POOL_SIZES[pool], POOL_RANGES[pool]))


@dataclass(frozen=True)
class SyllablePlan:
    """Timing of the syllables of one take (times in seconds, all arrays of shape (s,))."""

    start: np.ndarray
    duration: np.ndarray
    consonant: np.ndarray  #: index into CONSONANTS, -1 for none
    consonant_s: np.ndarray
    vowel: np.ndarray  #: row of :func:`~hearnav.sounds.formant.vowel_table`
    pitch: np.ndarray  #: log-F0 target relative to the median, within +-1 (times f0_span)


def plan_syllables(rng: np.random.Generator, duration_s: float, rate_hz: float) -> SyllablePlan:
    """Phrases of 3-9 syllables separated by 0.25-0.6 s pauses, up to ``duration_s``.

    Each phrase's pitch declines from about +0.5 to -0.5 (declination), accented syllables rise and
    the last syllable falls.
    """
    names = list(CONSONANTS)
    n_vowels = len(vowel_table())
    rows = []
    t = min(rng.uniform(0.05, 0.25), 0.1 * duration_s)  # short lead-in, so that no take is silent
    while t < duration_s:
        count = int(rng.integers(3, 10))
        for j in range(count):
            dur = rng.uniform(0.75, 1.25) / rate_hz
            kind, c_dur = -1, 0.0
            if rng.random() < 0.6:
                kind = int(rng.integers(len(names)))
                c_dur = min(rng.uniform(*CONSONANTS[names[kind]][2]), 0.4 * dur)
            pitch = 0.5 - j / max(count - 1, 1)
            if rng.random() < 0.3:
                pitch += rng.uniform(0.3, 0.6)
            if j == count - 1:
                pitch -= 0.3
            rows.append((t, dur, kind, c_dur, int(rng.integers(n_vowels)), float(np.clip(pitch, -1.0, 1.0))))
            t += dur
        t += rng.uniform(0.25, 0.6)
    cols = list(zip(*rows))
    return SyllablePlan(
        start=np.array(cols[0]),
        duration=np.array(cols[1]),
        consonant=np.array(cols[2], dtype=np.int64),
        consonant_s=np.array(cols[3]),
        vowel=np.array(cols[4], dtype=np.int64),
        pitch=np.array(cols[5]),
    )


def _nucleus_bounds(plan: SyllablePlan) -> tuple[np.ndarray, np.ndarray]:
    """Start and end in seconds of each vowel nucleus (a short gap closes every syllable)."""
    return plan.start + plan.consonant_s, plan.start + 0.92 * plan.duration


def segment_envelope(starts: np.ndarray, stops: np.ndarray, n: int, fs: float, power: float) -> np.ndarray:
    """Sum of ``sin(pi u) ** power`` bumps over the segments ``[starts[i], stops[i])`` seconds.

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    env = np.zeros(n)
    for t0, t1 in zip(starts, stops):
        i0, i1 = int(round(t0 * fs)), min(int(round(t1 * fs)), n)
        if i1 - i0 < 2:
            continue
        u = (np.arange(i0, i1) - i0 + 0.5) / (i1 - i0)
        env[i0:i1] += np.sin(np.pi * u) ** power
    return env


def pitch_contour(
    plan: SyllablePlan, voice: TalkerVoice, rng: np.random.Generator, frame_t: np.ndarray
) -> np.ndarray:
    """F0 in Hz at the frame times: syllable targets cosine-joined, plus jitter, kept in range.

    Returns
    -------
    numpy.ndarray, shape (m,)
    """
    on, off = _nucleus_bounds(plan)
    log_rel = cosine_interp(0.5 * (on + off), plan.pitch * voice.f0_span, frame_t)
    log_rel = log_rel + voice.jitter * rng.standard_normal(frame_t.size)
    return voice.f0_hz * np.exp(np.clip(log_rel, np.log1p(-voice.f0_span), np.log1p(voice.f0_span)))


def formant_tracks(
    plan: SyllablePlan, voice: TalkerVoice, rng: np.random.Generator, frame_t: np.ndarray
) -> np.ndarray:
    """F1-F4 in Hz at the frame times, moving between vowel targets and consonant loci.

    Returns
    -------
    numpy.ndarray, shape (m, 4)
    """
    table = vowel_table()
    on, off = _nucleus_bounds(plan)
    vowel = table[plan.vowel] * np.exp(0.03 * rng.standard_normal((plan.vowel.size, 4)))
    knots_t = [on + 0.3 * (off - on), on + 0.7 * (off - on)]
    knots_v = [vowel, vowel]
    has_c = plan.consonant >= 0
    if has_c.any():
        loci = np.array([CONSONANTS[c][3] for c in CONSONANTS])[plan.consonant[has_c]]
        locus = vowel[has_c].copy()
        locus[:, :2] = loci
        knots_t.append(plan.start[has_c] + 0.5 * plan.consonant_s[has_c])
        knots_v.append(locus)
    t = np.concatenate(knots_t)
    order = np.argsort(t, kind="stable")
    return voice.formant_scale * cosine_interp(t[order], np.concatenate(knots_v)[order], frame_t)


def consonant_noise(
    plan: SyllablePlan, voice: TalkerVoice, rng: np.random.Generator, n: int, fs: float
) -> np.ndarray:
    """Fricative and stop-burst noise of all consonants of the plan (unit-RMS bursts).

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    out = np.zeros(n)
    for kind, (centre, width, _, _) in enumerate(CONSONANTS.values()):
        pick = plan.consonant == kind
        if not pick.any():
            continue
        fc = min(centre * voice.formant_scale, 0.4 * fs)

        def gain(f: np.ndarray, fc: float = fc, width: float = width) -> np.ndarray:
            return np.exp(-0.5 * (np.log2(np.maximum(f, 1.0) / fc) / width) ** 2)

        env = segment_envelope(plan.start[pick], plan.start[pick] + plan.consonant_s[pick], n, fs, 0.8)
        out += env * shaped_noise(rng, n, fs, gain)
    return out


def synthesise(voice: TalkerVoice, rng: np.random.Generator, n: int, fs: int) -> np.ndarray:
    """One take of a talker.

    Parameters
    ----------
    voice : TalkerVoice
    rng : numpy.random.Generator
    n : int
        Number of samples.
    fs : int

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    plan = plan_syllables(rng, n / fs, voice.syllable_rate_hz)
    frame = max(1, int(round(FRAME_S * fs)))
    frame_t = (np.arange(-(-n // frame)) + 0.5) * frame / fs
    f0 = np.interp(np.arange(n) / fs, frame_t, pitch_contour(plan, voice, rng, frame_t))
    flow, excitation = glottal_excitation(f0, fs, voice.open_quotient, voice.shimmer, rng)
    breath_gain = 3.0 * voice.breathiness * excitation_rms(voice.open_quotient)
    breath = rng.standard_normal(n) * (0.25 + flow) * breath_gain
    on, off = _nucleus_bounds(plan)
    envelope = segment_envelope(on, off, n, fs, 0.6)
    formants = formant_tracks(plan, voice, rng, frame_t)
    sos = resonator_sos(formants, np.broadcast_to(BANDWIDTHS_HZ, formants.shape), fs)
    voiced = time_varying_filter(envelope * (excitation + breath), sos, frame)
    consonants = consonant_noise(plan, voice, rng, n, fs)
    gain = _CONSONANT_LEVEL * _rms_where(voiced, envelope > 0.5) / _rms_where(consonants, consonants != 0)
    return voiced + gain * consonants


def _rms_where(x: np.ndarray, mask: np.ndarray) -> float:
    """RMS of ``x[mask]`` (1.0 when nothing is selected, so the caller's scale stays finite)."""
    return float(np.sqrt(np.mean(x[mask] ** 2))) if mask.any() and np.any(x[mask]) else 1.0


def generate(voice: int, pool: str, take: int, duration_s: float, fs: int) -> np.ndarray:
    """Registry generator of the ``talker`` category (see :func:`hearnav.sounds.generate`)."""
    return synthesise(voices(pool)[voice], take_rng(NAME, pool, voice, take), n_samples(duration_s, fs), fs)
