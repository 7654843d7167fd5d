"""Rendered binaural responses against published acoustics: propagation, ITD, head shadow, reverberation."""

import numpy as np
import pytest
import scipy.fft as sfft
from scipy import signal

from hearnav.acoustics import room
from hearnav.physics import reverberation as decay
from hearnav.acoustics.responses import build_responses
from hearnav.acoustics.settings import RESPONSE_LEAD, AcousticSettings
from hearnav.scene.grid import build_grid
from tests.conftest import make_scene

FS, C = 16000, 343.0
ANECHOIC = AcousticSettings(ism_order=1, n_rays=200, max_response_s=0.1)


def _build(scene, settings):
    grid = build_grid(scene, settings.n_headings)
    return grid, build_responses(scene, grid, settings)


@pytest.fixture(scope="module")
def anechoic():
    # A fully absorbing room (alpha = 1 everywhere): only the direct path remains.
    scene = make_scene(size=(8.0, 4.0, 3.0), absorption=1.0, spacing=0.5,
                       spots=[{"name": "a", "position": [7.0, 2.0], "height": 1.5}])
    return scene, *_build(scene, ANECHOIC)


def _cell(grid, x, y):
    return grid.cell_at(np.array([x, y]))


def test_direct_path_delay_and_inverse_distance(anechoic):
    # Free-field propagation: delay r/c within one sample, and 20 log10(2) = 6.02 dB less level per doubling
    # of distance (spherical spreading of a point source, Kinsler et al., Fundamentals of Acoustics, 4th ed.
    # 2000, sec. 5.11), within 0.2 dB. Listener faces the source (heading 2 =
    # 180 deg = -x), so both ears see it at beta = 90 deg and the ear offsets vanish.
    scene, grid, resp = anechoic
    levels = []
    for r in (1.0, 2.0, 4.0):
        cell = _cell(grid, 7.0 - r, 2.0 - 0.25)
        dist = float(np.linalg.norm(np.r_[grid.centres[cell], 1.5] - scene.spots[0].position))
        h = resp.response(cell, 2, 0).astype(float)
        peak = int(np.argmax(np.abs(h[0])))
        assert abs(peak - RESPONSE_LEAD - dist / C * FS) <= 1.0
        assert resp.first_delay[cell, 0] == pytest.approx(dist / C, abs=1e-7)
        levels.append(10 * np.log10(np.sum(h ** 2)) + 20 * np.log10(dist / r))
    assert levels[0] - levels[1] == pytest.approx(6.02, abs=0.2)
    assert levels[1] - levels[2] == pytest.approx(6.02, abs=0.2)


def test_every_cell_hears_the_direct_path_in_free_field(anechoic):
    # Free field (Kinsler et al. 2000, sec. 5.11): every receiver gets the direct sound, so no response may be
    # silent, however far the cell is from the spot (the length rule once cut the farthest pairs' direct paths).
    scene, grid, resp = anechoic
    energy = [float(np.sum(resp.response(cell, 0, 0).astype(float) ** 2)) for cell in range(grid.n_cells)]
    assert min(energy) > 0
    far = int(np.argmax(resp.first_delay[:, 0]))
    peak = int(np.argmax(np.abs(resp.response(far, 0, 0)[0].astype(float))))
    assert abs(peak - RESPONSE_LEAD - resp.first_delay[far, 0] * FS) <= 4  # within the ear offset, a < 3 samples


def test_direct_delay_matches_pyroomacoustics(anechoic):
    # Reference library: pyroomacoustics' own RIR peaks at r/c plus its fixed 40-sample lead.
    scene, grid, resp = anechoic
    cell = _cell(grid, 3.0, 1.75)
    rx = np.r_[grid.centres[cell], 1.5]
    rir = room.reference_rir(scene, ANECHOIC, scene.spots[0].position, rx, ism_order=0, ray_tracing=False)
    pra_delay = (int(np.argmax(np.abs(rir))) - room.pra_lead()) / FS
    assert resp.first_delay[cell, 0] == pytest.approx(pra_delay, abs=1.0 / FS)


