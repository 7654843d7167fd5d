"""Alarms and appliance hum: their frequencies and cadences."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.signal
from sound_analysis import frame_rms, psd

import hearnav.sounds as sounds
from hearnav.sounds import alarm, hum

ALARMS = [(p, v) for p in sounds.POOLS for v in range(sounds.pool_size("alarm", p))]
HUMS = [(p, v) for p in sounds.POOLS for v in range(sounds.pool_size("hum", p))]


@pytest.mark.parametrize("fs", [16000, 8000])
@pytest.mark.parametrize("pool, voice", ALARMS)
def test_alarm_dominant_frequency_is_between_1_and_4_khz(pool, voice, fs):
    # warning signals use tones of roughly 1-4 kHz, where hearing is most sensitive (ISO 7731 asks for
    # energy in 500-2500 Hz and hearing thresholds are lowest near 3-4 kHz, ISO 226 [from memory])
    x = sounds.generate("alarm", pool, voice, 5, 4.0, fs)
    f, p = psd(x, fs, 10.0)
    assert 1000.0 <= f[np.argmax(p)] <= 4000.0
    v = alarm.voices(pool)[voice]
    assert v.f_low_hz * 0.97 <= f[np.argmax(p)] <= v.f_high_hz * 1.03


def on_fraction(x: np.ndarray, fs: int) -> float:
    """Share of 5 ms frames louder than -30 dB below the loudest frame."""
    rms = frame_rms(x, fs, 0.005)
    return float(np.mean(rms > rms.max() * 10 ** (-30 / 20)))


@pytest.mark.parametrize("pool, voice", ALARMS)
def test_alarm_cadence_has_the_voice_duty_cycle(pool, voice):
    v = alarm.voices(pool)[voice]
    expected = {
        "beep": v.on_s / (v.on_s + v.off_s),
        "two_tone": 1.0 - v.off_s / v.on_s,
        "sweep": v.on_s / (v.on_s + v.off_s),
        "chirp": v.on_s / (v.on_s + v.off_s),
        "warble": v.on_s / (v.on_s + v.off_s),
        # ISO 8201 temporal-three: three bursts in four slots [from memory]
        "triple": 0.75 * v.on_s / (v.on_s + v.off_s),
    }[v.pattern]
    # a 20 s take covers many periods, so the duty cycle is close to its nominal value
    assert on_fraction(sounds.generate("alarm", pool, voice, 2, 20.0), 16000) == pytest.approx(expected, abs=0.08)


def test_two_tone_alarm_alternates_between_its_frequencies():
    pool, voice = next((p, i) for p in sounds.POOLS for i, v in enumerate(alarm.voices(p)) if v.pattern == "two_tone")
    v = alarm.voices(pool)[voice]
    x = sounds.generate("alarm", pool, voice, 0, 6.0)
    f, p = psd(x, 16000, 5.0)
    peaks, _ = scipy.signal.find_peaks(p)
    low, high = np.sort(f[peaks[np.argsort(p[peaks])[-2:]]])
    # the two strongest spectral peaks are the two tones (within the +-2 % detuning of a take)
    assert low == pytest.approx(v.f_low_hz, rel=0.03)
    assert high == pytest.approx(v.f_high_hz, rel=0.03)


def peak_prominence_db(f: np.ndarray, p: np.ndarray, target: float) -> float:
    """Level of the spectral peak within 1 Hz of ``target`` above the median level 5-25 Hz away."""
    peak = p[np.abs(f - target) <= 1.0].max()
    distance = np.abs(f - target)
    floor = np.median(p[(distance >= 5.0) & (distance <= 25.0)])
    return float(10 * np.log10(peak / floor))


@pytest.mark.parametrize("pool, voice", HUMS)
def test_hum_has_peaks_at_mains_harmonics(pool, voice):
    # nominal mains frequencies are 50 Hz and 60 Hz (IEC 60038); hum lies at their multiples
    v = hum.voices(pool)[voice]
    assert v.mains_hz in (50.0, 60.0)
    fs = 16000
    f, p = psd(sounds.generate("hum", pool, voice, 3, 8.0, fs), fs, 0.5)
    for k in range(1, 7):
        assert peak_prominence_db(f, p, k * v.mains_hz) > 15.0, k
    # the strongest component below 1 kHz is a mains harmonic
    band = (f > 20) & (f < 1000)
    strongest = f[band][np.argmax(p[band])]
    assert abs(strongest / v.mains_hz - round(strongest / v.mains_hz)) * v.mains_hz <= 1.0


def test_hum_pools_cover_both_mains_frequencies():
    for pool in sounds.POOLS:
        assert {v.mains_hz for v in hum.voices(pool)} == {50.0, 60.0}


def test_seen_hum_is_transformer_like_and_unseen_rectifier_like():
    # transformer hum is strongest at twice the mains frequency (magnetostriction, textbook fact)
    for v in hum.voices("seen"):
        assert np.argmax(v.harmonic_amplitudes()) == 1
    for v in hum.voices("unseen"):
        amps = v.harmonic_amplitudes()
        assert amps[0::2][:5].sum() > amps[1::2][:5].sum()


@pytest.mark.parametrize("pool", sounds.POOLS)
def test_hum_level_changes_slowly(pool):
    # "slow modulation": 0.5 s levels vary, but by less than 6 dB from one half second to the next
    x = sounds.generate("hum", pool, 1, 0, 20.0)
    levels = 20 * np.log10(frame_rms(x, 16000, 0.5))
    assert levels.max() - levels.min() > 0.3
    assert np.max(np.abs(np.diff(levels))) < 6.0
