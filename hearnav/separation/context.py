"""What a separator is told besides the mixture: the sampling rate, the target direction, STFT settings."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from hearnav.errors import ConfigError
from hearnav.physics.head import HEAD_RADIUS
from hearnav.physics.steering import das_conjugates, steering_vector
from hearnav.separation.stft import (
    check_stft_settings,
    istft,
    n_frames,
    stft,
    stft_freqs,
)


_REAL = (int, float, np.integer, np.floating)


@dataclass(frozen=True)
class SeparationContext:
    """Side information for one separator call.

    Attributes
    ----------
    fs : sampling rate, Hz.
    azimuth : target direction relative to the listener's heading, radians, counter-clockwise
        (0 straight ahead, +pi/2 to the left), horizontal plane.
    n_fft, hop : STFT frame and hop in samples (sqrt-Hann window; hop divides n_fft).
    target_image : optional privileged (2, n) early image of the target at the two ears (the score's
        reference); only separators registered with ``privileged=True`` ever see it (the registry hides it
        from the others).
    radius, c : head radius (m) and speed of sound (m/s) of the head model the steering vector uses.
    known_stft : optional ``(signal, spectrum)`` pair the caller has already transformed with these STFT
        settings (the environment's features need the mixture's STFT too); :meth:`stft` returns the spectrum
        for that very array instead of computing it again. The spectrum must be read-only.
    das : read-only (2, F) complex64 conjugate delay-and-sum weights towards ``azimuth`` on the STFT bins
        (:func:`hearnav.physics.steering.das_conjugates`). The environment gives those of its scene's tables;
        when none are given the context computes them from the head model.

    A separator takes the target's steering vector and delay-and-sum weights from :meth:`steering` and
    :meth:`das_conjugate`, never from anywhere else.
    """

    fs: float
    azimuth: float
    n_fft: int = 512
    hop: int = 128
    target_image: np.ndarray | None = field(default=None, compare=False, repr=False)
    radius: float = HEAD_RADIUS
    c: float = 343.0
    known_stft: tuple[np.ndarray, np.ndarray] | None = field(default=None, compare=False, repr=False)
    das: np.ndarray | None = field(default=None, compare=False, repr=False)
    _synthesised: list = field(default_factory=list, init=False, compare=False, repr=False)
    _steering: list = field(default_factory=list, init=False, compare=False, repr=False)
    _given_das: bool = field(default=False, init=False, compare=False, repr=False)

    def __post_init__(self) -> None:
        for name, value in (("fs", self.fs), ("azimuth", self.azimuth), ("radius", self.radius), ("c", self.c)):
            if not (type(value) is float or (isinstance(value, _REAL) and not isinstance(value, bool))) \
                    or not math.isfinite(value):
                raise ConfigError(f"SeparationContext.{name} must be a finite number, got {value!r}")
            if value <= 0 and name != "azimuth":
                raise ConfigError(f"SeparationContext.{name} must be positive, got {value!r}")
        if type(self.n_fft) is not int or type(self.hop) is not int or (self.n_fft, self.hop) != (512, 128):
            check_stft_settings(self.n_fft, self.hop)  # (the default settings are valid)
        if self.target_image is not None:
            shape = np.shape(self.target_image)
            if len(shape) != 2 or shape[0] != 2:
                raise ConfigError(f"SeparationContext.target_image must be a (2, n) array, got shape {shape}")
        if self.known_stft is not None:
            self._check_known_stft()
        object.__setattr__(self, "_given_das", self.das is not None)
        if self.das is None:
            w = das_conjugates(np.array([float(self.azimuth)]), self._freqs(), float(self.radius), float(self.c))[0]
            w.flags.writeable = False
            object.__setattr__(self, "das", w)
        else:
            self._check_das()

    def _check_known_stft(self) -> None:
        signal, spec = self.known_stft
        want = (*signal.shape[:-1], self.n_fft // 2 + 1, n_frames(signal.shape[-1], self.n_fft, self.hop))
        if spec.shape != want or spec.flags.writeable:
            raise ConfigError(f"SeparationContext.known_stft must pair a signal with its read-only STFT of shape "
                              f"{want}, got shape {spec.shape}{' (writeable)' if spec.flags.writeable else ''}")

    def _check_das(self) -> None:
        w = self.das
        want = (2, self.n_fft // 2 + 1)
        if not isinstance(w, np.ndarray) or w.shape != want or w.dtype != np.complex64 or w.flags.writeable:
            dtype = w.dtype if isinstance(w, np.ndarray) else type(w).__name__
            raise ConfigError(f"SeparationContext.das must be read-only complex64 weights of shape {want} "
                              f"(from das_conjugates), got {dtype} of shape {np.shape(w)}"
                              f"{' (writeable)' if isinstance(w, np.ndarray) and w.flags.writeable else ''}")

    def stft(self, x: np.ndarray) -> np.ndarray:
        """(..., F, T) STFT of ``x`` with this context's settings (:func:`hearnav.separation.stft.stft`).

        Returns the ``known_stft`` spectrum, unchanged and read-only, when ``x`` is its signal.
        """
        if self.known_stft is not None and self.known_stft[0] is x:
            return self.known_stft[1]
        return stft(x, self.n_fft, self.hop)

    def synthesise(self, spec: np.ndarray, n: int) -> np.ndarray:
        """(..., n) float32 signal of an (..., F, T) output spectrum (:func:`hearnav.separation.stft.istft`).

        The context remembers the pair, so a caller that needs the estimate's spectrum too (the environment's
        features) can take it from :meth:`spectrum_of` instead of transforming the estimate again.
        """
        out = istft(spec, n, self.n_fft, self.hop).astype(np.float32, copy=False)
        self._synthesised[:] = [out, spec]
        return out

    def spectrum_of(self, signal: np.ndarray) -> np.ndarray | None:
        """The (..., F, T) spectrum :meth:`synthesise` made ``signal`` from, or the ``known_stft`` spectrum when
        ``signal`` is its very signal (the ``identity`` separator returns the mixture), else None."""
        if self._synthesised and self._synthesised[0] is signal:
            return self._synthesised[1]
        if self.known_stft is not None and self.known_stft[0] is signal:
            return self.known_stft[1]
        return None

    def das_conjugate(self) -> np.ndarray:
        """(2, F) conjugate delay-and-sum weights w^H, w = d / (d^H d) of :meth:`steering`, complex64, read-only:
        :attr:`das`."""
        return self.das

    def steering(self) -> np.ndarray:
        """(F, 2) steering vector of the target direction on the STFT bins (read-only; computed on first use from
        the head model, :func:`hearnav.physics.steering.steering_vector`, or, when the context was given its
        delay-and-sum weights w^H, from them: w = d / (d^H d) gives d = w / (w^H w), in single precision)."""
        if not self._steering:
            if self._given_das:
                w = np.conj(self.das.T)
                d = np.ascontiguousarray(w / np.sum(w.real ** 2 + w.imag ** 2, axis=-1, keepdims=True))
            else:
                d = np.ascontiguousarray(steering_vector(float(self.azimuth), self._freqs(), float(self.radius),
                                                         float(self.c)))
            d.flags.writeable = False
            self._steering.append(d)
        return self._steering[0]

    def _freqs(self) -> np.ndarray:
        return stft_freqs(int(self.n_fft), float(self.fs))
