"""A plain shoebox image-source model, as a reference for the energy that reaches a point in a time window.

References
----------
- J. B. Allen & D. A. Berkley, "Image method for efficiently simulating small-room acoustics", JASA 65(4),
  1979: in a room [0, Lx] x [0, Ly] x [0, Lz] the images of a source at (xs, ys, zs) sit at
  x = 2 n Lx + (1 - 2 u) xs (likewise y, z) for integers n and u in {0, 1}; that image has met the wall
  x = 0 |n - u| times and the wall x = Lx |n| times, and arrives with amplitude prod(beta_i ** hits_i) / r
  (the 1/(4 pi) of a point source left out, as on hearnav's image-source scale).
"""

from __future__ import annotations

import numpy as np


def shoebox_images(size: np.ndarray, source: np.ndarray, receiver: np.ndarray,
                   max_distance: float) -> tuple[np.ndarray, np.ndarray]:
    """Every image of a shoebox source within ``max_distance`` of the receiver (Allen & Berkley 1979).

    Parameters
    ----------
    size : (3,) room dimensions Lx, Ly, Lz in metres.
    source, receiver : (3,) positions inside the room.
    max_distance : metres.

    Returns
    -------
    distances : (N,) image-to-receiver distances in metres.
    hits : (N, 6) int reflections off the walls x = 0, x = Lx, y = 0, y = Ly, z = 0, z = Lz.
    """
    size, source, receiver = (np.asarray(v, dtype=float) for v in (size, source, receiver))
    coords, walls = [], []
    for axis in range(3):
        reach = int(np.ceil(max_distance / (2 * size[axis]))) + 1
        n = np.arange(-reach, reach + 1)
        n, u = np.repeat(n, 2), np.tile([0, 1], n.size)
        coords.append(2 * n * size[axis] + (1 - 2 * u) * source[axis] - receiver[axis])
        walls.append(np.stack([np.abs(n - u), np.abs(n)], axis=1))
    gx, gy, gz = np.meshgrid(*(np.arange(len(c)) for c in coords), indexing="ij")
    gx, gy, gz = gx.ravel(), gy.ravel(), gz.ravel()
    r = np.sqrt(coords[0][gx] ** 2 + coords[1][gy] ** 2 + coords[2][gz] ** 2)
    keep = r <= max_distance
    distances = r[keep]
    hits = np.concatenate([walls[0][gx[keep]], walls[1][gy[keep]], walls[2][gz[keep]]], axis=1)
    return distances, hits


def shoebox_window_energy(size: np.ndarray, source: np.ndarray, receiver: np.ndarray, reflectance: np.ndarray,
                          start_s: float, stop_s: float, c: float = 343.0) -> np.ndarray:
    """Energy of the image sources that arrive in [start_s, stop_s), per band.

    Parameters
    ----------
    size, source, receiver : (3,) metres.
    reflectance : (6, B) energy reflection coefficients 1 - alpha of each wall (order as in
        :func:`shoebox_images`) and band, or (B,) for the same on every wall.
    start_s, stop_s : arrival-time window in seconds from emission.
    c : speed of sound in m/s.

    Returns
    -------
    (B,) sum over the window's images of prod(reflectance ** hits) / r^2.
    """
    refl = np.broadcast_to(np.asarray(reflectance, dtype=float), (6, np.shape(reflectance)[-1]))
    distances, hits = shoebox_images(size, source, receiver, stop_s * c)
    inside = distances >= start_s * c
    distances, hits = distances[inside], hits[inside]
    gain = np.prod(refl[None] ** hits[:, :, None], axis=1)  # (N, B); 0 ** 0 = 1 for walls never met
    return (gain / distances[:, None] ** 2).sum(axis=0)
