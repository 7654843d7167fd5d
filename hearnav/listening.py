"""The listening API: what a two-eared listener hears at a pose, window by window.

Given a scene's responses, the sources (a spot and a dry signal each) and a time window, it returns the
binaural mixture, the target's early image and full image at the two ears (the references of the score,
:mod:`hearnav.acoustics.early`), and optionally every source's image. Mixing is FFT convolution with cached
response spectra over the window plus everything emitted a response length before it, so the reverberant tail
of earlier sound reaches the listener inside the window. After a move, the first ``fade`` samples of a window
cross-fade from the old pose's output to the new one's, so a move never clicks.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.fft as sfft

from collections import OrderedDict

from hearnav.acoustics.early import early_window, onset
from hearnav.acoustics.responses import Responses
from hearnav.errors import ConfigError

#: Default cross-fade after a move, in seconds.
FADE_S = 0.02
#: Early-part spectra a world keeps (a few pages each; the poses of an episode's neighbourhood).
EARLY_CACHE = 256
#: Rows pocketfft transforms together (float32 vector width): mixing pads its row counts to multiples.
ROW_BLOCK = 4


@dataclass(frozen=True)
class Source:
    """A sound source: a spot index and its dry signal (float, from emission time zero)."""

    spot: int
    signal: np.ndarray


@dataclass(frozen=True)
class Window:
    """What the listener hears in one window."""

    start: int  # first sample, in emission time
    mixture: np.ndarray  # (2, n)
    early: np.ndarray  # (2, n) the target's early image at the two ears: the score's reference
    target_image: np.ndarray  # (2, n) the target's full (reverberant) image at the two ears
    images: np.ndarray | None  # (n_sources, 2, n) every source's image, when asked for

    def part(self, first: int, stop: int | None = None) -> Window:
        """Samples [first, stop) of this window (views), as a window starting ``first`` samples later."""
        cut = slice(first, stop)
        return Window(self.start + first, self.mixture[..., cut], self.early[..., cut], self.target_image[..., cut],
                      _part(self.images, cut))


def _part(a: np.ndarray | None, cut: slice) -> np.ndarray | None:
    return None if a is None else a[..., cut]


@dataclass(frozen=True)
class ResponseSpectra:
    """A scene's responses on the mixing FFT grid of one window length and cross-fade: the tables
    :class:`ListeningWorld` mixes from (memory maps of the store, or in memory).

    Every spectrum is complex64 (single precision), the rfft of the float32 response on ``n_fft`` points.
    """

    fs: int
    lead: int  # samples every response starts late (Responses.lead)
    length: int  # response length, samples
    window_len: int
    fade: int
    spectra: np.ndarray  # (C, H, S, 2, F) response spectra

    @staticmethod
    def fft_size(window_len: int, fade: int, length: int) -> int:
        """Points of the mixing FFT: a fast length holding a window, its cross-fade and a response."""
        return sfft.next_fast_len(window_len + fade + length - 1, real=True)

    @classmethod
    def compute(cls, responses: Responses, window_len: int, fade_s: float = FADE_S) -> ResponseSpectra:
        """The spectra of every response in memory (for use without the store, see :mod:`hearnav.tables`)."""
        window_len, fade = check_window(window_len), int(round(fade_s * responses.fs))
        c, h, s = responses.early.shape[:3]
        n_bins = cls.fft_size(window_len, fade, responses.length) // 2 + 1
        spectra = np.empty((c, h, s, 2, n_bins), np.complex64)
        fill_spectra(responses, window_len, fade, spectra)
        return cls(responses.fs, responses.lead, responses.length, window_len, fade, spectra)


def check_window(window_len: int) -> int:
    """A window length in samples, checked positive."""
    if window_len <= 0:
        raise ConfigError(f"window_len must be a positive number of samples (got {window_len})")
    return int(window_len)


def fill_spectra(responses: Responses, window_len: int, fade: int, spectra: np.ndarray) -> None:
    """Write every response spectrum (C, H, S, 2, F) of a scene's responses on the mixing FFT grid, one cell at a
    time (the output may be a memory map)."""
    h = responses.early.shape[1]
    n_fft = ResponseSpectra.fft_size(window_len, fade, responses.length)
    for cell in range(responses.early.shape[0]):
        resp = np.repeat(responses.tail[cell][None].astype(np.float32), h, axis=0)  # (H, S, 2, L)
        resp[..., : responses.early.shape[-1]] += responses.early[cell].astype(np.float32)
        spectra[cell] = sfft.rfft(resp, n_fft, axis=-1)


def early_spectrum(spectrum: np.ndarray, n_fft: int, length: int, fs: int) -> np.ndarray:
    """(2, F) complex64 spectrum of a response's early part (:mod:`hearnav.acoustics.early`) from the (2, F)
    spectrum of the whole response on an ``n_fft``-point grid holding its ``length`` samples."""
    response = sfft.irfft(spectrum, n_fft, axis=-1)[:, :length]
    w = early_window(length, onset(response), fs).astype(np.float32)
    return sfft.rfft(response * w, n_fft, axis=-1).astype(np.complex64, copy=False)


class ListeningWorld:
    """A scene's response spectra ready for FFT mixing of windows (:class:`ResponseSpectra`)."""

    def __init__(self, tables: ResponseSpectra):
        self.tables = tables
        self.fs = tables.fs
        self.window_len = check_window(tables.window_len)
        self.fade = tables.fade
        self.span = self.window_len + self.fade  # samples mixed per call
        self.n_fft = ResponseSpectra.fft_size(self.window_len, self.fade, tables.length)
        self.history = tables.length - 1  # past samples each mix needs
        self._spectra = tables.spectra
        self._early: OrderedDict[tuple[int, int, int], np.ndarray] = OrderedDict()

    @classmethod
    def of(cls, responses: Responses, window_len: int, fade_s: float = FADE_S) -> ListeningWorld:
        """A world that computes its spectra in memory (:meth:`ResponseSpectra.compute`)."""
        return cls(ResponseSpectra.compute(responses, window_len, fade_s))

    @property
    def warmup(self) -> int:
        """First sample at which a window has a full history (sources start at sample 0)."""
        return self.history

    def signal_length(self, n_windows: int) -> int:
        """Dry samples each source needs for ``n_windows`` windows starting at :attr:`warmup`."""
        return self.warmup + n_windows * self.window_len + self.fade

    def spectrum(self, cell: int, heading: int, spot: int) -> np.ndarray:
        """(2, F) complex64 spectrum of a response (read-only)."""
        return self._spectra[cell, heading, spot]

    def early_spectrum(self, cell: int, heading: int, spot: int) -> np.ndarray:
        """(2, F) complex64 spectrum of a response's early part (:func:`early_spectrum`), kept for the
        :data:`EARLY_CACHE` poses used last."""
        key = (int(cell), int(heading), int(spot))
        spec = self._early.get(key)
        if spec is None:
            spec = early_spectrum(self.spectrum(*key), self.n_fft, self.tables.length, self.fs)
            spec.flags.writeable = False
            self._early[key] = spec
            if len(self._early) > EARLY_CACHE:
                self._early.popitem(last=False)
        else:
            self._early.move_to_end(key)
        return spec

    def segment_spectra(self, sources: list[Source], start: int) -> np.ndarray:
        """(R, F) spectra of each dry signal over [start - history, start + span); rows past the sources are zero.

        R is the number of sources rounded up to a multiple of :data:`ROW_BLOCK`: pocketfft transforms that
        many float32 rows together with vector instructions, so four rows cost about as much as one.
        """
        lo, hi = start - self.history, start + self.span
        segs = np.zeros((_rows(len(sources)), self.n_fft), np.float32)
        for i, src in enumerate(sources):
            a, b = max(lo, 0), min(hi, len(src.signal))
            if b > a:
                segs[i, a - lo : b - lo] = src.signal[a:b]
        return sfft.rfft(segs, axis=-1)

    def mix(self, cell: int, heading: int, sources: list[Source], start: int, target: int = 0,
            all_images: bool = False, seg: np.ndarray | None = None) -> Window:
        """The span [start, start + window + fade) heard at a pose, with no cross-fade.

        The mixture, the target's early image and its full image (two rows each) come out of one inverse FFT
        of a row block.
        """
        seg = self.segment_spectra(sources, start) if seg is None else seg
        keep = slice(self.history, self.history + self.span)
        out = np.empty((_rows(6), self.n_fft // 2 + 1), np.complex64)
        out[6:] = 0  # padding rows
        np.multiply(seg[target], self.spectrum(cell, heading, sources[target].spot), out=out[4:6])
        out[0:2] = out[4:6]
        for i, s in enumerate(sources):
            if i != target:
                out[0:2] += seg[i] * self.spectrum(cell, heading, s.spot)
        np.multiply(seg[target], self.early_spectrum(cell, heading, sources[target].spot), out=out[2:4])
        rows = sfft.irfft(out, self.n_fft, axis=-1)[:6, keep]
        images = None
        if all_images:
            per_source = np.stack([seg[i] * self.spectrum(cell, heading, s.spot) for i, s in enumerate(sources)])
            images = sfft.irfft(per_source, self.n_fft, axis=-1)[..., keep]
        return Window(start, rows[0:2], rows[2:4], rows[4:6], images)


def _rows(n: int) -> int:
    """n rounded up to a multiple of ROW_BLOCK."""
    return -(-n // ROW_BLOCK) * ROW_BLOCK


def _ramp(n: int) -> np.ndarray:
    """Raised-cosine ramp from 0 to 1 over n samples."""
    return 0.5 - 0.5 * np.cos(np.pi * (np.arange(n) + 0.5) / n) if n else np.zeros(0)


class ListeningSession:
    """Consecutive windows for one set of sources, with cross-fades between poses."""

    def __init__(self, world: ListeningWorld, sources: list[Source], target: int = 0, all_images: bool = False):
        if not 0 <= target < len(sources):
            raise ConfigError(f"target must index one of the {len(sources)} sources (got {target})")
        self.world, self.sources, self.target, self.all_images = world, list(sources), target, all_images
        self.time = world.warmup
        self._tail: Window | None = None
        self._fade_out = (1.0 - _ramp(world.fade)).astype(np.float32)
        self._seg: np.ndarray | None = None

    def _current_seg(self) -> np.ndarray:
        if self._seg is None:
            self._seg = self.world.segment_spectra(self.sources, self.time)
        return self._seg

    def peek(self, cell: int, heading: int) -> Window:
        """The current window at any pose, without moving or advancing time (no cross-fade)."""
        win = self.world.mix(cell, heading, self.sources, self.time, self.target, self.all_images,
                             self._current_seg())
        return win.part(0, self.world.window_len)

    def listen(self, cell: int, heading: int) -> Window:
        """The current window at a pose, cross-faded from the previous pose; then advance one window."""
        w = self.world
        span = w.mix(cell, heading, self.sources, self.time, self.target, self.all_images, self._current_seg())
        if self._tail is not None and w.fade:
            span = _blend(self._tail, span, self._fade_out)
        out = span.part(0, w.window_len)
        self._tail = span.part(w.window_len)
        self.time += w.window_len
        self._seg = None
        return out


def _blend(old: Window, new: Window, fade_out: np.ndarray) -> Window:
    """Cross-fade the first len(fade_out) samples of ``new`` from ``old``, in place (``new`` is freshly mixed):
    old * fade_out + new * (1 - fade_out)."""
    m = len(fade_out)
    for v, o in ((new.mixture, old.mixture), (new.early, old.early), (new.target_image, old.target_image),
                 (new.images, old.images)):
        if v is not None and o is not None:
            head = v[..., :m]
            head += (o[..., :m] - head) * fade_out
    return new