def test_itd_by_cross_correlation(anechoic):
    # Woodworth: ITD = (a/c)(theta + sin theta) = 0.656 ms at 90 degrees (a = 8.75 cm). Measured by
    # cross-correlating the rendered ear responses, within one sample. Heading 1 (+y) puts the source
    # (at +x) on the right; heading 2 (-x, facing it) gives zero ITD.
    scene, grid, resp = anechoic
    cell = _cell(grid, 4.0, 1.75)
    lag_side = _lag(resp.response(cell, 1, 0))
    lag_front = _lag(resp.response(cell, 2, 0))
    src = scene.spots[0].position
    rx = np.r_[grid.centres[cell], 1.5]
    theta = np.arccos(np.clip(np.dot(src - rx, [1, 0, 0]) / np.linalg.norm(src - rx), -1, 1))
    expected = 0.0875 / C * ((np.pi / 2 - theta) + np.sin(np.pi / 2 - theta)) if theta < np.pi / 2 else 0.0
    assert abs(lag_side / FS - expected) <= 1.0 / FS  # left ear lags the right
    assert expected == pytest.approx(0.656e-3, abs=0.05e-3)  # the source is nearly lateral
    assert abs(lag_front) <= 1


def _lag(h):
    """Delay of the left ear relative to the right, in samples (positive: left later)."""
    xc = signal.correlate(h[0].astype(float), h[1].astype(float), mode="full")
    return int(np.argmax(xc)) - (h.shape[1] - 1)


def test_head_shadow_levels_and_ild_flip(anechoic):
    # Brown & Duda 1998: low-frequency ear gain about 0 dB; the lit ear is louder at high frequency; the
    # interaural level difference changes sign when the heading turns 180 degrees.
    scene, grid, resp = anechoic
    cell = _cell(grid, 4.0, 1.75)
    dist = float(np.linalg.norm(np.r_[grid.centres[cell], 1.5] - scene.spots[0].position))
    n = 4096
    f = sfft.rfftfreq(n, 1 / FS)
    spec = np.abs(sfft.rfft(resp.response(cell, 1, 0).astype(float), n, axis=-1))
    low = (f > 60) & (f < 150)
    for ear in (0, 1):
        assert 20 * np.log10(np.mean(spec[ear, low]) * dist) == pytest.approx(0.0, abs=0.5)
    high = (f > 4000) & (f < 7000)
    ild = lambda s: 20 * np.log10(np.mean(s[0, high]) / np.mean(s[1, high]))  # noqa: E731
    ild_right = ild(spec)
    ild_left = ild(np.abs(sfft.rfft(resp.response(cell, 3, 0).astype(float), n, axis=-1)))
    assert ild_right < -6.0 and ild_left > 6.0  # source on the right, then on the left
    assert ild_right == pytest.approx(-ild_left, abs=0.5)


@pytest.fixture(scope="module")
def reverberant():
    # Scattering 0.1 makes the late field diffuse, as Eyring's and Sabine's formulas assume; with purely
    # specular walls a shoebox decays measurably slower (pyroomacoustics' own RIR shows the same).
    scene = make_scene(size=(6.0, 4.0, 3.0), absorption=0.15, scattering=0.1, spacing=2.0,
                       spots=[{"name": "a", "position": [1.2, 1.1], "height": 1.4}])
    settings = AcousticSettings(ism_order=3, max_response_s=1.0, seed=3)
    return scene, settings, *_build(scene, settings)


@pytest.mark.slow
def test_rt60_against_eyring_and_sabine(reverberant):
    # Schroeder backward integration over ISO 3382-1's T20 and T30 ranges, against Eyring (within 15 %)
    # and Sabine (within 20 %, mean absorption 0.15 < 0.2); Sabine (1900) and Eyring (JASA 1, 1930) as given in
    # Kuttruff, Room Acoustics, 5th ed. 2009, ch. 5.
    scene, settings, grid, resp = reverberant
    areas, absorption = scene.surfaces()
    eyring = float(decay.eyring(scene.volume, areas, absorption[:, 3]))
    sabine = float(decay.sabine(scene.volume, areas, absorption[:, 3]))
    cell = int(np.argmax(np.linalg.norm(grid.centres - scene.spots[0].position[:2], axis=1)))
    h = resp.response(cell, 0, 0).astype(float).sum(axis=0)
    rx = np.r_[grid.centres[cell], scene.ear_height]
    rir = room.reference_rir(scene, settings, scene.spots[0].position, rx)
    for evaluation in ("T20", "T30"):
        measured = decay.measure_rt60(h, FS, evaluation)
        assert measured == pytest.approx(eyring, rel=0.15), evaluation
        assert measured == pytest.approx(sabine, rel=0.20), evaluation
        # Reference library: the decay of pyroomacoustics' own hybrid RIR of the same room, within 8 %.
        assert measured == pytest.approx(decay.measure_rt60(rir, FS, evaluation), rel=0.08), evaluation


