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

from hearnav.acoustics.early import cut_length, early_window, onsets
from hearnav.acoustics.responses import Responses
from hearnav.errors import ConfigError

#: Default cross-fade after a move, in seconds.
FADE_S = 0.02
#: Poses whose early-part spectra a world keeps (about 40 KB each at 16 kHz).
EARLY_CACHE = 512
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
    """A scene's responses on the mixing FFT grid of one window length and cross-fade, and their early parts: the
    tables :class:`ListeningWorld` mixes from (memory maps of the store, or in memory).

    Every spectrum is complex64 (single precision), the rfft of the float32 response on ``n_fft`` points. The
    early parts (:mod:`hearnav.acoustics.early`) are float32 responses, short enough to be applied on a grid of
    their own.
    """

    fs: int
    lead: int  # samples every response starts late (Responses.lead)
    length: int  # response length, samples
    window_len: int
    fade: int
    spectra: np.ndarray  # (C, H, S, 2, F) response spectra
    early: np.ndarray  # (C, H, S, 2, Le) float32 early parts of the responses, Le samples

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
        early = np.empty((c, h, s, 2, early_length(responses)), np.float32)
        fill_spectra(responses, window_len, fade, spectra, early)
        return cls(responses.fs, responses.lead, responses.length, window_len, fade, spectra, early)


def check_window(window_len: int) -> int:
    """A window length in samples, checked positive."""
    if window_len <= 0:
        raise ConfigError(f"window_len must be a positive number of samples (got {window_len})")
    return int(window_len)


def _responses_of(responses: Responses, cell: int) -> np.ndarray:
    """(H, S, 2, L) float32 responses of one cell."""
    h = responses.early.shape[1]
    resp = np.repeat(responses.tail[cell][None].astype(np.float32), h, axis=0)
    resp[..., : responses.early.shape[-1]] += responses.early[cell].astype(np.float32)
    return resp


def early_length(responses: Responses) -> int:
    """Samples of the early parts of a scene's responses: up to the latest boundary of any (at most all)."""
    latest = max(int(onsets(_responses_of(responses, cell)).max()) for cell in range(responses.early.shape[0]))
    return min(cut_length(latest, responses.fs), responses.length)


