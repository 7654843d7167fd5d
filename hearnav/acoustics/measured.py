"""The measured reverberation time a built scene's cache records, read without loading its responses."""

from __future__ import annotations

import numpy as np

from hearnav.acoustics import cache
from hearnav.acoustics.settings import AcousticSettings
from hearnav.scene.model import Scene


def cached_rt60(scene: Scene, settings: AcousticSettings) -> np.ndarray | None:
    """Per-band Schroeder T30 recorded when the scene's responses were built (NaN: not measurable there).

    Returns
    -------
    (n_bands,) seconds, or None when the scene is not built under ``settings`` (no file, a file of another
    key or model, or one that cannot be read: ``scenes build`` rebuilds it).
    """
    path = cache.cache_path(scene, settings)
    if not path.is_file():
        return None
    try:
        meta = cache.read_meta(path)
        values = meta["rt60_t30"]
        if meta.get("key") != cache.cache_key(scene, settings) or not isinstance(values, list):
            return None
        per_band = np.asarray([np.nan if v is None else float(v) for v in values], float)
        return np.where(per_band > 0, per_band, np.nan)
    except Exception:  # an unreadable or foreign file counts as not built; loading it reports why
        return None
