"""Audio of benchmark episodes: mixture, separator estimate and target reference (its early image) at both ears,
as two-channel WAV files.

Every track of an episode covers the same samples: each window in full, its cross-fade included, so the tracks are
sample-aligned, of equal length and free of splices. Each file is normalised to an integrated loudness of
``LOUDNESS_LUFS`` (ITU-R BS.1770-4, measured with pyloudnorm), then turned down if needed so that its true peak
(4x oversampled, BS.1770-4 Annex 2) stays at or below ``TRUE_PEAK_DBTP``; the EBU R 128 programme level and
true-peak ceiling. A file too short or too quiet to measure is set to that true peak. Start playback quietly:
simulated rooms can still be loud.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from hearnav import files
from hearnav.bench.results import OUTPUT

#: Integrated loudness of every written file, LUFS (EBU R 128 programme level).
LOUDNESS_LUFS = -23.0
#: Highest true peak of every written file, dBTP (EBU R 128).
TRUE_PEAK_DBTP = -1.0
#: Oversampling of the true-peak meter (ITU-R BS.1770-4 Annex 2: at least 4x at 48 kHz and below).
OVERSAMPLE = 4


def true_peak_db(x: np.ndarray) -> float:
    """True peak of a signal in dBTP (dB re full scale 1.0): the largest absolute sample after 4x oversampling.

    Parameters
    ----------
    x : (n,) or (n, channels) samples.
    """
    from scipy.signal import resample_poly

    x = np.asarray(x, np.float64)
    if not x.size or not np.any(x):
        return -np.inf
    up = resample_poly(x, OVERSAMPLE, 1, axis=0)
    return float(20 * np.log10(max(np.max(np.abs(up)), np.max(np.abs(x)))))


def normalise_loudness(x: np.ndarray, fs: int, lufs: float = LOUDNESS_LUFS,
                       ceiling_dbtp: float = TRUE_PEAK_DBTP) -> tuple[np.ndarray, float]:
    """Scale a signal to ``lufs`` integrated loudness with its true peak at most ``ceiling_dbtp``.

    Parameters
    ----------
    x : (n, channels) samples.
    fs : sampling rate, Hz.

    Returns
    -------
    The scaled (n, channels) float64 signal and the gain applied, dB (silence stays silence, gain 0).
    """
    import pyloudnorm

    x = np.asarray(x, np.float64)
    peak = true_peak_db(x)
    if not np.isfinite(peak):
        return x, 0.0
    try:
        loudness = pyloudnorm.Meter(fs).integrated_loudness(x)
    except ValueError:  # shorter than one 400 ms gating block
        loudness = -np.inf
    gain = lufs - loudness if np.isfinite(loudness) else ceiling_dbtp - peak
    gain = min(gain, ceiling_dbtp - peak)
    return x * 10 ** (gain / 20), float(gain)


def save_episode_audio(folder: Path, policy: str, index: int, windows: list[dict], fs: int) -> list[Path]:
    """Write one episode's audio (windows concatenated, each a dict of (2, n) tracks of equal length) and return
    the paths written."""
    import soundfile as sf

    safe = "".join(ch if ch.isalnum() or ch in "-_." else "_" for ch in policy)
    folder = Path(folder) / safe
    files.make_folder(folder, OUTPUT)
    out = []
    for name in ("mixture", "estimate", "reference"):
        data = np.concatenate([w[name] for w in windows], axis=-1).T
        samples = normalise_loudness(data, fs)[0].astype(np.float32)
        path = folder / f"episode{index:04d}-{name}.wav"
        files.atomic_write(path, lambda f: sf.write(f, samples, fs, subtype="FLOAT", format="WAV"), OUTPUT)
        out.append(path)
    return out