def fill_spectra(responses: Responses, window_len: int, fade: int, spectra: np.ndarray, early: np.ndarray) -> None:
    """Write every response spectrum (C, H, S, 2, F) of a scene's responses on the mixing FFT grid and every
    response's early part (C, H, S, 2, Le), one cell at a time (the outputs may be memory maps)."""
    n_fft = ResponseSpectra.fft_size(window_len, fade, responses.length)
    n_early = early.shape[-1]
    for cell in range(responses.early.shape[0]):
        resp = _responses_of(responses, cell)  # (H, S, 2, L)
        spectra[cell] = sfft.rfft(resp, n_fft, axis=-1)
        w = early_window(n_early, onsets(resp), responses.fs)  # (H, S, Le)
        early[cell] = resp[..., :n_early] * w[:, :, None, :].astype(np.float32)


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
        self._spectra, self._early = tables.spectra, tables.early
        self.early_len = int(tables.early.shape[-1])
        self.n_early = sfft.next_fast_len(self.span + self.early_len - 1, real=True)  # the early image's grid
        self._buffers: dict[str, np.ndarray] = {}
        self._early_specs: dict[tuple[int, int, int], np.ndarray] = {}  # early-part spectra, most recent last
        self._dry: tuple[Source, int, np.ndarray] | None = None  # the dry target's spectrum on the early grid

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

    def segment_spectra(self, sources: list[Source], start: int) -> np.ndarray:
        """(R, F) spectra of each dry signal over [start - history, start + span); rows past the sources are zero.

        R is the number of sources rounded up to a multiple of :data:`ROW_BLOCK`: pocketfft transforms that
        many float32 rows together with vector instructions, so four rows cost about as much as one.
        """
        lo, hi = start - self.history, start + self.span
        segs = self._scratch("segments", (_rows(len(sources)), self.n_fft), np.float32)
        segs[:] = 0
        for i, src in enumerate(sources):
            a, b = max(lo, 0), min(hi, len(src.signal))
            if b > a:
                segs[i, a - lo : b - lo] = src.signal[a:b]
        return sfft.rfft(segs, axis=-1)

    def _scratch(self, name: str, shape: tuple[int, ...], dtype: type) -> np.ndarray:
        """A work array this world reuses (its contents are not kept between calls): reusing it spares the
        operating system mapping and zeroing fresh pages for every window."""
        a = self._buffers.get(name)
        if a is None or a.shape != shape:
            a = self._buffers[name] = np.zeros(shape, dtype)
        return a

    def mix(self, cell: int, heading: int, sources: list[Source], start: int, target: int = 0,
            all_images: bool = False, seg: np.ndarray | None = None) -> Window:
        """The span [start, start + window + fade) heard at a pose, with no cross-fade.

        The mixture and the target's full image (two rows each) come out of one inverse FFT of a row block;
        the target's early image out of one forward and one inverse FFT on the short grid of the early parts
        (the dry target and the two ears' early parts in one row block).
        """
        seg = self.segment_spectra(sources, start) if seg is None else seg
        keep = slice(self.history, self.history + self.span)
        out = self._scratch("mixed", (ROW_BLOCK, self.n_fft // 2 + 1), np.complex64)
        np.multiply(seg[target], self.spectrum(cell, heading, sources[target].spot), out=out[2:4])
        out[0:2] = out[2:4]
        for i, s in enumerate(sources):
            if i != target:
                out[0:2] += seg[i] * self.spectrum(cell, heading, s.spot)
        rows = sfft.irfft(out, self.n_fft, axis=-1)[:, keep]
        images = None
        if all_images:
            per_source = np.stack([seg[i] * self.spectrum(cell, heading, s.spot) for i, s in enumerate(sources)])
            images = sfft.irfft(per_source, self.n_fft, axis=-1)[..., keep]
        early = self.early_image(cell, heading, sources[target], start)
        return Window(start, rows[0:2], early, rows[2:4], images)

    def early_image(self, cell: int, heading: int, source: Source, start: int) -> np.ndarray:
        """(2, span) the source's early image at the two ears over [start, start + span): its dry signal through
        the early parts of its responses (linear convolution on the early grid).

        The dry signal's spectrum is kept for the last (source, start), so the poses scored on one window (the
        paired reward's two, the look-ahead's many) transform it once; the early parts' spectra are kept for the
        ``EARLY_CACHE`` poses used last."""
        lead = self.early_len - 1
        if self._dry is None or self._dry[0] is not source or self._dry[1] != start:
            block = self._scratch("early", (self.n_early,), np.float32)
            a, b = max(start - lead, 0), min(start + self.span, len(source.signal))
            block[: self.span + lead] = 0
            if b > a:
                block[a - (start - lead): b - (start - lead)] = source.signal[a:b]
            self._dry = (source, start, sfft.rfft(block))
        spec = self._early_spectrum(cell, heading, source.spot) * self._dry[2]
        return sfft.irfft(spec, self.n_early, axis=-1)[:, lead: lead + self.span]

    def _early_spectrum(self, cell: int, heading: int, spot: int) -> np.ndarray:
        """(2, F_early) spectra of a pose's early parts on the early grid (kept for the poses used last)."""
        key = (cell, heading, spot)
        spec = self._early_specs.pop(key, None)
        if spec is None:
            spec = sfft.rfft(self._early[cell, heading, spot], self.n_early, axis=-1)
            if len(self._early_specs) >= EARLY_CACHE:
                del self._early_specs[next(iter(self._early_specs))]
        self._early_specs[key] = spec
        return spec


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

    def fork(self, windows_ahead: int = 0) -> ListeningSession:
        """A new session over the same sources, ``windows_ahead`` windows after this one's current window, with no
        previous pose (its first window has no cross-fade); this session is unchanged."""
        other = ListeningSession(self.world, self.sources, self.target, self.all_images)
        other.time = self.time + windows_ahead * self.world.window_len
        return other

    def advance(self) -> None:
        """Skip the current window without hearing it (the next window has no cross-fade)."""
        self.time += self.world.window_len
        self._tail = None
        self._seg = None

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
