"""The one module that imports pyroomacoustics: scene -> 3-D room, image sources, ray-traced histograms.

pyroomacoustics documents array shapes well and type hints poorly; every function here returns plain
NumPy arrays with their shapes stated.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pyroomacoustics as pra

from hearnav.acoustics.settings import AcousticSettings
from hearnav.scene.materials import BAND_CENTERS_HZ, Material
from hearnav.scene.model import SOLID_GAP, Scene, counter_clockwise


@dataclass(frozen=True)
class ImageSources:
    """Image sources of one real source and which receivers see them."""

    positions: np.ndarray  # (3, n_images)
    damping: np.ndarray  # (n_bands, n_images) amplitude factor of the reflections
    orders: np.ndarray  # (n_images,)
    visible: np.ndarray  # (n_receivers, n_images) bool


def configure(settings: AcousticSettings) -> None:
    """Set pyroomacoustics' thread count and seed its own random generator."""
    pra.constants.set("num_threads", settings.n_threads)
    pra.random.seed(settings.seed)


def _wall(corners: np.ndarray, outward: np.ndarray, material: Material, name: str) -> pra.wall.Wall:
    """A wall whose normal points away from the air (into an obstacle, or out of the room)."""
    absorption = np.asarray(material.absorption, dtype=np.float32)
    scattering = np.asarray(material.scattering, dtype=np.float32)
    wall = pra.wall_factory(np.ascontiguousarray(corners), absorption, scattering, name)
    if float(np.dot(wall.normal, outward)) < 0:
        wall = pra.wall_factory(np.ascontiguousarray(corners[:, ::-1]), absorption, scattering, name)
    return wall


def _prism(polygon: np.ndarray, z0: float, z1: float, material: Material, air_inside: bool, name: str,
           caps: tuple[bool, bool]) -> list:
    """Side faces (and optional bottom/top caps) of a polygon extruded from z0 to z1."""
    poly = counter_clockwise(np.asarray(polygon, dtype=float))
    sign = 1.0 if air_inside else -1.0
    walls = []
    for i in range(len(poly)):
        a, b = poly[i], poly[(i + 1) % len(poly)]
        corners = np.array([[a[0], b[0], b[0], a[0]], [a[1], b[1], b[1], a[1]], [z0, z0, z1, z1]])
        outward = sign * np.array([b[1] - a[1], a[0] - b[0], 0.0])  # right-hand normal of a ccw edge
        walls.append(_wall(corners, outward, material, f"{name}.side{i}"))
    for z, want, down in ((z0, caps[0], True), (z1, caps[1], False)):
        if want:
            corners = np.vstack([poly.T, np.full(len(poly), z)])
            outward = np.array([0.0, 0.0, (-1.0 if down else 1.0) * sign])
            walls.append(_wall(corners, outward, material, f"{name}.{'bottom' if down else 'top'}"))
    return walls


def room_walls(scene: Scene) -> list:
    """Every face of the scene's air volume, normals pointing away from the air."""
    walls = _prism(scene.outline, 0.0, scene.height, scene.walls, True, "room", caps=(False, False))
    floor = np.vstack([scene.outline.T, np.zeros(len(scene.outline))])
    ceiling = np.vstack([scene.outline.T, np.full(len(scene.outline), scene.height)])
    walls.append(_wall(floor, np.array([0.0, 0.0, -1.0]), scene.floor, "floor"))
    walls.append(_wall(ceiling, np.array([0.0, 0.0, 1.0]), scene.ceiling, "ceiling"))
    for ob in scene.obstacles:
        # Obstacles are closed solids, as pyroomacoustics needs (its inside test counts face crossings). They
        # stand SOLID_GAP above the floor (and below the ceiling when full height) so that no face of the
        # solid is coplanar with a face of the room.
        walls += _prism(ob.polygon, SOLID_GAP, ob.height, ob.material, False, ob.name, caps=(True, True))
    return walls


def _room(scene: Scene, settings: AcousticSettings, max_order: int, receivers: np.ndarray) -> pra.Room:
    room = pra.Room(room_walls(scene), fs=settings.fs, max_order=max_order,
                    air_absorption=settings.air_absorption, ray_tracing=True)
    room.set_sound_speed(settings.speed_of_sound)
    n_rays = settings.n_rays or None
    room.set_ray_tracing(n_rays=n_rays, receiver_radius=settings.receiver_radius, hist_bin_size=settings.hist_bin,
                         time_thres=settings.max_response_s)
    for spot in scene.spots:
        room.add_source(spot.position)
    room.add_microphone_array(np.asarray(receivers, dtype=float).T)
    return room


