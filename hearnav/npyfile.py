"""Arrays read from untrusted ``.npy`` data (NumPy's format, NEP 1) without trusting the header.

The header's dtype and shape are compared with what the caller expects, and the bytes they declare with a
bound (the file's size), before anything is allocated: a damaged header that declares 4e9 elements is refused,
not allocated. Every failure is a :class:`BadArray` with a one-line reason.
"""

from __future__ import annotations

import math
from typing import BinaryIO

import numpy as np

from hearnav.errors import exception_line

# numpy.lib.format readers of the header versions it writes (1.0; 2.0 for headers over 64 KiB; 3.0 for
# utf-8 field names), NEP 1 and numpy.lib.format
_READERS = {(1, 0): np.lib.format.read_array_header_1_0, (2, 0): np.lib.format.read_array_header_2_0}


class BadArray(ValueError):
    """The data are not the expected array (internal: the cache file holding it is rebuilt)."""


def read_header(f: BinaryIO) -> tuple[np.dtype, tuple[int, ...], bool]:
    """(dtype, shape, fortran_order) of the ``.npy`` data at ``f``'s position; ``f`` is left at the data."""
    try:
        version = np.lib.format.read_magic(f)
        if version not in _READERS:
            raise BadArray(f"expected .npy format version 1.0 or 2.0, got {version}")
        shape, fortran, dtype = _READERS[version](f)
    except BadArray:
        raise
    except Exception as exc:  # a damaged header may fail anywhere in the parser (ValueError, TokenError, ...)
        raise BadArray(f"unreadable .npy header ({exception_line(exc, 100)})") from None
    if dtype.hasobject or dtype.itemsize == 0:
        raise BadArray(f"expected an array of plain values, got dtype {dtype.str}")
    return dtype, tuple(shape), bool(fortran)


def check_header(dtype: np.dtype, shape: tuple[int, ...], expected: tuple[str, tuple[int, ...]] | None,
                 limit: int) -> int:
    """The byte count the header declares, after checking it against ``expected`` (dtype str, shape) and
    against ``limit`` bytes."""
    if expected is not None and (dtype.str, shape) != (expected[0], tuple(expected[1])):
        raise BadArray(f"{dtype.str} array of shape {shape}, expected {expected[0]} of shape "
                       f"{tuple(expected[1])}")
    nbytes = math.prod(shape) * dtype.itemsize  # Python integers: no overflow
    if nbytes > limit:
        raise BadArray(f"header declares {nbytes} bytes of data, more than the {limit} the file holds")
    return nbytes


def read_array(f: BinaryIO, expected: tuple[str, tuple[int, ...]] | None, limit: int) -> np.ndarray:
    """The array of ``.npy`` data at ``f``, which must end right after it.

    Parameters
    ----------
    f : readable binary file at the start of the ``.npy`` data.
    expected : (dtype str, shape) the metadata give, or None to accept any header within ``limit``.
    limit : most bytes of array data there can be (the size of the file that holds them).
    """
    dtype, shape, fortran = read_header(f)
    nbytes = check_header(dtype, shape, expected, limit)
    flat = np.empty(math.prod(shape), dtype)
    view = memoryview(flat.view(np.uint8))
    got = 0
    try:
        while got < nbytes:
            n = f.readinto(view[got:])
            if not n:
                break
            got += n
        extra = f.read(1)
    except Exception as exc:  # a zip member's CRC-32 check, a read error, ...
        raise BadArray(f"unreadable array data ({exception_line(exc, 100)})") from None
    if got != nbytes or extra:
        raise BadArray(f"expected {nbytes} bytes of array data, got {got}{' and more' if extra else ''}")
    return flat.reshape(shape[::-1]).T if fortran else flat.reshape(shape)
