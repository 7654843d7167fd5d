"""The shoebox image-source reference (Allen & Berkley 1979) against geometry worked by hand."""

import numpy as np
import pytest

from hearnav.physics.image_sources import shoebox_images, shoebox_window_energy

SIZE = np.array([6.0, 4.0, 3.0])
SRC = np.array([1.2, 1.1, 1.4])
RX = np.array([4.0, 2.5, 1.5])


def test_direct_and_first_order_images():
    # Mirror images in the six walls (Allen & Berkley 1979, JASA 65(4)): source mirrored to x = -1.2,
    # x = 10.8, y = -1.1, y = 6.9, z = -1.4, z = 4.6; distances worked by hand from the receiver.
    dist, hits = shoebox_images(SIZE, SRC, RX, 12.0)
    direct = np.linalg.norm(SRC - RX)
    assert dist[hits.sum(axis=1) == 0] == pytest.approx([direct])
    first = np.sort(dist[hits.sum(axis=1) == 1])
    mirrors = [(-1.2, 1.1, 1.4), (10.8, 1.1, 1.4), (1.2, -1.1, 1.4), (1.2, 6.9, 1.4), (1.2, 1.1, -1.4), (1.2, 1.1, 4.6)]
    np.testing.assert_allclose(first, np.sort([np.linalg.norm(np.array(m) - RX) for m in mirrors]))
    # each first-order image hit one wall: x = 0 for the image at x = -1.2
    at = np.argmin(np.abs(dist - np.linalg.norm(np.array(mirrors[0]) - RX)))
    np.testing.assert_array_equal(hits[at], [1, 0, 0, 0, 0, 0])


def test_image_count_and_energy_grow_like_the_volume_says():
    # Images fill space with density 1 / V, so a sphere of radius R holds (4/3) pi R^3 / V of them, and with
    # lossless walls the energy sum of 1/r^2 over a shell [r1, r2] is 4 pi (r2 - r1) / V (Kuttruff, Room
    # Acoustics, 5th ed. 2009, sec. 4.1, image-source density). Within 2 % at R = 50 m.
    volume = SIZE.prod()
    dist, _ = shoebox_images(SIZE, SRC, RX, 50.0)
    assert dist.size == pytest.approx(4 / 3 * np.pi * 50.0 ** 3 / volume, rel=0.02)
    c = 343.0
    energy = shoebox_window_energy(SIZE, SRC, RX, np.ones(1), 0.02, 0.15, c)
    assert energy[0] == pytest.approx(4 * np.pi * c * (0.15 - 0.02) / volume, rel=0.02)


def test_window_energy_per_band_and_wall():
    # One band fully reflecting, one absorbing everything: only the direct path survives in the second.
    refl = np.ones((6, 2))
    refl[:, 1] = 0.0
    direct = np.linalg.norm(SRC - RX)
    e = shoebox_window_energy(SIZE, SRC, RX, refl, 0.0, 0.05)
    assert e[1] == pytest.approx(1 / direct ** 2)
    assert e[0] > 10 * e[1]
