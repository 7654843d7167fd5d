"""Binaural responses of every (cell, heading, spot) of a scene: image-source early part + ray-traced tail."""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING
from dataclasses import dataclass

import numpy as np

from hearnav.physics import decay, reverberation
from hearnav.physics.geometry import heading_angles
from hearnav.acoustics.probes import choose_probes
from hearnav.acoustics.synthesis import FD_TAPS, PathSet, early_fast
from hearnav.acoustics.settings import RESPONSE_LEAD, AcousticSettings
from hearnav.acoustics.tail import binaural_tails, smooth_histogram

if TYPE_CHECKING:
    from hearnav.acoustics import room
from hearnav.scene.grid import Grid
from hearnav.scene.materials import BAND_CENTERS_HZ
from hearnav.scene.model import Scene

#: Cells synthesised per batch (fixed, so that the tail noise does not depend on anything but the seed).
CHUNK_CELLS = 16
# Bands whose decay sets the response length: 125 Hz to 4 kHz.
_LENGTH_BANDS = slice(0, 6)
#: Cells (spread over the plan: the first tail probes) whose rendered responses give the measured RT60.
MEASURED_CELLS = 4


@dataclass(frozen=True)
class Responses:
    """Every binaural response of a scene, split into a heading-dependent early part and a diffuse tail.

    The response at (cell, heading, spot) is ``early`` zero-padded to ``length`` plus ``tail``. Both start
    ``lead`` samples before emission time zero would put them; a source's reference signal carries the same
    lead.
    """

    fs: int
    lead: int
    centres: np.ndarray  # (C, 2) cell centres
    spot_names: tuple[str, ...]
    early: np.ndarray  # (C, H, S, 2, Le) float16
    tail: np.ndarray  # (C, S, 2, L) float16
    first_delay: np.ndarray  # (C, S) float32 seconds: earliest path at the head centre (no lead)
    first_gain: np.ndarray  # (C, S) float32 broadband amplitude of the earliest path
    first_azimuth: np.ndarray  # (C, S) float32 radians, plan frame: the direction the earliest path arrives from
    line_of_sight: np.ndarray  # (C, S) bool: the direct path is not blocked
    rt60: np.ndarray  # (n_bands,) seconds: Schroeder T30 of the rendered responses (0: not measurable)

    @property
    def n_headings(self) -> int:
        return int(self.early.shape[1])

    @property
    def length(self) -> int:
        return int(self.tail.shape[-1])

    def response(self, cell: int, heading: int, spot: int) -> np.ndarray:
        """(2, length) float32 binaural response."""
        out = self.tail[cell, spot].astype(np.float32)
        out[:, : self.early.shape[-1]] += self.early[cell, heading, spot].astype(np.float32)
        return out

    def arrays(self) -> dict[str, np.ndarray]:
        """Every array, by field name, for storage."""
        return {k: np.asarray(v) for k, v in self.__dict__.items()}


