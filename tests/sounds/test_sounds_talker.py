"""Talker sounds: pitch, syllable rhythm, pauses, consonants and voice differences."""

from __future__ import annotations

import functools

import numpy as np
import pytest
import scipy.signal
from sound_analysis import autocorr_f0, frame_rms

import hearnav.sounds as sounds
from hearnav.sounds import talker
from hearnav.sounds.formant import VOWELS, resonator_sos
from hearnav.sounds.glottal import rosenberg_flow

FS = 16000
VOICES = [(pool, v) for pool in sounds.POOLS for v in range(sounds.pool_size("talker", pool))]


@functools.cache
def utterance(pool: str, voice: int, seconds: float = 12.0) -> np.ndarray:
    return sounds.generate("talker", pool, voice, 0, seconds, FS).astype(np.float64)


def median_f0(x: np.ndarray) -> float:
    """Median autocorrelation F0 over the twelve loudest 40 ms frames (vowel nuclei)."""
    frame = int(0.04 * FS)
    loud = np.argsort(frame_rms(x, FS, 0.04))[-12:]
    return float(np.median([autocorr_f0(x[i * frame : (i + 1) * frame], FS) for i in loud]))


@pytest.mark.parametrize("pool, voice", VOICES)
def test_f0_lies_in_the_voice_range_and_the_adult_range(pool, voice):
    f0 = median_f0(utterance(pool, voice))
    low, high = talker.voices(pool)[voice].f0_range
    assert low * 0.97 <= f0 <= high * 1.03
    # adult speaking F0 spans about 85-255 Hz (common textbook range [from memory])
    assert 85.0 <= f0 <= 255.0


def test_every_voice_range_is_adult():
    # adult speaking F0 about 85-255 Hz (common textbook range [from memory])
    for pool in sounds.POOLS:
        for voice in talker.voices(pool):
            low, high = voice.f0_range
            assert 85.0 <= low and high <= 255.0


def test_voices_differ_measurably():
    seen = talker.voices("seen")
    f0 = np.array([median_f0(utterance("seen", v)) for v in range(len(seen))])
    # estimated pitch follows the voice parameter: same ordering of low and high voices
    low_group = np.array([v.f0_hz < 150 for v in seen])
    assert f0[low_group].max() * 1.3 < f0[~low_group].min()
    # shorter vocal tracts (higher formant scale) give a higher spectral centroid (source-filter theory,
    # formants scale inversely with tract length; Fant 1960 [from memory])
    centroid = []
    for v in range(len(seen)):
        f, p = scipy.signal.welch(utterance("seen", v), FS, nperseg=1024)
        centroid.append(np.sum(f * p) / np.sum(p))
    centroid = np.array(centroid)
    assert np.median(centroid[~low_group]) > np.median(centroid[low_group]) * 1.1


def third_octave_modulation_peak(x: np.ndarray) -> float:
    """Centre (Hz) of the 1/3-octave band, 0.5-16 Hz, holding most intensity-envelope modulation energy.

    The intensity envelope in 10 ms frames, normalised by its mean, as in the modulation spectra of
    speech (Houtgast & Steeneken, JASA 1985 [from memory]).
    """
    envelope = frame_rms(x, FS, 0.01) ** 2
    envelope = envelope / envelope.mean() - 1.0
    spectrum = np.abs(np.fft.rfft(envelope)) ** 2
    f = np.fft.rfftfreq(envelope.size, 0.01)
    centres = 2.0 ** (np.arange(-3, 13) / 3.0)
    power = [spectrum[(f >= c * 2 ** (-1 / 6)) & (f < c * 2 ** (1 / 6))].sum() for c in centres]
    return float(centres[int(np.argmax(power))])


@pytest.mark.parametrize("pool, voice", VOICES)
def test_envelope_modulation_peaks_at_the_syllable_rate(pool, voice):
    # speech envelope modulation spectra peak near 4 Hz, the syllable rate (Houtgast & Steeneken,
    # JASA 1985 [from memory]); accept 2-8 Hz, and within a third of an octave of the voice's rate
    peak = third_octave_modulation_peak(utterance(pool, voice))
    assert 2.0 <= peak <= 8.0
    rate = talker.voices(pool)[voice].syllable_rate_hz
    assert abs(np.log2(peak / rate)) <= 1 / 3 + 1e-9


@pytest.mark.parametrize("pool, voice", [("seen", 0), ("unseen", 3)])
def test_phrases_are_separated_by_pauses(pool, voice):
    x = utterance(pool, voice)
    rms = frame_rms(x, FS, 0.05)
    quiet = rms < rms.max() * 10 ** (-50 / 20)
    # runs of at least 0.2 s of (near) silence: the 0.25-0.6 s pauses between phrases
    runs = np.diff(np.flatnonzero(np.diff(np.concatenate([[0], quiet.astype(int), [0]]))))[::2]
    assert np.sum(runs >= 4) >= 3
    assert 0.05 < quiet.mean() < 0.4


def test_unvoiced_consonants_add_high_frequency_bursts():
    x = utterance("seen", 1)
    f, t, s = scipy.signal.spectrogram(x, FS, nperseg=256, noverlap=0)
    high = s[f >= 3500].sum(axis=0)
    low = s[f < 1000].sum(axis=0)
    active = (high + low) > (high + low).max() * 1e-4
    # frames dominated by energy above 3.5 kHz are fricatives or bursts (vowels have most energy < 1 kHz,
    # a textbook property of voiced speech)
    fricative = active & (high > low)
    assert 0.03 < fricative.sum() / active.sum() < 0.4


def test_rosenberg_pulse_shape():
    # Rosenberg (JASA 1971 [from memory]): rises as (1 - cos)/2 to 1 at the end of opening, falls as a
    # quarter cosine to 0 at the end of closing, then stays closed
    t = np.array([0.0, 0.2, 0.4, 0.48, 0.56, 0.8])
    g = rosenberg_flow(t, 0.4, 0.16)
    assert g == pytest.approx([0.0, 0.5, 1.0, np.cos(np.pi / 4), 0.0, 0.0], abs=1e-12)


def test_resonator_peaks_at_its_formant_with_unit_dc_gain():
    # Klatt (JASA 1980 [from memory]): A = 1 - B - C gives unity gain at 0 Hz; the peak lies at the
    # formant frequency (for bandwidths much smaller than the frequency)
    f1 = VOWELS["aa"][0]
    sos = resonator_sos(np.array([[f1]]), np.array([[80.0]]), FS)[0]
    w, h = scipy.signal.sosfreqz(sos, worN=8192, fs=FS)
    assert abs(h[0]) == pytest.approx(1.0, rel=1e-9)
    assert w[np.argmax(np.abs(h))] == pytest.approx(f1, abs=5.0)
