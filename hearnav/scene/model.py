"""A validated scene turned into geometry: polygons as arrays, materials as coefficients."""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field

import numpy as np

from hearnav.physics.reverberation import eyring

from hearnav.scene.format import SceneSpec
from hearnav.scene.materials import Material

#: Gap (m) by which obstacles are shrunk so that no face of the 3-D room is shared by two solids.
SOLID_GAP = 0.005


@dataclass(frozen=True)
class SolidObstacle:
    """An obstacle as a counter-clockwise polygon extruded from the floor to ``height``."""

    name: str
    polygon: np.ndarray  # (n, 2), counter-clockwise, not closed
    height: float
    full_height: bool
    material: Material


@dataclass(frozen=True)
class SourceSpot:
    """A named source position in 3-D with its allowed sound categories (None: any)."""

    name: str
    position: np.ndarray  # (3,)
    categories: tuple[str, ...] | None


@dataclass(frozen=True)
class Scene:
    """A scene ready for gridding and acoustic simulation."""

    spec: SceneSpec
    outline: np.ndarray  # (n, 2), counter-clockwise, not closed
    obstacles: tuple[SolidObstacle, ...]
    walls: Material
    floor: Material
    ceiling: Material
    spots: tuple[SourceSpot, ...]
    text: str = field(repr=False)  # the file's canonical content, for cache keys

    @property
    def name(self) -> str:
        return self.spec.name

    @property
    def split(self) -> str:
        return self.spec.split

    @property
    def height(self) -> float:
        return self.spec.ceiling_height

    @property
    def ear_height(self) -> float:
        return self.spec.grid.ear_height

    @property
    def digest(self) -> str:
        """SHA-256 of the scene's content."""
        return hashlib.sha256(self.text.encode("utf-8")).hexdigest()

    @property
    def spots_xy(self) -> np.ndarray:
        """(n_spots, 2) horizontal positions of the spots, metres."""
        return np.array([s.position[:2] for s in self.spots], float).reshape(-1, 2)

    def spot(self, name: str) -> SourceSpot:
        """The spot called ``name``."""
        for s in self.spots:
            if s.name == name:
                return s
        from hearnav.errors import SceneError, unknown_name

        raise SceneError(unknown_name("spot", name, [s.name for s in self.spots]))

    @property
    def floor_area(self) -> float:
        """Area of the outline in m^2 (obstacles included)."""
        return float(polygon_area(self.outline))

    def surfaces(self) -> tuple[np.ndarray, np.ndarray]:
        """Every boundary surface of the air volume.

        Returns
        -------
        areas : (n_surfaces,) m^2.
        absorption : (n_surfaces, n_bands).
        """
        areas, absorption = [], []
        perimeter = float(np.sum(np.linalg.norm(np.roll(self.outline, -1, axis=0) - self.outline, axis=1)))
        areas += [perimeter * self.height, self.floor_area, self.floor_area]
        absorption += [self.walls.absorption, self.floor.absorption, self.ceiling.absorption]
        for ob in self.obstacles:
            edges = np.linalg.norm(np.roll(ob.polygon, -1, axis=0) - ob.polygon, axis=1)
            top = 0.0 if ob.full_height else float(polygon_area(ob.polygon))
            areas.append(float(edges.sum()) * ob.height + top)
            absorption.append(ob.material.absorption)
        return np.asarray(areas), np.asarray(absorption)

    @property
    def volume(self) -> float:
        """Air volume in m^3 (room minus obstacles)."""
        solid = sum(float(polygon_area(ob.polygon)) * ob.height for ob in self.obstacles)
        return self.floor_area * self.height - solid

    def eyring_rt60(self, c: float = 343.0, band: int | None = None) -> float | np.ndarray:
        """Eyring's estimate of the reverberation time from the scene's surfaces: (n_bands,) seconds, or one band's."""
        areas, absorption = self.surfaces()
        t = eyring(self.volume, areas, absorption, c)
        return t if band is None else float(t[band])


def polygon_area(points: np.ndarray) -> float:
    """Signed area of a polygon by the shoelace formula (positive when counter-clockwise).

    Parameters
    ----------
    points : (n, 2) corners, not closed.
    """
    x, y = points[:, 0], points[:, 1]
    return 0.5 * float(np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y))


def counter_clockwise(points: np.ndarray) -> np.ndarray:
    """The same polygon with its corners in counter-clockwise order."""
    return points if polygon_area(points) > 0 else points[::-1].copy()

