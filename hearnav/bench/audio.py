"""Audio of benchmark episodes: mixture, separator estimate and target reference (its early image) at both ears,
as two-channel WAV files.

Every file is normalised to a peak of -1 dBFS. Start playback quietly: simulated rooms can still be loud.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from hearnav import files
from hearnav.bench.results import OUTPUT

PEAK_DBFS = -1.0


def normalise_peak(x: np.ndarray, peak_dbfs: float = PEAK_DBFS) -> np.ndarray:
    """Scale so that the largest absolute sample is ``peak_dbfs`` (silence stays silence)."""
    peak = float(np.max(np.abs(x))) if x.size else 0.0
    return x if peak == 0 else x * (10 ** (peak_dbfs / 20) / peak)


def save_episode_audio(folder: Path, policy: str, index: int, windows: list[dict], fs: int) -> list[Path]:
    """Write one episode's audio (windows concatenated) and return the paths written."""
    import soundfile as sf

    safe = "".join(ch if ch.isalnum() or ch in "-_." else "_" for ch in policy)
    folder = Path(folder) / safe
    files.make_folder(folder, OUTPUT)
    parts = {
        "mixture": np.concatenate([w["mixture"] for w in windows], axis=1).T,
        "estimate": np.concatenate([w["estimate"] for w in windows], axis=-1).T,
        "reference": np.concatenate([w["reference"] for w in windows], axis=-1).T,
    }
    out = []
    for name, data in parts.items():
        path = folder / f"episode{index:04d}-{name}.wav"
        samples = normalise_peak(np.asarray(data, np.float64)).astype(np.float32)
        files.atomic_write(path, lambda f: sf.write(f, samples, fs, subtype="FLOAT", format="WAV"), OUTPUT)
        out.append(path)
    return out
