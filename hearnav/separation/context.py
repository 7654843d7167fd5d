"""What a separator is told besides the mixture: the sampling rate, the target direction, STFT settings."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from hearnav.acoustics import head
from hearnav.errors import ConfigError
from hearnav.separation.steering import steering_vector
from hearnav.separation.stft import check_stft_settings, stft_freqs


@dataclass(frozen=True)
class SeparationContext:
    """Side information for one separator call.

    Attributes
    ----------
    fs : sampling rate, Hz.
    azimuth : target direction relative to the listener's heading, radians, counter-clockwise
        (0 straight ahead, +pi/2 to the left), horizontal plane.
    n_fft, hop : STFT frame and hop in samples (sqrt-Hann window; hop divides n_fft).
    target_image : optional privileged (2, n) image of the target at the two ears; only separators
        registered with ``privileged=True`` ever see it (the registry hides it from the others).
    radius, c : head radius (m) and speed of sound (m/s) of the head model the steering vector uses.
    """

    fs: float
    azimuth: float
    n_fft: int = 512
    hop: int = 128
    target_image: np.ndarray | None = field(default=None, compare=False, repr=False)
    radius: float = head.HEAD_RADIUS
    c: float = 343.0

    def __post_init__(self) -> None:
        for name in ("fs", "azimuth", "radius", "c"):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)) \
                    or not math.isfinite(value):
                raise ConfigError(f"SeparationContext.{name} must be a finite number, got {value!r}")
        for name in ("fs", "radius", "c"):
            if getattr(self, name) <= 0:
                raise ConfigError(f"SeparationContext.{name} must be positive, got {getattr(self, name)!r}")
        check_stft_settings(self.n_fft, self.hop)
        if self.target_image is not None:
            shape = np.shape(self.target_image)
            if len(shape) != 2 or shape[0] != 2:
                raise ConfigError(f"SeparationContext.target_image must be a (2, n) array, got shape {shape}")

    def steering(self) -> np.ndarray:
        """(F, 2) steering vector of the target direction on the STFT bins (read-only, cached)."""
        return _steering(float(self.azimuth), float(self.fs), int(self.n_fft), float(self.radius), float(self.c))


@lru_cache(maxsize=256)
def _steering(azimuth: float, fs: float, n_fft: int, radius: float, c: float) -> np.ndarray:
    d = steering_vector(azimuth, stft_freqs(n_fft, fs), radius, c)
    d.flags.writeable = False
    return d