@pytest.mark.slow
def test_tail_energy_matches_pyroomacoustics(reverberant):
    # Reference library: pyroomacoustics' own hybrid RIR (image sources + ray tracing) for the same room.
    # The late energy (after 60 ms) of our tail, averaged over the ears, agrees within 2 dB. A loose check:
    # that RIR was measured (issue 12) 1-2.6 dB above an image-source sum, and ours sits about 1 dB below it;
    # the 0.5 dB check against our own image-source reference is in tests/acoustics/test_tail.py.
    scene, settings, grid, resp = reverberant
    cell = int(np.argmax(np.linalg.norm(grid.centres - scene.spots[0].position[:2], axis=1)))
    rx = np.r_[grid.centres[cell], scene.ear_height]
    rir = room.reference_rir(scene, settings, scene.spots[0].position, rx)
    start = int(0.06 * FS)
    ours = np.mean(np.sum(resp.response(cell, 0, 0).astype(float)[:, RESPONSE_LEAD + start:] ** 2, axis=1))
    end = resp.length - RESPONSE_LEAD
    theirs = np.sum(rir[room.pra_lead() + start: room.pra_lead() + end] ** 2)
    assert 10 * np.log10(ours / theirs) == pytest.approx(0.0, abs=2.0)


def test_late_tail_is_diffuse_between_the_ears(reverberant):
    # A diffuse field's coherence at two points d apart is sin(kd)/(kd) (Cook, Waterhouse, Berendt, Edelman &
    # Thompson, JASA 27(6), 1955). For ears 2a = 0.175 m apart that is 0.97 / 0.90 / 0.62 at 125 / 250 / 500 Hz
    # and within +-0.22 above 1 kHz. The rendered tails' real coherence (cross-spectra averaged over all cells)
    # is within 0.15 of it at 125-500 Hz, and the magnitude-squared coherence stays <= 0.3 above 1 kHz.
    scene, settings, grid, resp = reverberant
    tail = resp.tail.astype(float)[:, 0, :, int(0.08 * FS):]
    f, coh = signal.coherence(tail[:, 0], tail[:, 1], fs=FS, nperseg=256, axis=-1)
    assert np.mean(coh[:, f > 1000]) <= 0.3
    f, gamma = _real_coherence(tail[:, 0], tail[:, 1], nperseg=1024)
    d = 2 * settings.head_radius
    for freq in (125.0, 250.0, 500.0):
        expected = np.sin(2 * np.pi * freq * d / C) / (2 * np.pi * freq * d / C)
        assert np.interp(freq, f, gamma) == pytest.approx(expected, abs=0.15), freq


def _real_coherence(x, y, nperseg):
    """Re(Sxy) / sqrt(Sxx Syy) with the spectra averaged over rows and Welch segments."""
    f, sxy = signal.csd(x, y, fs=FS, nperseg=nperseg, axis=-1)
    _, sxx = signal.welch(x, fs=FS, nperseg=nperseg, axis=-1)
    _, syy = signal.welch(y, fs=FS, nperseg=nperseg, axis=-1)
    return f, np.real(sxy.mean(axis=0)) / np.sqrt(sxx.mean(axis=0) * syy.mean(axis=0))


