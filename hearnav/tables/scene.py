"""A scene's tables: three parts of the store, each keyed only by what it depends on.

- ``poses``: the grid, each spot's distance and bearing from every pose, the bearing its earliest path arrives
  from (the spot's own in line of sight) with the delay-and-sum weights towards it on the separator's STFT bins, and the responses' facts the mixing and the maps need (earliest path delay
  and gain, line of sight, length, lead). Key: the response cache key (scene content, acoustic settings, model
  version), the STFT frame, and the code that computes them.
- ``spectra``: the response spectra on the mixing FFT grid, and the responses' early parts (the score's
  reference, :mod:`hearnav.acoustics.early`). Key: the response key, the window length and cross-fade, and the
  code.
- ``maps``: the egocentric maps of every pose. Key: the poses key, the patch size and the field of view.

A part is built from the cached responses (:func:`hearnav.acoustics.cache.load_or_build`, which builds them
first when needed) by the first process that asks, and opened as memory maps by every other.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from hearnav import listening
from hearnav.acoustics import early, synthesis
from hearnav.acoustics.cache import cache_key, load_or_build
from hearnav.acoustics.settings import AcousticSettings
from hearnav.tables import maps, poses
from hearnav.physics import geometry, head, steering
from hearnav.scene import grid as grid_module
from hearnav.scene.grid import Grid, build_grid
from hearnav.scene.model import Scene
from hearnav.separation import stft
from hearnav.separation.context import SeparationContext
from hearnav.tables.store import Part, PartWriter, digest, open_part, source_digest, tables_dir

#: Frame of the STFT the delay-and-sum weights are tabulated on: the separator's.
STFT_FRAME = SeparationContext.n_fft
_POSES_CODE = (poses, steering, head, geometry, grid_module, stft.stft_freqs)
# The mixing code that computes the spectra (the rest of hearnav.listening does not change them).
_SPECTRA_CODE = (listening.ResponseSpectra.fft_size, listening.fill_spectra, listening.early_length,
                 listening._responses_of, early, synthesis)
_FACTS = ("line_of_sight", "first_delay", "first_gain", "first_azimuth")
_GRID_ARRAYS = tuple(f.name for f in dataclasses.fields(Grid) if f.name not in ("spacing", "n_headings"))


@dataclass(frozen=True)
class PoseTables:
    """A scene's grid and the read-only tables of its poses (C cells, H headings, S spots, F STFT bins)."""

    grid: Grid
    distance: np.ndarray  # (C, S) metres from each cell centre to each spot
    bearing: np.ndarray  # (C, H, S) radians in [-pi, pi), counter-clockwise from the heading
    arrival: np.ndarray  # (C, H, S) radians: bearing of the earliest arriving path (the spot's in line of sight)
    das: np.ndarray  # (C, H, S, 2, F) complex64 conjugate delay-and-sum weights towards ``arrival``
    line_of_sight: np.ndarray  # (C, S) bool: the direct path is not blocked
    first_delay: np.ndarray  # (C, S) float32 seconds: earliest path at the head centre
    first_gain: np.ndarray  # (C, S) float32 broadband amplitude of the earliest path
    first_azimuth: np.ndarray  # (C, S) float32 radians, plan frame: direction of the earliest path
    fs: int
    lead: int
    length: int  # response length, samples


def _folder(scene: Scene, part: str, key: str) -> Path:
    return tables_dir() / f"{scene.name}-{part}-{key}"


def poses_key(scene: Scene, settings: AcousticSettings) -> str:
    """Key of a scene's poses part."""
    return digest("poses", cache_key(scene, settings), STFT_FRAME, source_digest(*_POSES_CODE))


def _build_poses(scene: Scene, settings: AcousticSettings, out: PartWriter) -> None:
    grid = build_grid(scene, settings.n_headings)
    responses = load_or_build(scene, settings, grid)
    distance, bearing = poses.spot_directions(grid, scene.spots_xy)
    out.put("distance", distance)
    out.put("bearing", bearing)
    arrival = poses.arrival_bearings(grid, responses.first_azimuth)
    out.put("arrival", arrival)
    das = out.empty("das", (*bearing.shape, 2, STFT_FRAME // 2 + 1), np.complex64)
    poses.fill_das(arrival, settings.fs, STFT_FRAME, settings.head_radius, settings.speed_of_sound, das)
    for name in _FACTS:
        out.put(name, getattr(responses, name))
    for name in _GRID_ARRAYS:
        value = getattr(grid, name)
        if value is not None:
            out.put(f"grid.{name}", value)
    out.scalars.update(fs=responses.fs, lead=responses.lead, length=responses.length, spacing=grid.spacing,
                       n_headings=grid.n_headings)


def pose_tables(scene: Scene, settings: AcousticSettings) -> PoseTables:
    """The scene's :class:`PoseTables` from the store (built on first use)."""
    part = open_part(_folder(scene, "poses", poses_key(scene, settings)), poses_key(scene, settings),
                     ("distance", "bearing", "arrival", "das", *_FACTS, "grid.index", "grid.ij"),
                     lambda out: _build_poses(scene, settings, out))
    return _poses_of(part)


def _poses_of(part: Part) -> PoseTables:
    s = part.scalars
    grid = Grid(spacing=s["spacing"], n_headings=s["n_headings"],
                **{name: part.arrays.get(f"grid.{name}") for name in _GRID_ARRAYS})
    return PoseTables(grid, part["distance"], part["bearing"], part["arrival"], part["das"],
                      *(part[n] for n in _FACTS),
                      s["fs"], s["lead"], s["length"])


def response_spectra(scene: Scene, settings: AcousticSettings, window_len: int,
                     fade_s: float = listening.FADE_S) -> listening.ResponseSpectra:
    """The scene's :class:`hearnav.listening.ResponseSpectra` for a window length, from the store."""
    window_len = listening.check_window(window_len)
    fade = int(round(fade_s * settings.fs))
    key = digest("spectra", cache_key(scene, settings), window_len, fade, source_digest(*_SPECTRA_CODE))

    def build(out: PartWriter) -> None:
        responses = load_or_build(scene, settings)
        c, h, s = responses.early.shape[:3]
        n_bins = listening.ResponseSpectra.fft_size(window_len, fade, responses.length) // 2 + 1
        listening.fill_spectra(responses, window_len, fade, out.empty("spectra", (c, h, s, 2, n_bins), np.complex64),
                               out.empty("early", (c, h, s, 2, listening.early_length(responses)), np.float32))

    part = open_part(_folder(scene, "spectra", key), key, ("spectra", "early"), build)
    pt = pose_tables(scene, settings)
    return listening.ResponseSpectra(pt.fs, pt.lead, pt.length, window_len, fade, part["spectra"], part["early"])


def pose_maps(scene: Scene, settings: AcousticSettings, size: int, fov_rad: float) -> maps.PoseMaps:
    """The scene's egocentric maps (:class:`hearnav.tables.maps.PoseMaps`) for a patch size and field of view."""
    key = digest("maps", poses_key(scene, settings), int(size), repr(float(fov_rad)), source_digest(maps))

    def build(out: PartWriter) -> None:
        pt = pose_tables(scene, settings)
        views = maps.PoseMaps.build(pt.grid, scene.spots_xy, pt.bearing, pt.line_of_sight, size, fov_rad)
        out.put("occupancy", views.occupancy)
        out.put("pixel", views.pixel)

    part = open_part(_folder(scene, "maps", key), key, ("occupancy", "pixel"), build)
    return maps.PoseMaps(part["occupancy"], part["pixel"])
