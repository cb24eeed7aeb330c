"""A minimal PNG writer (8-bit greyscale or RGB, no plotting library).

Layout after the PNG specification (W3C Recommendation / ISO/IEC 15948 —
from memory): the 8-byte signature, then chunks ``length (4 bytes, big
endian) | type (4 ASCII bytes) | data | CRC-32 of type + data``.  Written
chunks: ``IHDR`` (width, height, bit depth 8, colour type 0 = grey or 2 =
RGB, compression 0, filter method 0, interlace 0), one ``IDAT`` holding the
zlib stream of all scanlines, each prefixed by filter-type byte 0 (None),
and an empty ``IEND``.  zlib's CRC-32 is the one PNG uses.
"""

from __future__ import annotations

import struct
import zlib
from pathlib import Path

import numpy as np

from elucidate.errors import InputError

__all__ = ["PNG_SIGNATURE", "encode_png", "write_png"]

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"

_COLOUR_TYPE = {1: 0, 3: 2}  # channels -> PNG colour type (grey, RGB)


def _chunk(kind: bytes, data: bytes) -> bytes:
    """One PNG chunk: length, type, data, CRC-32 over type and data."""
    crc = zlib.crc32(kind + data) & 0xFFFFFFFF
    return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", crc)


def _as_pixels(pixels) -> np.ndarray:
    """Validate an image array; returns it as (height, width, channels) uint8."""
    a = np.asarray(pixels)
    if a.dtype != np.uint8:
        raise InputError(
            f"PNG pixels must be uint8, got {a.dtype}; convert with np.clip(x, 0, 255).astype(np.uint8)")
    if a.ndim == 2:
        a = a[:, :, None]
    if a.ndim != 3 or a.shape[2] not in _COLOUR_TYPE:
        raise InputError(
            f"PNG pixels have shape {a.shape}; give (height, width) grey or (height, width, 3) RGB")
    if a.shape[0] < 1 or a.shape[1] < 1:
        raise InputError(f"PNG pixels have shape {a.shape}; the image needs at least one pixel")
    return np.ascontiguousarray(a)


def encode_png(pixels, level: int = 6) -> bytes:
    """The bytes of a PNG file holding ``pixels``.

    Parameters
    ----------
    pixels : array_like of uint8
        ``(height, width)`` greyscale or ``(height, width, 3)`` RGB, row 0 at
        the top.
    level : int
        zlib compression level, 0-9.

    Returns
    -------
    bytes
        A complete PNG file.

    Raises
    ------
    InputError
        If the array is not uint8, has another shape, or ``level`` is not 0-9.
    """
    if isinstance(level, bool) or not isinstance(level, int) or not 0 <= level <= 9:
        raise InputError(f"zlib level must be an integer 0-9, got {level!r}")
    a = _as_pixels(pixels)
    height, width, channels = a.shape
    rows = a.reshape(height, width * channels)
    raw = np.hstack([np.zeros((height, 1), np.uint8), rows]).tobytes()  # filter byte 0 per row
    header = struct.pack(">IIBBBBB", width, height, 8, _COLOUR_TYPE[channels], 0, 0, 0)
    return (PNG_SIGNATURE + _chunk(b"IHDR", header)
            + _chunk(b"IDAT", zlib.compress(raw, level)) + _chunk(b"IEND", b""))


def write_png(path, pixels, level: int = 6) -> Path:
    """Write ``pixels`` as a PNG file (see `encode_png`); returns the path."""
    data = encode_png(pixels, level)
    p = Path(path)
    if not p.parent.is_dir():
        raise InputError(f"cannot write {str(p)!r}: folder {str(p.parent)!r} does not exist; create it first")
    p.write_bytes(data)
    return p
