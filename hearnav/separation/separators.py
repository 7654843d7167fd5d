"""The built-in separators, registered on import.

Each takes a (2, n) binaural mixture (left ear, right ear) and a
:class:`~hearnav.separation.context.SeparationContext` and returns an (n,) estimate of the target at the
head-centre reference point in free field, the same length as the input. The beamformers steer the head model's
far-field steering vector (:mod:`hearnav.physics.steering`) at ``ctx.azimuth``.

- ``ear``: the unprocessed ear nearer the target (left for azimuth in (0, pi), right for (pi, 2 pi); within
  1e-9 of straight ahead or behind, where neither ear is nearer, the mean of the two ears). The input reference.
- ``delay-and-sum``: w = d / (d^H d) per STFT bin.
- ``mvdr``: Capon's w = R^-1 d / (d^H R^-1 d), R the mixture's per-bin covariance over the window with diagonal
  loading 1e-3 trace(R) / 2 (:data:`hearnav.separation.beamform.LOADING`), i.e. MPDR.
- ``spatial-mask``: the delay-and-sum output times the ILD/IPD mask of :func:`hearnav.separation.masks.spatial_mask`.
- ``oracle-mask`` (privileged): the delay-and-sum output times the ideal ratio mask |S|^2 / (|S|^2 + |N|^2) of
  the delay-and-sum outputs of the true target image S and of the rest N = mixture - target image.
"""

from __future__ import annotations

import numpy as np

from hearnav.errors import SeparatorError
from hearnav.separation.beamform import (
    apply_weights,
    combine,
    mvdr_weights,
    spatial_covariance,
)
from hearnav.separation.context import SeparationContext
from hearnav.separation.masks import ratio_mask, spatial_mask
from hearnav.separation.registry import register_separator

#: |sin(azimuth)| below which the target counts as straight ahead or behind for the ``ear`` separator.
_MEDIAN_TOL = 1e-9


@register_separator("ear")
def ear(mixture: np.ndarray, ctx: SeparationContext) -> np.ndarray:
    """The ear nearer the target, unprocessed (mean of the ears straight ahead or behind)."""
    side = np.sin(ctx.azimuth)
    if side > _MEDIAN_TOL:
        out = mixture[0]
    elif side < -_MEDIAN_TOL:
        out = mixture[1]
    else:
        out = 0.5 * (mixture[0] + mixture[1])
    return np.asarray(out, dtype=np.float32)


@register_separator("delay-and-sum")
def delay_and_sum(mixture: np.ndarray, ctx: SeparationContext) -> np.ndarray:
    """Delay-and-sum beamformer towards ``ctx.azimuth``."""
    spec = ctx.stft(mixture)
    return ctx.synthesise(combine(ctx.das_conjugate(), spec), mixture.shape[1])


@register_separator("mvdr")
def mvdr(mixture: np.ndarray, ctx: SeparationContext) -> np.ndarray:
    """MVDR (MPDR) beamformer towards ``ctx.azimuth`` from the window's own covariance."""
    spec = ctx.stft(mixture)
    w = mvdr_weights(spatial_covariance(spec), ctx.steering())
    return ctx.synthesise(apply_weights(w, spec), mixture.shape[1])


@register_separator("spatial-mask")
def spatial_masking(mixture: np.ndarray, ctx: SeparationContext) -> np.ndarray:
    """Delay-and-sum output masked by the ILD/IPD match to the target direction."""
    spec = ctx.stft(mixture)
    d = ctx.steering()
    out = combine(ctx.das_conjugate(), spec) * spatial_mask(spec, d)
    return ctx.synthesise(out, mixture.shape[1])


@register_separator("oracle-mask", privileged=True)
def oracle_mask(mixture: np.ndarray, ctx: SeparationContext) -> np.ndarray:
    """Delay-and-sum output masked by the ideal ratio mask of the true target image (privileged)."""
    if ctx.target_image is None:
        raise SeparatorError("separator 'oracle-mask' needs ctx.target_image (the true (2, n) target image at "
                             "the ears); pass it in the SeparationContext or pick a non-oracle separator")
    image = np.asarray(ctx.target_image)
    if image.shape != mixture.shape or not np.all(np.isfinite(image)):
        raise SeparatorError(f"separator 'oracle-mask' needs a finite target_image of the mixture's shape "
                             f"{mixture.shape}, got {image.shape}")
    spec = ctx.stft(mixture)
    wh = ctx.das_conjugate()
    out = combine(wh, spec)
    target = combine(wh, ctx.stft(image).astype(spec.dtype, copy=False))
    return ctx.synthesise(out * ratio_mask(target, out - target), mixture.shape[1])
