"""A small copy of a measured 13C spectrum for reports.

A processed 13C spectrum has tens of thousands of points; a filed report
needs a few thousand at most.  :func:`decimate_minmax` keeps, for each of
about ``max_points // 2`` equal runs of points, the lowest and the highest point
in their original order (min/max decimation, common practice in plotting
long signals, no source), plus the two ends.  Unlike taking every n-th
point it keeps the full height of every narrow line, which is what the
analyst looks at.

:func:`spectrum_trace` reads the 13C spectrum of a JCAMP-DX file (the same
block :func:`elucidate.spectrum.jcamp.peaks_from_jcamp` picks its lines from)
and returns a :class:`SpectrumTrace`, which a result carries so that a saved
result can redraw the spectrum without the original file.  Peak tables have
no trace.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .jcamp import _split_compound, read_jcamp_blocks

__all__ = ["SpectrumTrace", "decimate_minmax", "spectrum_trace", "trace_for_peaks"]

#: Largest number of points a trace keeps (the JSON result stays small).
MAX_TRACE_POINTS = 2000

_JCAMP_SUFFIXES = (".jdx", ".dx", ".jcamp")


@dataclass(frozen=True)
class SpectrumTrace:
    """A decimated spectrum: ppm descending, intensity scaled to the tallest point.

    Attributes
    ----------
    ppm : tuple of float
        Chemical shifts, descending (left to right as NMR spectra are drawn).
    intensity : tuple of float
        Intensities divided by the largest absolute intensity (-1...1).
    source : str
        File name of the spectrum (no folders).
    title : str
        The block's ``##TITLE``.
    points : int
        Number of points in the file before decimation.
    """

    ppm: tuple[float, ...]
    intensity: tuple[float, ...]
    source: str = ""
    title: str = ""
    points: int = 0

    def __post_init__(self):
        if len(self.ppm) != len(self.intensity) or len(self.ppm) < 2:
            raise InputError("a spectrum trace needs at least two points and one intensity per shift")

    def to_dict(self) -> dict:
        """Plain data for the JSON result (key ``spectrum_trace``)."""
        return {
            "source": self.source,
            "title": self.title,
            "points": self.points,
            "ppm": list(self.ppm),
            "intensity": list(self.intensity),
        }


def decimate_minmax(x, y, max_points: int = MAX_TRACE_POINTS) -> tuple[np.ndarray, np.ndarray]:
    """Reduce a sampled curve to at most ``max_points`` points, keeping extremes.

    Parameters
    ----------
    x, y : array-like
        Abscissae and ordinates of equal length.
    max_points : int
        At least 4.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        The kept points in their original order: the first and the last
        point, and per run of points its minimum and maximum (one point
        when they coincide).  Curves with at
        most ``max_points`` points are returned unchanged.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    if x.ndim != 1 or x.shape != y.shape:
        raise InputError("decimate_minmax needs x and y as 1-D arrays of equal length")
    if isinstance(max_points, bool) or not isinstance(max_points, int) or max_points < 4:
        raise InputError(f"max_points must be a whole number of at least 4, got {max_points!r}")
    if x.size <= max_points:
        return x.copy(), y.copy()
    keep = {0, x.size - 1}  # the ends keep the axis range
    edges = np.linspace(0, x.size, (max_points - 2) // 2 + 1).astype(int)
    for lo, hi in zip(edges[:-1], edges[1:]):
        if hi > lo:
            seg = y[lo:hi]
            keep.update((lo + int(np.argmin(seg)), lo + int(np.argmax(seg))))
    idx = np.asarray(sorted(keep), dtype=int)
    return x[idx], y[idx]


def spectrum_trace(path, max_points: int = MAX_TRACE_POINTS) -> SpectrumTrace | None:
    """The decimated 13C spectrum of a JCAMP-DX file, or None for a peak table.

    Parameters
    ----------
    path : str or os.PathLike
        A JCAMP-DX file; in a compound file the plain 13C block is used
        (as :func:`~elucidate.spectrum.jcamp.peaks_from_jcamp` does).
    max_points : int
        Largest number of points kept (min/max decimation).

    Returns
    -------
    SpectrumTrace or None

    Raises
    ------
    InputError
        Missing or unreadable file, not JCAMP-DX, damaged data.
    """
    blocks = read_jcamp_blocks(path)
    spec = _split_compound(blocks)[0] if len(blocks) > 1 else blocks[0]
    if spec.is_peak_table or spec.npoints < 2:
        return None
    order = np.argsort(-spec.x, kind="stable")  # descending ppm
    x, y = decimate_minmax(spec.x[order], spec.y[order], max_points)
    scale = float(np.max(np.abs(y))) or 1.0
    return SpectrumTrace(
        ppm=tuple(round(float(v), 3) for v in x),
        intensity=tuple(round(float(v) / scale, 4) for v in y),
        source=os.path.basename(os.fspath(path)),
        title=spec.title,
        points=spec.npoints,
    )


def trace_for_peaks(source, max_points: int = MAX_TRACE_POINTS) -> SpectrumTrace | None:
    """The trace of a peak source when it is a JCAMP-DX spectrum file, else None.

    ``source`` is what ``--peaks`` takes: inline text, a peak file or a
    JCAMP-DX file (recognised as :func:`elucidate.spectrum.peaks.read_peaks`
    does: a ``.jdx``/``.dx``/``.jcamp`` name or text starting with ``##``).
    Inline text, plain peak files and JCAMP-DX peak tables give None.
    """
    if isinstance(source, os.PathLike):
        source = os.fspath(source)
    if not isinstance(source, str) or "\n" in source or not source.strip():
        return None
    path = source.strip()
    if not os.path.isfile(path):
        return None
    if not path.lower().endswith(_JCAMP_SUFFIXES):
        try:
            with open(path, "rb") as fh:
                head = fh.read(4096)
        except OSError:
            return None
        if not head.lstrip(b"\xef\xbb\xbf \t\r\n").startswith(b"##"):
            return None
    return spectrum_trace(path, max_points)
