"""The small PNG writer of scripts/_png.py and the parity plot drawn with it.

Source for the file layout: PNG specification, W3C Recommendation /
ISO/IEC 15948 (from memory) -- 8-byte signature; chunks of length, type,
data, CRC-32 over type and data; IHDR of 13 bytes (width, height, bit depth,
colour type, compression, filter, interlace); IDAT = zlib stream of the
scanlines, each preceded by one filter-type byte; IEND last.
"""

from __future__ import annotations

import struct
import sys
import zlib
from pathlib import Path

import numpy as np
import pytest

from elucidate.errors import InputError

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "scripts"))

from _png import PNG_SIGNATURE, encode_png, write_png  # noqa: E402


def _chunks(data: bytes):
    """(type, payload) per chunk; checks each CRC (PNG spec, from memory)."""
    pos, out = 8, []
    while pos < len(data):
        (length,) = struct.unpack(">I", data[pos:pos + 4])
        kind = data[pos + 4:pos + 8]
        payload = data[pos + 8:pos + 8 + length]
        (crc,) = struct.unpack(">I", data[pos + 8 + length:pos + 12 + length])
        assert crc == zlib.crc32(kind + payload) & 0xFFFFFFFF, kind
        out.append((kind, payload))
        pos += 12 + length
    assert pos == len(data)
    return out


@pytest.mark.parametrize("shape,colour_type,channels", [((7, 5), 0, 1), ((4, 9, 3), 2, 3)])
def test_written_png_structure(tmp_path, shape, colour_type, channels):
    # PNG specification, W3C / ISO 15948 (from memory)
    rng = np.random.default_rng(0)
    pixels = rng.integers(0, 256, size=shape, dtype=np.uint8)
    path = write_png(tmp_path / "small.png", pixels)
    data = path.read_bytes()
    assert data[:8] == PNG_SIGNATURE == b"\x89PNG\r\n\x1a\n"

    chunks = _chunks(data)
    assert [k for k, _ in chunks] == [b"IHDR", b"IDAT", b"IEND"]
    ihdr = chunks[0][1]
    assert len(ihdr) == 13
    width, height, depth, ctype, comp, filt, interlace = struct.unpack(">IIBBBBB", ihdr)
    assert (width, height) == (shape[1], shape[0])
    assert (depth, ctype, comp, filt, interlace) == (8, colour_type, 0, 0, 0)
    assert chunks[2][1] == b""

    raw = zlib.decompress(b"".join(p for k, p in chunks if k == b"IDAT"))
    stride = 1 + width * channels
    assert len(raw) == height * stride
    rows = np.frombuffer(raw, np.uint8).reshape(height, stride)
    assert (rows[:, 0] == 0).all()  # filter type None on every scanline
    assert np.array_equal(rows[:, 1:].reshape(pixels.shape), pixels)


def test_encode_png_is_deterministic_and_level_independent_in_content():
    pixels = np.arange(60, dtype=np.uint8).reshape(6, 10)
    a, b = encode_png(pixels, level=0), encode_png(pixels, level=9)
    assert a == encode_png(pixels, level=0)
    idat = [zlib.decompress(p) for data in (a, b) for k, p in _chunks(data) if k == b"IDAT"]
    assert idat[0] == idat[1]


@pytest.mark.parametrize("pixels,fragment", [
    (np.zeros((3, 3), np.float64), "uint8"),
    (np.zeros((3, 3, 4), np.uint8), "shape"),
    (np.zeros((3,), np.uint8), "shape"),
    (np.zeros((0, 3), np.uint8), "at least one pixel"),
])
def test_encode_png_rejects_bad_arrays(pixels, fragment):
    with pytest.raises(InputError, match=fragment):
        encode_png(pixels)


def test_write_png_needs_an_existing_folder(tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        write_png(tmp_path / "missing" / "x.png", np.zeros((2, 2), np.uint8))


def test_parity_plot_puts_a_point_on_its_pixel():
    # geometry of our own plot (no external source): a carbon observed and
    # predicted at 100 ppm lies on the diagonal and gets the darkest colour;
    # a point outside 0-230 ppm is not drawn.
    from predictor_diagnostics import parity_pixels, ppm_to_pixel

    empty = parity_pixels([], [])
    img = parity_pixels([100.0, 300.0], [100.0, 100.0])
    r, c = (int(v) for v in ppm_to_pixel(100.0, 100.0))
    assert tuple(img[r, c]) == (8, 48, 107)
    changed = np.argwhere((img != empty).any(axis=2))
    assert len(changed) > 0
    # only the one 2 x 2 density cell around (r, c) differs from the empty plot
    assert (np.abs(changed - [r, c]) <= 1).all()
    assert img.shape == (600, 600, 3) and img.dtype == np.uint8
    # predicted above observed lands above the diagonal (smaller row index)
    r_hi, _ = ppm_to_pixel(100.0, 150.0)
    assert r_hi < r