def test_occlusion_removes_the_direct_path():
    # A full-height partition between source and listener blocks the line of sight (no order-0 image is
    # visible); taking it away brings the direct path back at r/c (geometric acoustics, common practice).
    spots = [{"name": "a", "position": [5.0, 1.0], "height": 1.5}]
    wall = [{"name": "wall", "partition": {"start": [3.0, 0.0], "end": [3.0, 3.0], "thickness": 0.1},
             "height": "ceiling", "material": {"absorption": [0.3] * 7}}]
    settings = AcousticSettings(ism_order=2, n_rays=500, max_response_s=0.2)
    blocked = make_scene(size=(6.0, 4.0, 3.0), absorption=0.3, spots=spots, obstacles=wall, start=[0, 0, 2.5, 4])
    grid_b, resp_b = _build(blocked, settings)
    open_ = make_scene(size=(6.0, 4.0, 3.0), absorption=0.3, spots=spots, start=[0, 0, 2.5, 4])
    grid_o, resp_o = _build(open_, settings)
    cell_b, cell_o = _cell(grid_b, 1.5, 1.5), _cell(grid_o, 1.5, 1.5)
    assert not resp_b.line_of_sight[cell_b, 0] and resp_o.line_of_sight[cell_o, 0]
    dist = float(np.linalg.norm(np.r_[grid_o.centres[cell_o], 1.5] - np.r_[spots[0]["position"], 1.5]))
    assert resp_o.first_delay[cell_o, 0] == pytest.approx(dist / C, abs=1e-6)
    assert resp_b.first_delay[cell_b, 0] > dist / C + 1e-3  # the earliest path is now a longer reflection


def test_mirror_symmetry_swaps_the_ears():
    # Mirroring the scene about the listener's axis (the line y = 2 along the heading +x) swaps left and right
    # ears (geometric symmetry, common practice). Early parts compared; the tails are independent noise.
    settings = AcousticSettings(ism_order=2, n_rays=300, max_response_s=0.2)
    a = make_scene(size=(6.0, 4.0, 3.0), absorption=0.25, spots=[{"name": "a", "position": [4.5, 1.0], "height": 1.2}])
    b = make_scene(size=(6.0, 4.0, 3.0), absorption=0.25, spots=[{"name": "a", "position": [4.5, 3.0], "height": 1.2}])
    grid_a, ra = _build(a, settings)
    grid_b, rb = _build(b, settings)
    ca, cb = _cell(grid_a, 1.5, 1.5), _cell(grid_b, 1.5, 2.5)
    np.testing.assert_allclose(grid_a.centres[ca], [1.5, 1.5])
    np.testing.assert_allclose(grid_b.centres[cb], [1.5, 2.5])
    ea, eb = ra.early[ca, 0, 0].astype(float), rb.early[cb, 0, 0].astype(float)
    np.testing.assert_allclose(ea[0], eb[1], atol=2e-3 * np.abs(ea).max())
    np.testing.assert_allclose(ea[1], eb[0], atol=2e-3 * np.abs(ea).max())


def test_equal_seeds_equal_results():
    # Determinism (project rule): equal seeds give element-wise equal responses; another seed changes the tail.
    scene = make_scene(size=(5.0, 4.0, 3.0), absorption=0.3, spacing=1.0)
    s1 = AcousticSettings(ism_order=2, n_rays=400, max_response_s=0.2, seed=5)
    _, r1 = _build(scene, s1)
    _, r2 = _build(scene, s1)
    _, r3 = _build(scene, s1.model_copy(update={"seed": 6}))
    for name, value in r1.arrays().items():
        np.testing.assert_array_equal(value, r2.arrays()[name], err_msg=name)
    np.testing.assert_array_equal(r1.early, r3.early)
    assert not np.array_equal(r1.tail, r3.tail)


def test_fast_renderer_matches_the_straightforward_one():
    # The affine head-shadow decomposition (H = L + alpha P) and band-train FFTs equal the per-path,
    # per-bin evaluation of the same model below 0.9 x Nyquist (windowed-sinc roll-off above).
    from hearnav.acoustics.synthesis import PathSet, early_direct, early_fast

    rng = np.random.default_rng(0)
    paths = PathSet(rng.normal(size=(30, 3)) * 3, rng.uniform(0.1, 1, (30, 7)) / 3, rng.integers(0, 3, 30), 3)
    headings = np.arange(4) * np.pi / 2
    fast = early_fast(paths, headings, FS, C, 0.0875, 1200, RESPONSE_LEAD)
    slow = early_direct(paths, headings, FS, C, 0.0875, 1200, RESPONSE_LEAD)
    f = sfft.rfftfreq(4096, 1 / FS)
    band = f < 0.9 * FS / 2
    a, b = sfft.rfft(fast, 4096)[..., band], sfft.rfft(slow, 4096)[..., band]
    assert np.linalg.norm(a - b) / np.linalg.norm(b) < 5e-3
