"""The registry of separators.

A separator is a callable ``separator(mixture, ctx) -> estimate`` taking a (2, n) binaural mixture (index 0 the
left ear) and a :class:`~hearnav.separation.context.SeparationContext`, and returning a (2, n) estimate of the
target at each ear. :func:`get_separator` returns it wrapped in a :class:`Separator`, which checks the
input and the output (casting it to float32) and hides ``ctx.target_image`` from separators that are not
privileged.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from hearnav.errors import SeparatorError
from hearnav.plugins import Registry
from hearnav.separation.context import SeparationContext

SeparatorFn = Callable[[np.ndarray, SeparationContext], np.ndarray]


@dataclass(frozen=True)
class Separator:
    """A registered separator: its name, its function and whether it may read the true target image."""

    name: str
    fn: SeparatorFn
    privileged: bool = False

    def __call__(self, mixture: np.ndarray, ctx: SeparationContext, *, trusted: bool = False) -> np.ndarray:
        """Separate the target from a (2, n) mixture; returns a (2, n) float32 estimate (one row per ear).

        ``trusted=True`` is the fast path for callers that built the mixture and the context themselves (the
        environment): it skips the input checks. The target image is hidden from separators that are not
        privileged, and the output is checked, on either path.

        Raises
        ------
        SeparatorError
            The mixture is not a finite (2, n) array, ``ctx`` is not a SeparationContext, or the separator
            returned something other than a finite (2, n) array (after the cast to float32).
        """
        mix = mixture if trusted else self._checked_input(mixture, ctx)
        if not self.privileged and ctx.target_image is not None:
            ctx = dataclasses.replace(ctx, target_image=None)
        out = np.asarray(self.fn(mix, ctx))
        n = mix.shape[1]
        if out.shape != (2, n):
            raise SeparatorError(f"separator {self.name!r} must return a finite (2, {n}) estimate (the target at "
                                 f"the left and right ear), got shape {out.shape}; return one row per ear")
        out = out.astype(np.float32, copy=False)
        bad = np.count_nonzero(~np.isfinite(out))
        if bad:
            raise SeparatorError(f"separator {self.name!r} must return a finite (2, {n}) estimate, got {bad} NaN "
                                 f"or infinite samples")
        return out

    def _checked_input(self, mixture: np.ndarray, ctx: SeparationContext) -> np.ndarray:
        """The mixture as an array, after checking it and the context."""
        mix = np.asarray(mixture)
        if mix.ndim != 2 or mix.shape[0] != 2 or mix.shape[1] == 0 or not np.issubdtype(mix.dtype, np.number) \
                or np.iscomplexobj(mix):
            raise SeparatorError(f"separator {self.name!r} needs a real (2, n) mixture with n >= 1 "
                                 f"(left ear, right ear), got shape {mix.shape} of {mix.dtype}")
        if not np.all(np.isfinite(mix)):
            raise SeparatorError(f"separator {self.name!r} needs a finite mixture; got "
                                 f"{int(np.sum(~np.isfinite(mix)))} NaN or infinite samples")
        if not isinstance(ctx, SeparationContext):
            raise SeparatorError(f"separator {self.name!r} needs a SeparationContext, got {type(ctx).__name__}")
        return mix


def _adopt(name: str, fn: object) -> Separator:
    """A Separator from an entry point's function."""
    if not callable(fn):
        raise SeparatorError(f"separator {name!r} must be callable, got {type(fn).__name__}")
    return Separator(name, fn, bool(getattr(fn, "privileged", False)))


SEPARATORS: Registry[Separator] = Registry("separator", "hearnav.separators", SeparatorError, _adopt)


def register_separator(name: str, fn: SeparatorFn | None = None, *, privileged: bool | None = None):
    """Add a separator; usable as ``register_separator("name", fn)`` or as a decorator ``@register_separator("name")``.

    Parameters
    ----------
    name : a plug-in name (:data:`hearnav.plugins.NAME`).
    fn : ``fn(mixture (2, n), ctx) -> (2, n)``: the target at the left and right ear.
    privileged : whether the separator reads ``ctx.target_image`` (an oracle); defaults to the function's
        own ``privileged`` attribute, else False.

    Returns
    -------
    The registered :class:`Separator` (or, as a decorator, ``fn`` unchanged).

    Raises
    ------
    SeparatorError
        Bad or already registered name, or ``fn`` not callable.
    """
    if fn is None:
        def decorator(f: SeparatorFn) -> SeparatorFn:
            register_separator(name, f, privileged=privileged)
            return f
        return decorator
    sep = _adopt(name, fn)  # a new object: the registry refuses it under a taken name
    if privileged is not None:
        sep = dataclasses.replace(sep, privileged=bool(privileged))
    return SEPARATORS.add(name, sep)


def get_separator(name: str) -> Separator:
    """The separator registered as ``name`` (or by an installed ``hearnav.separators`` entry point).

    Raises
    ------
    SeparatorError
        Unknown name (the message lists the close matches or the valid names).
    """
    return SEPARATORS.get(name)


def separator_names() -> list[str]:
    """Registered separator names, sorted."""
    return sorted(SEPARATORS.names())


def unregister_separator(name: str) -> None:
    """Remove a registered separator (for tests and plug-ins that replace one).

    Raises
    ------
    SeparatorError
        Unknown name.
    """
    SEPARATORS.remove(name)
