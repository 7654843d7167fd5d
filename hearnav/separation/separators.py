"""The built-in separators, registered on import: binaural in, binaural out.

Each takes a (2, n) binaural mixture (left ear, right ear) and a
:class:`~hearnav.separation.context.SeparationContext` and returns a (2, n) estimate of the target at each ear,
the same length as the input; the score compares each ear with the target's early image at that ear. The
beamformers steer the head model's far-field steering vector d (:mod:`hearnav.physics.steering`) at
``ctx.azimuth`` and put their one output Y back at each ear through the target's relative transfer function:
ear e gets d_e Y, so a source from the look direction keeps its interaural cues (Hadad et al. 2016).

- ``identity``: the unprocessed mixture at each ear. The input reference.
- ``delay-and-sum``: w = d / (d^H d) per STFT bin.
- ``mvdr``: the binaural MVDR, w = R_n^-1 d / (d^H R_n^-1 d), with the noise covariance R_n estimated without
  the target: frames weighted by 1 - M, M the spatial mask (:func:`hearnav.separation.beamform.masked_covariance`).
- ``mwf``: the binaural multichannel Wiener filter of a rank-one target (:func:`hearnav.separation.beamform.mwf_gain`):
  the MVDR output times a per-bin Wiener gain, at each ear.
- ``spatial-mask``: each ear times the ILD/IPD mask of :func:`hearnav.separation.masks.spatial_mask`.
- ``oracle-mask`` (privileged): each ear times its ideal ratio mask |E_e|^2 / (|E_e|^2 + |X_e - E_e|^2) against
  the target's true early image E_e at that ear (``ctx.target_image``).

References
----------
- E. Hadad, S. Doclo & S. Gannot, "The binaural LCMV beamformer and its performance analysis", IEEE/ACM
  TASLP 24(3), 2016 (binaural MVDR: one filter, the output at each ear scaled by the relative transfer function).
- S. Doclo & M. Moonen, "GSVD-based optimal filtering for single and multimicrophone speech enhancement",
  IEEE TSP 50(9), 2002; B. Cornelis, S. Doclo, T. Van den Bogaert, M. Moonen & J. Wouters, "Theoretical
  analysis of binaural multimicrophone noise reduction techniques", IEEE TASLP 18(2), 2010 (binaural MWF).
"""

from __future__ import annotations

import numpy as np

from hearnav.errors import SeparatorError
from hearnav.separation.beamform import apply_weights, combine, masked_covariance, mvdr_weights, mwf_gain, to_ears
from hearnav.separation.context import SeparationContext
from hearnav.separation.masks import ratio_mask, spatial_mask
from hearnav.separation.registry import register_separator


@register_separator("identity")
def identity(mixture: np.ndarray, ctx: SeparationContext) -> np.ndarray:
    """The mixture at each ear, unprocessed (the input reference)."""
    return np.asarray(mixture, dtype=np.float32)


@register_separator("delay-and-sum")
def delay_and_sum(mixture: np.ndarray, ctx: SeparationContext) -> np.ndarray:
    """Delay-and-sum beamformer towards ``ctx.azimuth``, put back at each ear."""
    spec = ctx.stft(mixture)
    return ctx.synthesise(to_ears(ctx.steering(), combine(ctx.das_conjugate(), spec)), mixture.shape[1])


def _mvdr_output(spec: np.ndarray, d: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """MVDR output (F, T) towards d with a target-free noise covariance, its weights (F, 2) and that covariance."""
    noise = masked_covariance(spec, 1.0 - spatial_mask(spec, d))
    w = mvdr_weights(noise, d)
    return apply_weights(w, spec), w, noise


@register_separator("mvdr")
def mvdr(mixture: np.ndarray, ctx: SeparationContext) -> np.ndarray:
    """Binaural MVDR towards ``ctx.azimuth``, its noise covariance from the frames the spatial mask rejects."""
    spec = ctx.stft(mixture)
    d = ctx.steering()
    y = _mvdr_output(spec, d)[0]
    return ctx.synthesise(to_ears(d, y), mixture.shape[1])


@register_separator("mwf")
def mwf(mixture: np.ndarray, ctx: SeparationContext) -> np.ndarray:
    """Binaural multichannel Wiener filter of a rank-one target towards ``ctx.azimuth``."""
    spec = ctx.stft(mixture)
    d = ctx.steering()
    y, w, noise = _mvdr_output(spec, d)
    return ctx.synthesise(to_ears(d, y * mwf_gain(y, w, noise)[:, None]), mixture.shape[1])


@register_separator("spatial-mask")
def spatial_masking(mixture: np.ndarray, ctx: SeparationContext) -> np.ndarray:
    """Each ear masked by the ILD/IPD match to the target direction."""
    spec = ctx.stft(mixture)
    return ctx.synthesise(spec * spatial_mask(spec, ctx.steering()), mixture.shape[1])


@register_separator("oracle-mask", privileged=True)
def oracle_mask(mixture: np.ndarray, ctx: SeparationContext) -> np.ndarray:
    """Each ear masked by its ideal ratio mask against the target's true early image at that ear (privileged)."""
    if ctx.target_image is None:
        raise SeparatorError("separator 'oracle-mask' needs ctx.target_image (the target's true (2, n) early image "
                             "at the ears); pass it in the SeparationContext or pick a non-oracle separator")
    image = np.asarray(ctx.target_image)
    if image.shape != mixture.shape or not np.all(np.isfinite(image)):
        raise SeparatorError(f"separator 'oracle-mask' needs a finite target_image of the mixture's shape "
                             f"{mixture.shape}, got {image.shape}")
    spec = ctx.stft(mixture)
    target = ctx.stft(image).astype(spec.dtype, copy=False)
    return ctx.synthesise(spec * ratio_mask(target, spec - target), mixture.shape[1])
