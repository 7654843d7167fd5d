"""The listening API: what a two-eared listener hears at a pose, window by window.

Given a scene's responses, the sources (a spot and a dry signal each) and a time window, it returns the
binaural mixture, each source's image at the two ears and the target reference (the target's dry signal
delayed and scaled by its earliest arriving path, at the head centre). Mixing is FFT convolution with
cached response spectra over the window plus everything emitted a response length before it, so the
reverberant tail of earlier sound reaches the listener inside the window. After a move, the first
``fade`` samples of a window cross-fade from the old pose's output to the new one's, so a move never clicks.
"""

from __future__ import annotations

from collections import OrderedDict
from dataclasses import dataclass

import numpy as np
import scipy.fft as sfft

from hearnav.acoustics.render import FD_TAPS, fd_taps
from hearnav.acoustics.responses import Responses
from hearnav.errors import ConfigError

#: Default cross-fade after a move, in seconds.
FADE_S = 0.02
#: Default memory budget of the response-spectrum cache, bytes.
SPECTRA_BYTES = 512 * 2**20
#: Rows pocketfft transforms together (float32 vector width): the render pads its row counts to multiples.
ROW_BLOCK = 4
#: Bytes per frequency bin of a precomputed response spectrum, by precision.
_BYTES_PER_BIN = {"single": 8, "half": 4}


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
    target_image: np.ndarray | None  # (2, n) the target's image at the two ears, when asked for
    reference: np.ndarray  # (n,) the target reference
    images: np.ndarray | None  # (n_sources, 2, n) every source's image, when asked for

    def part(self, first: int, stop: int | None = None) -> Window:
        """Samples [first, stop) of this window (views), as a window starting ``first`` samples later."""
        cut = slice(first, stop)
        return Window(self.start + first, self.mixture[..., cut], _part(self.target_image, cut),
                      self.reference[..., cut], _part(self.images, cut))


def _part(a: np.ndarray | None, cut: slice) -> np.ndarray | None:
    return None if a is None else a[..., cut]