def image_sources(scene: Scene, settings: AcousticSettings, receivers: np.ndarray) -> list[ImageSources]:
    """Image sources up to ``settings.ism_order`` for every spot, with visibility from every receiver.

    Parameters
    ----------
    receivers : (n_receivers, 3) positions.

    Returns
    -------
    One :class:`ImageSources` per spot, in the scene's spot order.
    """
    configure(settings)
    room = _room(scene, settings, settings.ism_order, receivers)
    room.image_source_model()
    out = []
    for src, vis in zip(room.sources, room.visibility):
        if getattr(src, "images", None) is None or vis.shape[1] != np.shape(src.images)[1]:
            n_bands = len(BAND_CENTERS_HZ)
            out.append(ImageSources(np.zeros((3, 0)), np.zeros((n_bands, 0)), np.zeros(0, int),
                                    np.zeros((len(receivers), 0), bool)))
            continue
        out.append(ImageSources(np.asarray(src.images, float), np.asarray(src.damping, float),
                                np.asarray(src.orders, int), np.asarray(vis, bool)))
    return out


def tail_histograms(scene: Scene, settings: AcousticSettings, probes: np.ndarray) -> tuple[np.ndarray, float, int]:
    """Ray-traced energy histograms of everything the image sources do not cover.

    In hybrid mode pyroomacoustics logs a specular ray at a receiver once it has made at least the room's
    ``max_order`` reflections, and all scattered energy. The tracing room is given ``ism_order + 1`` so that
    the specular paths of order <= ism_order (the image sources' share) are not counted twice.

    Parameters
    ----------
    probes : (n_probes, 3) receiver positions.

    Returns
    -------
    hist : (n_probes, n_spots, n_bands, n_bins) energy per bin, on the image-source amplitude scale (1/r).
    bin_s : histogram bin width in seconds.
    n_rays : rays traced per source.
    """
    configure(settings)
    room = _room(scene, settings, settings.ism_order + 1, probes)
    room.ray_tracing()
    n_bands = len(BAND_CENTERS_HZ)
    hists = [[np.asarray(room.rt_histograms[m][s][0], float) for s in range(len(scene.spots))]
             for m in range(len(probes))]
    n_bins = max(h.shape[-1] for row in hists for h in row)
    out = np.zeros((len(probes), len(scene.spots), n_bands, n_bins))
    for m, row in enumerate(hists):
        for s, h in enumerate(row):
            out[m, s, : h.shape[0], : h.shape[1]] = h if h.shape[0] == n_bands else np.broadcast_to(h, (n_bands, h.shape[1]))
    return out, float(room.rt_args["hist_bin_size"]), int(room.rt_args["n_rays"])


def reference_rir(scene: Scene, settings: AcousticSettings, source: np.ndarray, receiver: np.ndarray,
                  ism_order: int | None = None, ray_tracing: bool = True) -> np.ndarray:
    """pyroomacoustics' own impulse response for one source and omnidirectional receiver.

    For comparisons and for timing a by-hand simulation. Returns (n,) samples, with pyroomacoustics' fixed
    lead of half its fractional-delay filter length (40 samples by default).
    """
    configure(settings)
    room = pra.Room(room_walls(scene), fs=settings.fs,
                    max_order=settings.ism_order if ism_order is None else ism_order,
                    air_absorption=settings.air_absorption, ray_tracing=ray_tracing)
    room.set_sound_speed(settings.speed_of_sound)
    if ray_tracing:
        room.set_ray_tracing(n_rays=settings.n_rays or None, receiver_radius=settings.receiver_radius,
                             hist_bin_size=settings.hist_bin)
    room.add_source(np.asarray(source, float))
    room.add_microphone_array(np.asarray(receiver, float).reshape(3, 1))
    room.compute_rir()
    return np.asarray(room.rir[0][0], float)


def pra_lead() -> int:
    """pyroomacoustics' fixed response lead in samples (half its fractional-delay filter)."""
    return int(pra.constants.get("frac_delay_length")) // 2


def air_coefficients(settings: AcousticSettings) -> np.ndarray:
    """pyroomacoustics' air absorption per octave band (energy, 1/m), zeros when it is off.

    Returns
    -------
    (n_bands,) coefficients m; a path of length r keeps amplitude exp(-m r / 2).
    """
    if not settings.air_absorption:
        return np.zeros(len(BAND_CENTERS_HZ))
    bands = pra.acoustics.OctaveBandsFactory(fs=settings.fs, base_frequency=BAND_CENTERS_HZ[0])
    physics = pra.parameters.Physics()
    return np.asarray(bands(**physics.get_air_absorption()), float)
