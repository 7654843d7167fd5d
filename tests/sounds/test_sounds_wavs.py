"""The user's sound folders: loading, resampling, level, looping and every broken input."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest
import soundfile

import hearnav.sounds as sounds
from hearnav.errors import SoundError


def tone(freq: float, seconds: float, fs: int, amplitude: float = 0.3) -> np.ndarray:
    return amplitude * np.sin(2 * np.pi * freq * np.arange(int(round(seconds * fs))) / fs)


@pytest.fixture
def folder(tmp_path: Path) -> Path:
    """A 44.1 kHz stereo WAV (2 s, tone only on the left) and an 8 kHz mono FLAC (1.5 s)."""
    left = tone(440.0, 2.0, 44100)
    soundfile.write(tmp_path / "a_stereo.wav", np.column_stack([left, np.zeros_like(left)]), 44100)
    soundfile.write(tmp_path / "b_mono.flac", tone(300.0, 1.5, 8000, 0.05), 8000)
    (tmp_path / "notes.txt").write_text("not audio")
    return tmp_path


def test_files_are_resampled_mono_and_levelled(folder):
    wavs = sounds.WavFolder(folder)
    assert len(wavs) == 2
    assert wavs.names() == ["a_stereo.wav", "b_mono.flac"]
    # resample_poly output length is ceil(n * up / down): 88200 * 160 / 441 = 32000, 12000 * 2 = 24000
    assert wavs.duration_s(0) == pytest.approx(2.0)
    assert wavs.duration_s(1) == pytest.approx(1.5)
    whole = wavs.get(0, 2.0)
    assert whole.shape == (32000,) and whole.dtype == np.float32
    assert sounds.active_rms(wavs.get(1, 1.5)) == pytest.approx(sounds.REFERENCE_RMS, rel=0.01)
    assert sounds.active_rms(whole) == pytest.approx(sounds.REFERENCE_RMS, rel=0.01)
    # mono = mean of channels: the left tone survives, at 440 Hz
    spectrum = np.abs(np.fft.rfft(whole[4000:20000]))
    assert np.fft.rfftfreq(16000, 1 / 16000)[np.argmax(spectrum)] == pytest.approx(440.0, abs=1.0)


def test_other_target_rate(folder):
    wavs = sounds.WavFolder(folder, fs=22050)
    assert wavs.get(1, 1.5).shape == (33075,)


def test_get_loops_short_files_and_honours_the_offset(folder):
    wavs = sounds.WavFolder(folder)
    x = wavs.get(1, 4.0)
    assert x.shape == (64000,)
    assert np.array_equal(x[24000:48000], x[:24000])
    assert np.array_equal(wavs.get(1, 0.5, offset_s=1.0), x[16000:24000])
    assert np.array_equal(wavs.get(1, 1.0, offset_s=1.25)[:4000], x[20000:24000])
    assert np.array_equal(wavs.get(1, 1.0, offset_s=1.25)[4000:], x[:12000])


def test_draw_is_reproducible(folder):
    wavs = sounds.WavFolder(folder)
    x, info = wavs.draw(np.random.default_rng(np.random.SeedSequence(5)), 1.0)
    y, info2 = wavs.draw(np.random.default_rng(np.random.SeedSequence(5)), 1.0)
    assert info == info2 and np.array_equal(x, y)
    assert info["name"] == wavs.names()[info["index"]]
    assert np.array_equal(x, wavs.get(info["index"], 1.0, info["offset_s"]))


def test_bad_index_duration_and_offset(folder):
    wavs = sounds.WavFolder(folder)
    with pytest.raises(SoundError, match=r"sound index must be an integer in 0\.\.1 .* got 2"):
        wavs.get(2, 1.0)
    with pytest.raises(SoundError, match=r"duration must be a finite number of seconds > 0, got 0"):
        wavs.get(0, 0)
    with pytest.raises(SoundError, match=r"offset must be a finite number of seconds >= 0, got -1"):
        wavs.get(0, 1.0, offset_s=-1)


def test_registered_folder_is_a_category(folder, scratch_names):
    scratch_names.append("my-sounds")
    sounds.register_wav_folder("my-sounds", folder)
    assert "my-sounds" in sounds.categories()
    assert sounds.pool_size("my-sounds", "seen") == sounds.pool_size("my-sounds", "unseen") == 2
    x = sounds.generate("my-sounds", "unseen", 1, 0, 3.0)
    assert x.shape == (48000,)
    assert sounds.active_rms(x) == pytest.approx(sounds.REFERENCE_RMS, rel=0.01)
    assert np.array_equal(x, sounds.generate("my-sounds", "seen", 1, 0, 3.0))  # both pools = the folder
    assert not np.array_equal(x, sounds.generate("my-sounds", "seen", 1, 1, 3.0))
    assert sounds.generate("my-sounds", "seen", 0, 2, 1.0, fs=8000).shape == (8000,)


def _one_line(err: pytest.ExceptionInfo) -> str:
    message = str(err.value)
    assert "\n" not in message
    return message


def _write_silent(folder):
    soundfile.write(folder / "quiet.wav", np.zeros(16000), 16000)


def _write_garbage(folder):
    soundfile.write(folder / "good.wav", tone(440.0, 1.0, 16000), 16000)
    (folder / "garbage.wav").write_bytes(bytes(range(256)) * 8)


@pytest.mark.parametrize("write, message", [
    (_write_silent, r"sound file '.*quiet\.wav' is silent: expected an active level above -90 dBFS, got all samples "
                    r"zero; remove the file"),
    (_write_garbage, r"cannot read sound file '.*garbage\.wav': expected a WAV or FLAC file, got an error \(.*\); "
                     r"re-export the file"),
])
def test_bad_file_is_one_line(tmp_path, write, message):
    write(tmp_path)
    with pytest.raises(SoundError, match=message) as err:
        sounds.WavFolder(tmp_path)
    _one_line(err)


def test_too_short_file(tmp_path):
    soundfile.write(tmp_path / "short.wav", tone(440.0, 0.5, 16000), 16000)
    with pytest.raises(SoundError, match=r"sound file '.*short\.wav' is too short: expected at least 1 s, got 0\.5 s; "
                       r"use a longer recording or lower min_duration_s") as err:
        sounds.WavFolder(tmp_path)
    _one_line(err)
    assert len(sounds.WavFolder(tmp_path, min_duration_s=0.25)) == 1


def test_empty_folder(tmp_path):
    (tmp_path / "readme.md").write_text("no audio here")
    with pytest.raises(SoundError, match=rf"sound folder '{re.escape(str(tmp_path))}' holds no audio: expected at "
                       r"least one \.wav or \.flac file, got none"):
        sounds.WavFolder(tmp_path)


def test_missing_folder(tmp_path):
    missing = tmp_path / "nowhere"
    with pytest.raises(SoundError, match=rf"sound folder '{re.escape(str(missing))}' does not exist: expected a "
                       r"folder of \.wav or \.flac files; check the path"):
        sounds.WavFolder(missing)
    with pytest.raises(SoundError, match=r"does not exist"):
        sounds.register_wav_folder("never-registered", missing)
    assert "never-registered" not in sounds.categories()


def test_a_file_instead_of_a_folder(tmp_path):
    path = tmp_path / "x.wav"
    soundfile.write(path, tone(440.0, 1.0, 16000), 16000)
    with pytest.raises(SoundError, match=r"sound folder '.*x\.wav' is not a folder"):
        sounds.WavFolder(path)
