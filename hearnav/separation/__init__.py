"""Separation of one target sound from a binaural mixture, and the SI-SDR that scores it.

Importing the package registers the built-in separators (``identity``, ``delay-and-sum``, ``mvdr``, ``mwf``,
``spatial-mask`` and the privileged ``oracle-mask``), each binaural in and binaural out.
"""

from hearnav.separation import separators as _builtin  # noqa: F401  (registers the built-ins)
from hearnav.separation.context import SeparationContext
from hearnav.physics.head import expected_itd
from hearnav.physics.steering import steering_vector
from hearnav.separation.direction import gcc_phat
from hearnav.separation.metrics import si_sdr, si_sdr_batch
from hearnav.separation.registry import Separator, get_separator, register_separator, separator_names

__all__ = [
    "SeparationContext",
    "Separator",
    "expected_itd",
    "gcc_phat",
    "get_separator",
    "register_separator",
    "separator_names",
    "si_sdr",
    "si_sdr_batch",
    "steering_vector",
]
