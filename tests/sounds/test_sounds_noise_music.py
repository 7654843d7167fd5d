"""Coloured noise slopes and the pitch, scale and envelope of music notes."""

from __future__ import annotations

import numpy as np
import pytest
from sound_analysis import autocorr_f0, frame_rms, psd

import hearnav.sounds as sounds
from hearnav.sounds import music, noise
from hearnav.sounds.common import take_rng

NOISES = [(p, v) for p in sounds.POOLS for v in range(sounds.pool_size("noise", p))]


def slope_db_per_octave(x: np.ndarray, fs: int, f_lo: float = 100.0, f_hi: float = 6000.0) -> float:
    """Least-squares slope of the PSD in dB against log2(frequency), between f_lo and f_hi."""
    f, p = psd(x, fs, 8.0)
    band = (f >= f_lo) & (f <= f_hi)
    return float(np.polyfit(np.log2(f[band]), 10 * np.log10(p[band]), 1)[0])


@pytest.mark.parametrize("pool, voice", NOISES)
def test_noise_psd_slope_matches_its_colour(pool, voice):
    # PSD proportional to f**-beta falls 10 log10(2) * beta = 3.01 * beta dB per octave:
    # white 0, pink -3, brown -6 dB/octave (textbook facts)
    beta = noise.voices(pool)[voice].beta
    slope = slope_db_per_octave(sounds.generate("noise", pool, voice, 4, 8.0), 16000)
    assert slope == pytest.approx(-10 * np.log10(2) * beta, abs=0.5)


def test_seen_pool_holds_white_pink_and_brown():
    assert {v.beta for v in noise.voices("seen")} == {0.0, 1.0, 2.0}


def test_white_noise_is_flat_across_octaves():
    # white noise has equal power per hertz (textbook definition): octave-band densities agree within 1 dB
    voice = next(i for i, v in enumerate(noise.voices("seen")) if v.beta == 0.0)
    f, p = psd(sounds.generate("noise", "seen", voice, 0, 8.0), 16000, 8.0)
    centres = (250, 500, 1000, 2000, 4000)
    levels = [10 * np.log10(p[(f >= c / np.sqrt(2)) & (f < c * np.sqrt(2))].mean()) for c in centres]
    assert np.ptp(levels) < 1.0


@pytest.mark.parametrize("pool", sounds.POOLS)
def test_noise_amplitude_modulation_is_slow(pool):
    x = sounds.generate("noise", pool, 1, 0, 20.0)
    levels = 20 * np.log10(frame_rms(x, 16000, 0.25))
    assert levels.max() - levels.min() > 1.5  # modulated ...
    assert np.max(np.abs(np.diff(levels))) < 3.0  # ... but slowly


def test_equal_tempered_tuning():
    # A4 = MIDI 69 = 440 Hz (ISO 16); an octave doubles, a semitone is 2**(1/12)
    assert music.midi_to_hz(69) == pytest.approx(440.0)
    assert music.midi_to_hz(81) == pytest.approx(880.0)
    assert music.midi_to_hz(60) == pytest.approx(261.6256, abs=1e-3)


@pytest.mark.parametrize("instrument", list(music.INSTRUMENTS))
def test_note_sounds_at_its_pitch(instrument):
    rng = take_rng("music", "seen", 0, 0)
    note = music.note_samples(69.0, 8000, 16000, music.INSTRUMENTS[instrument], rng)
    # pitch of the harmonic tone: A4 = 440 Hz (ISO 16), autocorrelation estimate within 1 %
    # (vibrato of at most 0.8 % averages out over the window)
    assert autocorr_f0(note[1000:5000], 16000, 300.0, 600.0) == pytest.approx(440.0, rel=0.01)


@pytest.mark.parametrize("pool", sounds.POOLS)
def test_melody_notes_belong_to_the_voice_scale(pool):
    for index, voice in enumerate(music.voices(pool)):
        notes = music.melody(take_rng("music", pool, index, 3), voice, 30.0)
        scale = set(music.SCALES[voice.scale])
        classes = {int(m - voice.root_midi) % 12 for _, _, chord, _ in notes for m in chord}
        assert classes <= scale
        chords = sum(len(chord) > 1 for _, _, chord, _ in notes)
        assert 0 < chords < len(notes) / 2  # occasional chords


def test_adsr_envelope_shape():
    # attack to 1, decay to the sustain level, hold, then linear release to 0 (ADSR, common practice)
    inst = music.INSTRUMENTS["organ"]
    fs = 1000
    env = music.adsr(500, 500 + int(inst.release_s * fs), fs, inst)
    assert env[0] == 0.0
    assert env[int(inst.attack_s * fs)] == pytest.approx(1.0)
    assert env[300] == pytest.approx(inst.sustain)
    assert env[-1] == pytest.approx(0.0, abs=0.05)
    assert np.all(np.diff(env[500:]) <= 1e-12)


def test_plucked_notes_decay_and_lose_upper_harmonics():
    inst = music.INSTRUMENTS["plucked"]
    note = music.note_samples(57.0, 16000, 16000, inst, take_rng("music", "seen", 2, 0))
    rms = frame_rms(note, 16000, 0.1)
    assert rms[8] < rms[0] * 0.3
    f_early, p_early = psd(note[:4000], 16000, 8.0)
    f_late, p_late = psd(note[8000:12000], 16000, 8.0)
    def centroid(f, p):
        return np.sum(f * p) / np.sum(p)
    assert centroid(f_late, p_late) < centroid(f_early, p_early)