def _pair_paths(images: list[room.ImageSources], receivers: np.ndarray, spots: np.ndarray, air: np.ndarray,
                max_delay: float, c: float) -> tuple[PathSet, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Visible early paths of every (cell, spot) pair, ordered cell-major; plus each pair's earliest path (delay,
    gain, horizontal direction of arrival in the plan frame) and line of sight.

    A pair with no visible early path takes the straight line's delay, 1/r gain and direction.
    """
    cells = np.arange(len(receivers))
    vectors, gains, owner, first_delay, first_gain, first_azimuth, los = [], [], [], [], [], [], []
    n_spots = len(images)
    for qi, cell in enumerate(cells):
        for s, ims in enumerate(images):
            vis = ims.visible[cell]
            vec = ims.positions[:, vis].T - receivers[cell]
            r = np.linalg.norm(vec, axis=1)
            keep = r / c <= max_delay
            vec, r = vec[keep], r[keep]
            g = (ims.damping[:, vis][:, keep] * np.exp(-0.5 * air[:, None] * r)).T / np.maximum(r, 0.1)[:, None]
            vectors.append(vec)
            gains.append(g)
            owner.append(np.full(len(r), qi * n_spots + s))
            k = int(np.argmin(r)) if len(r) else -1
            straight = max(float(np.linalg.norm(spots[s] - receivers[cell])), 0.1)
            first_delay.append(r[k] / c if k >= 0 else straight / c)
            first_gain.append(float(g[k].mean()) if k >= 0 else 1.0 / straight)
            arrival = vec[k] if k >= 0 else spots[s] - receivers[cell]  # from the listener towards the source
            first_azimuth.append(float(np.arctan2(arrival[1], arrival[0])))
            los.append(bool(np.any(ims.orders[vis][keep] == 0)))
    paths = PathSet(np.concatenate(vectors), np.concatenate(gains), np.concatenate(owner), len(cells) * n_spots)
    return paths, np.asarray(first_delay), np.asarray(first_gain), np.asarray(first_azimuth), np.asarray(los)


def direct_fit(distance: float, head_radius: float, c: float, fs: int) -> int:
    """Samples a response needs so that a direct path over ``distance`` metres reaches both ears whole.

    The inverse of the path cut in :func:`build_responses`: a path is kept when its delay at the head centre is
    at most ``(length - RESPONSE_LEAD - FD_TAPS) / fs - 2 * head_radius / c``.
    """
    return int(np.ceil((distance / c + 2 * head_radius / c) * fs)) + RESPONSE_LEAD + FD_TAPS + 1


def _decay_rt60(hist: np.ndarray, bin_s: float) -> np.ndarray:
    """Per-band RT60 of the pooled late histograms (T30, else T20; 0 where there is no decay to fit).

    Sets the response length before anything is rendered; the stored RT60 is measured afterwards.
    """
    pooled = hist.sum(axis=(0, 1))  # (B, n_bins)
    out = []
    for band in pooled:
        rt = 0.0
        if band.sum() > 0:
            edc = reverberation.schroeder_db(band)
            for evaluation in ("T30", "T20"):
                try:
                    rt = reverberation.fit_decay(edc, 1 / bin_s, evaluation)
                    break
                except ValueError:
                    continue
        out.append(rt)
    return np.asarray(out)


def _decay_end(hist: np.ndarray, bin_s: float, decay_db: float) -> float:
    """Seconds from emission until the slowest band's pooled traced decay curve is ``decay_db`` down.

    Parameters
    ----------
    hist : (n_probes, n_spots, n_bands, n_bins) traced energies.
    bin_s : histogram bin width in seconds.
    decay_db : how far down, dB (the histogram's end where the curve never gets there).
    """
    pooled = hist.sum(axis=(0, 1))[_LENGTH_BANDS]
    end = 0.0
    for band in pooled:
        if band.sum() > 0:
            below = np.nonzero(reverberation.schroeder_db(band) <= -decay_db)[0]
            end = max(end, (below[0] + 1 if below.size else band.size) * bin_s)
    return end


def measured_rt60(early: np.ndarray, tail: np.ndarray, cells: np.ndarray, fs: int) -> np.ndarray:
    """Per-band Schroeder T30 of the rendered responses, averaged over a few cells and every spot.

    Parameters
    ----------
    early : (C, H, S, 2, Le) early parts; heading 0 is used.
    tail : (C, S, 2, L) tails.
    cells : cell ids to measure at.
    fs : sample rate in Hz.

    Returns
    -------
    (n_bands,) seconds, 0 in bands no response decays far enough to measure (ISO 3382-1 T30), as in
    :func:`_decay_rt60` (and so that equal builds compare equal element by element).
    """
    out = tail[cells].astype(np.float64)  # (n, S, 2, L)
    out[..., : early.shape[-1]] += early[cells, 0].astype(np.float64)
    return np.nan_to_num(decay.mean_t30(out.reshape(-1, 2, out.shape[-1]), fs, BAND_CENTERS_HZ), nan=0.0)


def build_responses(scene: Scene, grid: Grid, settings: AcousticSettings,
                    progress: Callable[[int], None] | None = None) -> Responses:
    """Simulate the room and synthesise every response of a scene. ``progress(n)`` is called with cells done."""
    fs, c = settings.fs, settings.speed_of_sound
    receivers = np.c_[grid.centres, np.full(grid.n_cells, scene.ear_height)]
    headings = heading_angles(settings.n_headings)
    from hearnav.acoustics import room  # pyroomacoustics loads only when responses are simulated

    images = room.image_sources(scene, settings, receivers)
    probe_cells, owner = choose_probes(grid, settings.probe_spacing)
    hist, bin_s, _ = room.tail_histograms(scene, settings, receivers[probe_cells])
    hist = smooth_histogram(hist)
    traced = _decay_rt60(hist, bin_s)
    spots = np.array([s.position for s in scene.spots])
    direct = np.linalg.norm(receivers[:, None, :] - spots[None, :, :], axis=2)  # (C, S)
    # The length follows the slowest traced decay down to decay_db: the fitted slope from the latest direct
    # arrival, or the traced decay curve itself (moved to the cell farthest behind its probe), whichever ends
    # later. max_response_s is only a guard (the tracer runs that long, see room.tail_histograms).
    behind = float(np.max(direct - direct[probe_cells][owner], initial=0.0)) / c
    reach = max(direct.max() / c + float(traced[_LENGTH_BANDS].max()) * settings.decay_db / 60,
                _decay_end(hist, bin_s, settings.decay_db) + behind)
    length = int(np.ceil(min(settings.max_response_s, reach) * fs)) + RESPONSE_LEAD
    # Every direct path fits, whatever the decay (in a free field there is none): its delay at the far ear and
    # the fractional-delay filter's taps come after the farthest cell-spot distance.
    length = max(length, direct_fit(direct.max(), settings.head_radius, c, fs))
    max_delay = (length - RESPONSE_LEAD - FD_TAPS) / fs - 2 * settings.head_radius / c
    air = room.air_coefficients(settings)
    paths, first_delay, first_gain, first_azimuth, los = _pair_paths(images, receivers, spots, air, max_delay, c)
    delays = np.linalg.norm(paths.vectors, axis=1) / c
    early_len = min(length, int(np.ceil((delays.max(initial=0) + settings.head_radius / c) * fs)) +
                    RESPONSE_LEAD + FD_TAPS + 8)
    n_s, n_c = len(scene.spots), grid.n_cells
    early = np.zeros((n_c, settings.n_headings, n_s, 2, early_len), np.float16)
    tail = np.zeros((n_c, n_s, 2, length), np.float16)
    probe_dist = direct[probe_cells]  # (n_probes, S)
    hbss = int(round(bin_s * fs))
    seeds = np.random.SeedSequence([settings.seed, int(scene.digest[:8], 16)]).spawn((n_c + CHUNK_CELLS - 1) // CHUNK_CELLS)
    for k, start in enumerate(range(0, n_c, CHUNK_CELLS)):
        cells = np.arange(start, min(start + CHUNK_CELLS, n_c))
        sel = np.isin(paths.owner // n_s, cells)
        chunk = PathSet(paths.vectors[sel], paths.gains[sel], paths.owner[sel] - start * n_s, len(cells) * n_s)
        early_parts = early_fast(chunk, headings, fs, c, settings.head_radius, early_len, RESPONSE_LEAD)
        early[cells] = early_parts.reshape(len(cells), n_s, settings.n_headings, 2, early_len).transpose(0, 2, 1, 3, 4)
        pair_hist = hist[owner[cells]].reshape(len(cells) * n_s, *hist.shape[2:])
        shift = ((direct[cells] - probe_dist[owner[cells]]) / c * fs).reshape(-1) + RESPONSE_LEAD
        tails = binaural_tails(pair_hist, hbss, length, shift, fs, np.random.default_rng(seeds[k]),
                               air * c / fs if settings.air_absorption else None, settings.head_radius, c)
        tail[cells] = tails.reshape(len(cells), n_s, 2, length).astype(np.float16)
        if progress:
            progress(len(cells))
    measured = measured_rt60(early, tail, probe_cells[:MEASURED_CELLS], fs)
    return Responses(fs, RESPONSE_LEAD, grid.centres, tuple(s.name for s in scene.spots), early, tail,
                     first_delay.reshape(n_c, n_s).astype(np.float32), first_gain.reshape(n_c, n_s).astype(np.float32),
                     first_azimuth.reshape(n_c, n_s).astype(np.float32),
                     los.reshape(n_c, n_s), measured)

