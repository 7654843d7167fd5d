"""The store of scene tables: everything a step needs, computed once per (scene, acoustic settings) and shared by
every process through read-only memory maps.

Parts live in ``tables/`` and ``sounds/`` beside the response cache (``HEARNAV_CACHE``); see
:mod:`hearnav.tables.store` for the layout and the checks, :mod:`hearnav.tables.scene` for a scene's parts and
their keys, and :mod:`hearnav.tables.sounds` for the dry sounds.
"""

from hearnav.tables.scene import PoseTables, pose_tables, pose_maps, response_spectra
from hearnav.tables.sounds import dry_signal, sounds_dir
from hearnav.tables.store import tables_dir

__all__ = ["PoseTables", "dry_signal", "pose_tables", "pose_maps", "response_spectra", "sounds_dir", "tables_dir"]
