"""Writing 13C spectra and peak tables as JCAMP-DX text.

The writer produces ``##XYDATA=(X++(Y..Y))`` in each ordinate form of the
IUPAC JCAMP-DX standard (McDonald & Wilks, Appl. Spectrosc. 1988, 42, 151;
NMR: Davies & Lampen, Appl. Spectrosc. 1993, 47, 1093 -- from memory):
AFFN, PAC, SQZ, SQZ with DUP, DIF, DIF with DUP (the DIF forms repeat the
last ordinate of a line at the start of the next as the Y-value check), and
``##PEAK TABLE=(XY..XY)``.  It serves the tests of the reader and the
making of demonstration files; ordinates are scaled to integers through
``##YFACTOR``.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InputError

__all__ = ["FORMS", "encode_xydata", "format_jcamp_spectrum", "format_jcamp_peak_table"]

#: Ordinate forms :func:`format_jcamp_spectrum` can write.
FORMS = ("AFFN", "PAC", "SQZ", "SQZDUP", "DIF", "DIFDUP")

_SQZ_POS, _SQZ_NEG = "@ABCDEFGHI", "@abcdefghi"
_DIF_POS, _DIF_NEG = "%JKLMNOPQR", "%jklmnopqr"
_DUP = "?STUVWXYZs"


def _sqz(v: int) -> str:
    s = str(abs(v))
    return (_SQZ_POS if v >= 0 else _SQZ_NEG)[int(s[0])] + s[1:]


def _dif(d: int) -> str:
    s = str(abs(d))
    return (_DIF_POS if d >= 0 else _DIF_NEG)[int(s[0])] + s[1:]


def _dup(n: int) -> str:
    s = str(n)
    return _DUP[int(s[0])] + s[1:]


def _xtext(x: float) -> str:
    return f"{x:.6f}"


def encode_xydata(xs, ys, form: str = "DIFDUP", width: int = 72) -> list[str]:
    """Encode integer ordinates as ``(X++(Y..Y))`` lines.

    Parameters
    ----------
    xs : sequence of float
        Abscissa of each ordinate (already divided by XFACTOR).
    ys : sequence of int
        Ordinates (already divided by YFACTOR, integers).
    form : {"AFFN", "PAC", "SQZ", "SQZDUP", "DIF", "DIFDUP"}
    width : int
        Longest line wanted (the standard asks for at most 80 characters).

    Returns
    -------
    list of str
    """
    form = form.upper()
    if form not in FORMS:
        raise InputError(f"unknown JCAMP-DX ordinate form {form!r}; use one of {', '.join(FORMS)}")
    ys = [int(v) for v in ys]
    n = len(ys)
    if n != len(xs) or n == 0:
        raise InputError("encode_xydata needs as many abscissae as ordinates (at least one)")
    lines: list[str] = []
    if form in ("DIF", "DIFDUP"):
        i, prev_dif = 0, False
        while i < n:
            start = i - 1 if prev_dif else i
            line = _xtext(xs[start]) + _sqz(ys[start])
            j = start + 1
            while j < n:
                d = ys[j] - ys[j - 1]
                k = 1
                if form == "DIFDUP":
                    while j + k < n and ys[j + k] - ys[j + k - 1] == d:
                        k += 1
                tok = _dif(d) + (_dup(k) if k > 1 else "")
                if len(line) + len(tok) > width and j > start + 1:
                    break
                line += tok
                j += k
            lines.append(line)
            prev_dif = j - 1 > start
            i = j
        if prev_dif:  # closing Y-check line
            lines.append(_xtext(xs[n - 1]) + _sqz(ys[n - 1]))
        return lines
    i = 0
    while i < n:
        line = _xtext(xs[i])
        j = i
        while j < n:
            k = 1
            if form == "SQZDUP":
                while j + k < n and ys[j + k] == ys[j]:
                    k += 1
            if form == "AFFN":
                tok = f" {ys[j]}"
            elif form == "PAC":
                tok = f"{ys[j]:+d}"
            else:
                tok = _sqz(ys[j]) + (_dup(k) if k > 1 else "")
            if len(line) + len(tok) > width and j > i:
                break
            line += tok
            j += k
        lines.append(line)
        i = j
    return lines


def _header(title, data_type, observe_mhz, x_units, extra) -> list[str]:
    out = [
        f"##TITLE={title}",
        "##JCAMP-DX=5.01",
        f"##DATA TYPE={data_type}",
        "##ORIGIN=elucidate (synthetic)",
        "##OWNER=public domain",
        "##.OBSERVE NUCLEUS=^13C",
    ]
    if observe_mhz is not None:
        out.append(f"##.OBSERVE FREQUENCY={observe_mhz:.4f}")
    out.append(f"##XUNITS={x_units}")
    out.append("##YUNITS=ARBITRARY UNITS")
    out.extend(extra)
    return out


def format_jcamp_spectrum(
    x_ppm,
    y,
    *,
    title: str = "13C spectrum",
    form: str = "DIFDUP",
    observe_mhz: float | None = 100.6,
    x_units: str = "PPM",
    data_type: str = "NMR SPECTRUM",
    y_resolution: float = 1e6,
    comments: tuple[str, ...] = (),
) -> str:
    """JCAMP-DX text of an evenly sampled 13C spectrum.

    Parameters
    ----------
    x_ppm, y : array-like
        Evenly spaced abscissae (ppm) and ordinates.
    form : str
        Ordinate form, one of :data:`FORMS`.
    x_units : {"PPM", "HZ"}
        Axis unit written (Hz = ppm x observe frequency in MHz).
    y_resolution : float
        The largest |ordinate| becomes about this integer.
    comments : tuple of str
        Written as ``$$`` comment lines.
    """
    x = np.asarray(x_ppm, dtype=float)
    yv = np.asarray(y, dtype=float)
    if x.ndim != 1 or x.size < 2 or x.size != yv.size:
        raise InputError("format_jcamp_spectrum needs equal-length x and y with at least 2 points")
    units = x_units.upper()
    if units == "HZ":
        if not observe_mhz:
            raise InputError("x_units='HZ' needs observe_mhz")
        xf = x * observe_mhz
    elif units == "PPM":
        xf = x
    else:
        raise InputError(f"x_units {x_units!r} must be 'PPM' or 'HZ'")
    top = float(np.max(np.abs(yv)))
    yfactor = top / y_resolution if top > 0 else 1.0
    ints = np.rint(yv / yfactor).astype(np.int64)
    extra = [
        f"##FIRSTX={xf[0]:.6f}",
        f"##LASTX={xf[-1]:.6f}",
        "##XFACTOR=1",
        f"##YFACTOR={yfactor:.10g}",
        f"##FIRSTY={int(ints[0]) * yfactor:.10g}",
        f"##NPOINTS={x.size}",
    ]
    lines = _header(title, data_type, observe_mhz, units, extra)
    lines.extend(f"$$ {c}" for c in comments)
    lines.append("##XYDATA=(X++(Y..Y))")
    lines.extend(encode_xydata(list(xf), list(ints), form))
    lines.append("##END=")
    return "\n".join(lines) + "\n"


def format_jcamp_peak_table(
    shifts,
    heights=None,
    *,
    title: str = "13C peak table",
    observe_mhz: float | None = 100.6,
    x_units: str = "PPM",
) -> str:
    """JCAMP-DX text of a ``##PEAK TABLE=(XY..XY)`` (heights default to 1)."""
    s = [float(v) for v in shifts]
    h = [1.0] * len(s) if heights is None else [float(v) for v in heights]
    if len(h) != len(s) or not s or not all(math.isfinite(v) for v in s + h):
        raise InputError("format_jcamp_peak_table needs finite shifts and as many heights")
    units = x_units.upper()
    factor = observe_mhz if units == "HZ" else 1.0
    if units == "HZ" and not observe_mhz:
        raise InputError("x_units='HZ' needs observe_mhz")
    lines = _header(title, "NMR PEAK TABLE", observe_mhz, units, [f"##NPOINTS={len(s)}"])
    lines.append("##PEAK TABLE=(XY..XY)")
    lines.extend(f"{v * factor:.4f},{w:.6g}" for v, w in zip(s, h))
    lines.append("##END=")
    return "\n".join(lines) + "\n"
