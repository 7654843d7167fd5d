"""Surface materials: octave-band absorption and scattering coefficients.

Named materials come from pyroomacoustics' material table (``data/materials.json``), which reproduces the
annex of Vorlaender, *Auralization* (Springer, 2008). The table is read as data, without importing
pyroomacoustics. Entries that list six bands (125 Hz - 4 kHz) repeat their 4 kHz value at 8 kHz.
"""

from __future__ import annotations

import functools
import importlib.util
import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np

#: Octave-band centre frequencies in Hz used for every material and for the whole simulation.
BAND_CENTERS_HZ: tuple[float, ...] = (125.0, 250.0, 500.0, 1000.0, 2000.0, 4000.0, 8000.0)
N_BANDS = len(BAND_CENTERS_HZ)
#: Scattering coefficient given to named materials that do not set one (common practice: 0.1).
DEFAULT_SCATTERING = 0.1
#: Scattering of the walls, floor and ceiling of a furnished room (common practice; no handbook value). The
#: extruded plan leaves out what scatters there (shelves, frames, radiators, window reveals, chair legs, lamps);
#: with 0.1 the ray tracer's field stays far from diffuse: rays that skim an absorbing floor keep their shallow
#: angle and decay at the reflective walls' rate, up to twice Eyring's time (see README.md, Scattering).
ROOM_SCATTERING = 0.3
#: Scattering of furniture: the mean over 125 Hz - 8 kHz of "classroom_tables" (rows of tables and persons on
#: chairs, 0.2 - 0.6) in the same table's scattering section (Vorlaender, *Auralization*, annex).
FURNITURE_SCATTERING = 0.44


@dataclass(frozen=True)
class Material:
    """Octave-band energy absorption and scattering coefficients of one surface."""

    name: str
    absorption: tuple[float, ...]
    scattering: tuple[float, ...]

    def absorption_at(self, band_index: int) -> float:
        """Absorption in one octave band."""
        return self.absorption[band_index]


def _table_path() -> Path:
    spec = importlib.util.find_spec("pyroomacoustics")
    if spec is None or not spec.submodule_search_locations:
        raise ImportError("pyroomacoustics is not installed; run: pip install 'pyroomacoustics>=0.10'")
    return Path(next(iter(spec.submodule_search_locations))) / "data" / "materials.json"


def _to_bands(coeffs: list[float]) -> tuple[float, ...]:
    values = list(coeffs)[:N_BANDS]
    values += [values[-1]] * (N_BANDS - len(values))
    return tuple(float(v) for v in values)


@functools.cache
def absorption_table() -> dict[str, tuple[float, ...]]:
    """Every named absorption material, as seven octave-band coefficients."""
    data = json.loads(_table_path().read_text(encoding="utf-8"))
    table: dict[str, tuple[float, ...]] = {}
    for group in data["absorption"].values():
        for name, entry in group.items():
            table[name] = _to_bands(entry["coeffs"])
    return table


@functools.cache
def scattering_table() -> dict[str, tuple[float, ...]]:
    """Every named scattering profile of the table, as seven octave-band coefficients."""
    data = json.loads(_table_path().read_text(encoding="utf-8"))
    return {name: _to_bands(entry["coeffs"]) for group in data["scattering"].values() for name, entry in group.items()}


def named(name: str, scattering: float | list[float] | None = None) -> Material:
    """A material from the table; raises KeyError for an unknown name."""
    absorption = absorption_table()[name]
    return Material(name, absorption, scattering_bands(DEFAULT_SCATTERING if scattering is None else scattering))


def scattering_bands(value: float | list[float]) -> tuple[float, ...]:
    """Scattering as seven octave-band coefficients (a single number applies to every band)."""
    if isinstance(value, (int, float)):
        return (float(value),) * N_BANDS
    return tuple(float(v) for v in value)


def mean_absorption(areas: np.ndarray, absorptions: np.ndarray) -> np.ndarray:
    """Area-weighted mean absorption per band.

    Parameters
    ----------
    areas : (n_surfaces,) surface areas in m^2.
    absorptions : (n_surfaces, n_bands) absorption coefficients.

    Returns
    -------
    (n_bands,) mean absorption.
    """
    areas = np.asarray(areas, dtype=float)
    return (areas[:, None] * np.asarray(absorptions, dtype=float)).sum(axis=0) / areas.sum()
