"""The user's own sounds: a folder of WAV or FLAC files, usable directly or as a category."""

from __future__ import annotations

import hashlib
from math import gcd
from pathlib import Path

import numpy as np
import scipy.signal
import soundfile

from hearnav.errors import SoundError
from hearnav.sounds.common import DEFAULT_FS, POOLS, category_key, n_samples
from hearnav.sounds.level import SILENCE_DBFS, active_rms, describe_level, normalise_level
from hearnav.sounds.registry import check_duration, check_fs, register_category

#: File name suffixes loaded from a folder (compared in lower case).
AUDIO_SUFFIXES = (".wav", ".flac")


def to_mono(data: np.ndarray) -> np.ndarray:
    """Mean over channels.

    Parameters
    ----------
    data : numpy.ndarray, shape (n, channels)

    Returns
    -------
    numpy.ndarray, shape (n,)
    """
    return data.mean(axis=1)


def resample(x: np.ndarray, fs_in: int, fs_out: int) -> np.ndarray:
    """Polyphase resampling from ``fs_in`` to ``fs_out`` Hz.

    Parameters
    ----------
    x : numpy.ndarray, shape (n,)

    Returns
    -------
    numpy.ndarray, shape (ceil(n * fs_out / fs_in),)
    """
    if fs_in == fs_out:
        return x
    g = gcd(fs_in, fs_out)
    return scipy.signal.resample_poly(x, fs_out // g, fs_in // g)


def load_sound(path: Path, fs: int, min_duration_s: float) -> np.ndarray:
    """Read one audio file as mono at ``fs`` Hz, scaled to the reference level: (n,) float32 samples.

    Raises :class:`~hearnav.errors.SoundError`, naming the file, when it cannot be read, is shorter than
    ``min_duration_s`` or is silent.
    """
    try:
        data, fs_file = soundfile.read(str(path), dtype="float64", always_2d=True)
    except (soundfile.SoundFileError, RuntimeError, ValueError) as err:
        reason = " ".join(str(err).split()).replace(f"Error opening {str(path)!r}: ", "")
        raise SoundError(
            f"cannot read sound file {str(path)!r}: expected a WAV or FLAC file, got an error ({reason}); "
            "re-export the file or remove it from the folder"
        ) from None
    duration = data.shape[0] / fs_file
    if duration < min_duration_s:
        raise SoundError(
            f"sound file {str(path)!r} is too short: expected at least {min_duration_s:g} s, got {duration:.3g} s; "
            "use a longer recording or lower min_duration_s"
        )
    x = resample(to_mono(data), int(fs_file), fs)
    level = active_rms(x, fs)
    if level < 10.0 ** (SILENCE_DBFS / 20.0) or not np.all(np.isfinite(x)):
        got = describe_level(level) if np.all(np.isfinite(x)) else "NaN or infinite samples"
        raise SoundError(
            f"sound file {str(path)!r} is silent: expected an active level above {SILENCE_DBFS:.0f} dBFS, "
            f"got {got}; remove the file or replace it with a recording"
        )
    return normalise_level(x, fs)


class WavFolder:
    """Every ``*.wav`` and ``*.flac`` file directly inside a folder, loaded as mono at ``fs`` Hz.

    Parameters
    ----------
    folder : str or Path
    fs : int
        Sample rate every file is resampled to.
    min_duration_s : float
        Shortest file accepted, in seconds.

    Raises
    ------
    SoundError
        If the folder is missing or holds no audio file, or a file is unreadable, too short or silent.
    """

    def __init__(self, folder: str | Path, fs: int = DEFAULT_FS, min_duration_s: float = 1.0):
        self.folder = Path(folder)
        self.fs = check_fs(fs)
        self.min_duration_s = float(min_duration_s)
        if not self.folder.is_dir():
            what = "is not a folder" if self.folder.exists() else "does not exist"
            raise SoundError(
                f"sound folder {str(self.folder)!r} {what}: expected a folder of .wav or .flac files; check the path"
            )
        paths = sorted(p for p in self.folder.iterdir() if p.is_file() and p.suffix.lower() in AUDIO_SUFFIXES)
        if not paths:
            raise SoundError(
                f"sound folder {str(self.folder)!r} holds no audio: expected at least one .wav or .flac file, "
                "got none; add recordings or pick another folder"
            )
        self._names = [p.name for p in paths]
        self._sounds = [load_sound(p, self.fs, self.min_duration_s) for p in paths]

    def __len__(self) -> int:
        return len(self._sounds)

    def digest(self) -> str:
        """SHA-256 (16 hex digits) of the file names and their loaded samples: what the folder's sounds are."""
        h = hashlib.sha256(str(self.fs).encode())
        for name, sound in zip(self._names, self._sounds):
            h.update(name.encode() + b"\0" + np.ascontiguousarray(sound).tobytes())
        return h.hexdigest()[:16]

    def names(self) -> list[str]:
        """File names, in the (sorted) order used by the indices."""
        return list(self._names)

    def duration_s(self, index: int) -> float:
        """Length in seconds of one file after resampling."""
        return self._sounds[self._check_index(index)].size / self.fs

    def _check_index(self, index: int) -> int:
        if isinstance(index, bool) or not isinstance(index, (int, np.integer)) or not 0 <= index < len(self):
            raise SoundError(
                f"sound index must be an integer in 0..{len(self) - 1} for folder {str(self.folder)!r}, "
                f"got {index!r}; the folder holds {len(self)} files"
            )
        return int(index)

    def get(self, index: int, duration_s: float, offset_s: float = 0.0) -> np.ndarray:
        """``duration_s`` seconds of file ``index`` from ``offset_s`` on, looping the file as needed.

        Returns
        -------
        numpy.ndarray, shape (round(duration_s * fs),), float32
            The file is at the reference level as a whole; an excerpt is not rescaled.
        """
        sound = self._sounds[self._check_index(index)]
        n = check_duration(duration_s, self.fs)
        if not np.isfinite(offset_s) or offset_s < 0:
            raise SoundError(f"offset must be a finite number of seconds >= 0, got {offset_s!r}; pass e.g. 0.0")
        start = n_samples(offset_s, self.fs) % sound.size
        return np.take(sound, np.arange(start, start + n), mode="wrap")

    def draw(self, rng: np.random.Generator, duration_s: float) -> tuple[np.ndarray, dict]:
        """An excerpt of a file picked uniformly, from an offset picked uniformly within the file.

        Returns
        -------
        signal : numpy.ndarray, shape (round(duration_s * fs),), float32
        info : dict
            ``{"name", "index", "offset_s"}``; ``get(index, duration_s, offset_s)`` reproduces the signal.
        """
        if not isinstance(rng, np.random.Generator):
            raise SoundError(
                f"rng must be a numpy.random.Generator, got {type(rng).__name__}; "
                "pass np.random.default_rng(np.random.SeedSequence(seed))"
            )
        index = int(rng.integers(len(self)))
        offset_s = float(rng.integers(self._sounds[index].size)) / self.fs
        return self.get(index, duration_s, offset_s), {"name": self._names[index], "index": index, "offset_s": offset_s}


def register_wav_folder(name: str, folder: str | Path, fs: int = DEFAULT_FS) -> None:
    """Register a folder of sounds as a category whose two pools both hold every file.

    Voice ``i`` is file ``i`` (sorted by name); take ``t`` starts at an offset derived from ``t``
    (take 0 at the start of the file). A request at another sample rate loads the folder again at that
    rate, once.
    """
    loaded = {check_fs(fs): WavFolder(folder, fs)}
    first = loaded[fs]

    def generator(voice: int, pool: str, take: int, duration_s: float, fs_req: int) -> np.ndarray:
        if fs_req not in loaded:
            loaded[fs_req] = WavFolder(folder, fs_req, first.min_duration_s)
        wavs = loaded[fs_req]
        size = int(round(wavs.duration_s(voice) * fs_req))
        seed = np.random.SeedSequence([category_key(name), voice, take])
        start = 0 if take == 0 else int(np.random.default_rng(seed).integers(size))
        return wavs.get(voice, duration_s, start / fs_req).astype(np.float64)

    generator.identity = f"wav-folder:{first.digest()}"  # the sounds themselves, for suite digests
    register_category(name, generator, {pool: len(first) for pool in POOLS})