class ListeningWorld:
    """A scene's responses ready for FFT mixing of windows of ``window`` samples."""

    def __init__(self, responses: Responses, window: int, fade_s: float = FADE_S, spectra_bytes: int = SPECTRA_BYTES):
        if window <= 0:
            raise ConfigError(f"window must be a positive number of samples (got {window})")
        self.responses = responses
        self.fs = responses.fs
        self.window = int(window)
        self.fade = int(round(fade_s * self.fs))
        self.span = self.window + self.fade  # samples rendered per call
        self.n_fft = sfft.next_fast_len(self.span + responses.length - 1, real=True)
        self.history = responses.length - 1  # past samples each render needs
        self._spectra: OrderedDict[tuple[int, int, int], np.ndarray] = OrderedDict()
        self._max_spectra = max(16, spectra_bytes // (2 * (self.n_fft // 2 + 1) * 8))
        self._table: np.ndarray | None = None
        self._references: np.ndarray | None = None  # (C, S, F) reference filter spectra, with the table
        self._reference_fits: np.ndarray | None = None  # (C, S) bool: the filter lies within the history

    @property
    def warmup(self) -> int:
        """First sample at which a window has a full history (sources start at sample 0)."""
        return self.history

    def signal_length(self, n_windows: int) -> int:
        """Dry samples each source needs for ``n_windows`` windows starting at :attr:`warmup`."""
        return self.warmup + n_windows * self.window + self.fade

    def table_bytes(self, precision: str = "single") -> int:
        """Memory that :meth:`precompute` needs for every response spectrum and reference filter spectrum, in
        single or half precision."""
        c, h, s = self.responses.early.shape[:3]
        return c * s * (h * 2 + 1) * (self.n_fft // 2 + 1) * _BYTES_PER_BIN[_check_precision(precision)]

    def precompute(self, precision: str = "single") -> None:
        """Compute every response spectrum and reference filter spectrum once and keep them, so no step pays an
        FFT for one.

        ``"single"`` keeps complex64 spectra, ready to multiply; ``"half"`` keeps them in float16 at half the
        memory, converted back on every use.
        """
        c, h, s = self.responses.early.shape[:3]
        n_bins = self.n_fft // 2 + 1
        half = _check_precision(precision) == "half"
        table = _empty_spectra((c, h, s, 2, n_bins), half)
        references = _empty_spectra((c, s, n_bins), half)
        fits = np.zeros((c, s), bool)
        for cell in range(c):
            resp = np.repeat(self.responses.tail[cell][None].astype(np.float32), h, axis=0)  # (H, S, 2, L)
            resp[..., : self.responses.early.shape[-1]] += self.responses.early[cell].astype(np.float32)
            _store(table, cell, sfft.rfft(resp, self.n_fft, axis=-1))
            filters = np.zeros((s, self.n_fft), np.float32)
            for spot in range(s):
                first, taps = self._reference_filter(cell, spot)
                fits[cell, spot] = self._filter_fits(first)
                if fits[cell, spot]:
                    filters[spot, first: first + FD_TAPS] = taps
            _store(references, cell, sfft.rfft(filters, axis=-1))
        self._table, self._references, self._reference_fits = table, references, fits

    def spectrum(self, cell: int, heading: int, spot: int) -> np.ndarray:
        """(2, F) complex64 spectrum of a response: from the precomputed table, else a bounded LRU cache."""
        if self._table is not None:
            return _complex(self._table[cell, heading, spot])
        key = (cell, heading, spot)
        spec = self._spectra.get(key)
        if spec is None:
            spec = sfft.rfft(self.responses.response(cell, heading, spot), self.n_fft, axis=-1).astype(np.complex64)
            self._remember(key, spec)
        else:
            self._spectra.move_to_end(key)
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

    def render(self, cell: int, heading: int, sources: list[Source], start: int, target: int = 0,
               all_images: bool = False, seg: np.ndarray | None = None, target_image: bool = True) -> Window:
        """The span [start, start + window + fade) heard at a pose, with no cross-fade.

        The mixture (2 rows), the reference (1) and the target image (2, when asked for) come out of one
        inverse FFT of a row block.
        """
        seg = self.segment_spectra(sources, start) if seg is None else seg
        keep = slice(self.history, self.history + self.span)
        n = 3 + 2 * bool(target_image)
        out = np.empty((_rows(n), self.n_fft // 2 + 1), np.complex64)
        out[n:] = 0  # padding rows
        np.multiply(seg[target], self.spectrum(cell, heading, sources[target].spot), out=out[0:2])
        if target_image:
            out[3:5] = out[0:2]
        for i, s in enumerate(sources):
            if i != target:
                out[0:2] += seg[i] * self.spectrum(cell, heading, s.spot)
        ref_spec = self.reference_spectrum(cell, sources[target].spot)
        if ref_spec is not None:
            np.multiply(seg[target], ref_spec, out=out[2])
        else:
            out[2] = 0
        rows = sfft.irfft(out, self.n_fft, axis=-1)[:n, keep]
        ref = rows[2] if ref_spec is not None else self.reference(cell, sources[target], start)
        images = None
        if all_images:
            per_source = np.stack([seg[i] * self.spectrum(cell, heading, s.spot) for i, s in enumerate(sources)])
            images = sfft.irfft(per_source, self.n_fft, axis=-1)[..., keep]
        return Window(start, rows[0:2], rows[3:5] if target_image else None, ref, images)

    def _reference_filter(self, cell: int, spot: int) -> tuple[int, np.ndarray]:
        """First tap and (FD_TAPS,) taps of the reference filter: the earliest path's gain and delay plus the lead."""
        delay = float(self.responses.first_delay[cell, spot]) * self.fs + self.responses.lead
        first, taps = fd_taps(np.asarray(delay))
        return int(first), float(self.responses.first_gain[cell, spot]) * taps

    def reference_spectrum(self, cell: int, spot: int) -> np.ndarray | None:
        """(F,) complex64 spectrum of the reference filter on the render's FFT grid (cached), or None when the
        filter reaches past the render's history (the reference is then filtered in the time domain)."""
        if self._table is not None:
            return _complex(self._references[cell, spot]) if self._reference_fits[cell, spot] else None
        key = (cell, -1, spot)
        spec = self._spectra.get(key)
        if spec is None:
            first, taps = self._reference_filter(cell, spot)
            if not self._filter_fits(first):
                return None
            h = np.zeros(self.n_fft, np.float32)
            h[first : first + FD_TAPS] = taps
            spec = sfft.rfft(h).astype(np.complex64)
            self._remember(key, spec)
        else:
            self._spectra.move_to_end(key)
        return spec

    def _filter_fits(self, first: int) -> bool:
        """Whether a reference filter starting at tap ``first`` lies within the render's history."""
        return 0 <= first and first + FD_TAPS <= self.history + 1

    def _remember(self, key: tuple[int, int, int], spec: np.ndarray) -> None:
        self._spectra[key] = spec
        if len(self._spectra) > self._max_spectra:
            self._spectra.popitem(last=False)

    def reference(self, cell: int, source: Source, start: int) -> np.ndarray:
        """(span,) the source's dry signal delayed and scaled by its earliest path, with the responses' lead.

        The fractional delay uses the same windowed-sinc filter as the responses, so the reference is one
        time-invariant filter of the dry signal and continuous across windows. :meth:`render` applies it in
        the frequency domain; this is the time-domain form.
        """
        first, taps = self._reference_filter(cell, source.spot)
        lo = start - first - FD_TAPS + 1  # oldest dry sample needed
        x = np.zeros(self.span + FD_TAPS - 1, np.float64)
        a, b = max(lo, 0), min(start + self.span - first, len(source.signal))
        if b > a:
            x[a - lo : b - lo] = source.signal[a:b]
        return np.convolve(x, taps, mode="valid").astype(np.float32)


def _rows(n: int) -> int:
    """n rounded up to a multiple of ROW_BLOCK."""
    return -(-n // ROW_BLOCK) * ROW_BLOCK


def _empty_spectra(shape: tuple[int, ...], half: bool) -> np.ndarray:
    """An uninitialised table of complex spectra: complex64, or float16 (real, imaginary) pairs when ``half``."""
    return np.empty((*shape, 2), np.float16) if half else np.empty(shape, np.complex64)


def _store(table: np.ndarray, index: int, spectra: np.ndarray) -> None:
    """Write complex spectra into row ``index`` of a table made by :func:`_empty_spectra`."""
    if table.dtype == np.float16:
        table[index] = spectra.astype(np.complex64).view(np.float32).reshape(table[index].shape)
    else:
        table[index] = spectra


def _complex(entry: np.ndarray) -> np.ndarray:
    """A table entry as complex64 spectra (a view in single precision, converted from half)."""
    return entry if entry.dtype == np.complex64 else entry.astype(np.float32).view(np.complex64)[..., 0]


def _check_precision(precision: str) -> str:
    if precision not in _BYTES_PER_BIN:
        raise ConfigError(f"precision must be one of {', '.join(map(repr, _BYTES_PER_BIN))} (got {precision!r})")
    return precision


def _ramp(n: int) -> np.ndarray:
    """Raised-cosine ramp from 0 to 1 over n samples."""
    return 0.5 - 0.5 * np.cos(np.pi * (np.arange(n) + 0.5) / n) if n else np.zeros(0)


class ListeningSession:
    """Consecutive windows for one set of sources, with cross-fades between poses."""

    def __init__(self, world: ListeningWorld, sources: list[Source], target: int = 0, all_images: bool = False,
                 target_image: bool = True):
        if not 0 <= target < len(sources):
            raise ConfigError(f"target must index one of the {len(sources)} sources (got {target})")
        self.world, self.sources, self.target, self.all_images = world, list(sources), target, all_images
        self.target_image = target_image
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
        win = self.world.render(cell, heading, self.sources, self.time, self.target, self.all_images,
                                self._current_seg(), self.target_image)
        return win.part(0, self.world.window)

    def listen(self, cell: int, heading: int) -> Window:
        """The current window at a pose, cross-faded from the previous pose; then advance one window."""
        w = self.world
        span = w.render(cell, heading, self.sources, self.time, self.target, self.all_images, self._current_seg(),
                        self.target_image)
        if self._tail is not None and w.fade:
            span = _blend(self._tail, span, self._fade_out)
        out = span.part(0, w.window)
        self._tail = span.part(w.window)
        self.time += w.window
        self._seg = None
        return out


def _blend(old: Window, new: Window, fade_out: np.ndarray) -> Window:
    """Cross-fade the first len(fade_out) samples of ``new`` from ``old``, in place (``new`` is a fresh render):
    old * fade_out + new * (1 - fade_out)."""
    m = len(fade_out)
    for v, o in ((new.mixture, old.mixture), (new.reference, old.reference), (new.target_image, old.target_image),
                 (new.images, old.images)):
        if v is not None and o is not None:
            head = v[..., :m]
            head += (o[..., :m] - head) * fade_out
    return new
