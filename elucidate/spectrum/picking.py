"""Peak picking in a sampled 1D spectrum.

:func:`pick_peaks` works in five steps:

1. baseline: a piecewise-linear curve through the medians of equal
   segments of the spectrum, subtracted;
2. noise: the scaled median absolute deviation (MAD x 1.4826, a robust
   estimate of the standard deviation; Hampel 1974, from memory) of the
   corrected ordinates;
3. threshold: k x noise, where k is ``snr`` or more, so that Gaussian noise
   alone would give at most ``false_line_rate`` false lines per spectrum
   (Bonferroni bound over the N points: P(Z > k) = rate / N; Bonferroni
   1936, from memory), and at least a fraction of the tallest line;
4. lines: local extrema above the threshold whose topographic prominence
   (rise above the deeper of the two valleys separating them from taller
   lines) also exceeds k x noise, which rejects noise ripples on the flanks
   of strong lines; each position is refined by a parabola through the
   three top points;
5. minimum separation: of two lines closer than ``min_separation_ppm`` the
   taller is kept.

The settings and the derived noise and threshold travel with the result
(:class:`PickedPeaks`) so that reports can show them.

The spectrum may be any object with ``x`` (ppm) and ``y`` arrays, an
``is_peak_table`` flag (then the lines are taken as they are) and a
``source`` name, such as :class:`elucidate.spectrum.jcamp.JcampSpectrum`.
"""

from __future__ import annotations

import bisect
import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .peaklist import SHIFT_RANGE

__all__ = ["PickSettings", "PickedPeaks", "pick_peaks"]


@dataclass(frozen=True)
class PickSettings:
    """Peak-picking settings (all shown in reports).

    Attributes
    ----------
    snr : float
        A line must rise above the baseline by at least ``snr`` x the noise.
    false_line_rate : float
        The threshold is raised, when needed, so that pure Gaussian noise
        would give this many false lines per spectrum on average
        (Bonferroni bound over the N points: z with P(Z > z) = rate / N).
    min_relative_height : float
        ... and by this fraction of the tallest line (0-1).
    min_separation_ppm : float
        Two picked lines are at least this far apart; the taller wins.
    baseline_segments : int
        Number of segments whose medians define the baseline.
    ppm_range : tuple of float
        Only lines inside this window are kept.
    match_tolerance_ppm : float
        DEPT lines are matched to 13C lines within this distance.
    dept90_min_fraction : float
        A DEPT-90 line counts as CH only if at least this fraction of the
        tallest DEPT-90 line (suppresses CH2/CH3 residues).
    """

    snr: float = 5.0
    false_line_rate: float = 0.001
    min_relative_height: float = 0.01
    min_separation_ppm: float = 0.03
    baseline_segments: int = 32
    ppm_range: tuple[float, float] = SHIFT_RANGE
    match_tolerance_ppm: float = 0.15
    dept90_min_fraction: float = 0.2

    def __post_init__(self) -> None:
        def pos(name, v, hi=None):
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v < 0 or (
                hi is not None and v > hi
            ):
                rng = f"0...{hi:g}" if hi is not None else "a number >= 0"
                raise InputError(f"peak picking setting {name}={v!r} must be {rng}")

        pos("snr", self.snr)
        pos("false_line_rate", self.false_line_rate, 1.0)
        if self.false_line_rate == 0:
            raise InputError("peak picking setting false_line_rate=0 must be above 0 (e.g. 0.001)")
        pos("min_relative_height", self.min_relative_height, 1.0)
        pos("min_separation_ppm", self.min_separation_ppm, 50.0)
        pos("match_tolerance_ppm", self.match_tolerance_ppm, 5.0)
        pos("dept90_min_fraction", self.dept90_min_fraction, 1.0)
        if isinstance(self.baseline_segments, bool) or not isinstance(self.baseline_segments, int) or not (
            1 <= self.baseline_segments <= 4096
        ):
            raise InputError(
                f"peak picking setting baseline_segments={self.baseline_segments!r} must be an integer 1...4096"
            )
        r = self.ppm_range
        if not (isinstance(r, tuple) and len(r) == 2 and all(isinstance(v, (int, float)) for v in r) and r[0] < r[1]):
            raise InputError(f"peak picking setting ppm_range={r!r} must be (low, high) with low < high")

    def describe(self) -> str:
        return (
            f"baseline: median of {self.baseline_segments} segments; threshold: at least {self.snr:g} x noise "
            f"(MAD; raised to keep {self.false_line_rate:g} false lines per spectrum) and "
            f"{self.min_relative_height:g} x tallest line; minimum separation "
            f"{self.min_separation_ppm:g} ppm; window {self.ppm_range[0]:g}...{self.ppm_range[1]:g} ppm"
        )


@dataclass(frozen=True)
class PickedPeaks:
    """Lines picked from a spectrum, with what was used to pick them.

    Attributes
    ----------
    shifts : tuple of float
        Line positions, ppm, in descending order.
    heights : tuple of float
        Baseline-corrected heights (negative for inverted lines).
    settings : PickSettings
    noise : float
        Robust noise estimate (MAD x 1.4826) of the corrected spectrum.
    threshold : float
        Height a line had to exceed.
    k : float
        The threshold in units of the noise actually used (>= ``snr``).
    source : str
    """

    shifts: tuple[float, ...]
    heights: tuple[float, ...]
    settings: PickSettings
    noise: float
    threshold: float
    source: str = ""
    k: float = 0.0

    def __len__(self) -> int:
        return len(self.shifts)

    def describe(self) -> str:
        return (
            f"{len(self.shifts)} lines picked from {self.source or 'spectrum'}: "
            f"{self.settings.describe()}; noise {self.noise:.3g}, threshold {self.threshold:.3g}"
            + (f" ({self.k:.2f} x noise)" if self.k else "")
        )


def _normal_quantile_upper(p: float) -> float:
    """z with P(Z > z) = p for a standard normal Z (bisection on erfc)."""
    lo, hi = 0.0, 40.0
    for _ in range(100):
        mid = 0.5 * (lo + hi)
        if 0.5 * math.erfc(mid / math.sqrt(2.0)) > p:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


def _baseline(y: np.ndarray, segments: int) -> np.ndarray:
    n = y.size
    segments = max(1, min(segments, n // 8 or 1))
    edges = np.linspace(0, n, segments + 1).astype(int)
    centers = np.array([(a + b - 1) / 2.0 for a, b in zip(edges[:-1], edges[1:])])
    medians = np.array([np.median(y[a:b]) for a, b in zip(edges[:-1], edges[1:])])
    return np.interp(np.arange(n), centers, medians)


def _nearest_higher(s: np.ndarray, i: int, step: int) -> int | None:
    """Index of the nearest point beyond ``i`` (direction ``step``) higher than s[i]."""
    h, n, w = s[i], s.size, 32
    while True:
        if step < 0:
            lo = max(0, i - w)
            hit = np.nonzero(s[lo:i] > h)[0]
            if hit.size:
                return lo + int(hit[-1])
            if lo == 0:
                return None
        else:
            hi = min(n, i + 1 + w)
            hit = np.nonzero(s[i + 1 : hi] > h)[0]
            if hit.size:
                return i + 1 + int(hit[0])
            if hi == n:
                return None
        w *= 4


def _prominence(s: np.ndarray, i: int) -> float:
    """Topographic prominence of the local maximum ``s[i]``.

    The height of ``s[i]`` above the higher of the two lowest points met
    when walking left and right until a higher point (or the end).  The
    search window grows geometrically, so noise ripples cost little.
    """
    left = _nearest_higher(s, i, -1)
    right = _nearest_higher(s, i, +1)
    lmin = s[(left if left is not None else 0) : i + 1].min()
    rmin = s[i : (right + 1 if right is not None else s.size)].min()
    return float(s[i] - max(lmin, rmin))


def pick_peaks(spectrum, settings: PickSettings | None = None, *, both_signs: bool = False) -> PickedPeaks:
    """Pick lines from a sampled spectrum (or take them from a peak table).

    Parameters
    ----------
    spectrum : JcampSpectrum or alike
        Needs ``x``, ``y`` (numpy arrays), ``is_peak_table`` and ``source``.
    settings : PickSettings, optional
    both_signs : bool
        Also pick inverted (negative) lines, as in DEPT-135.

    Returns
    -------
    PickedPeaks
    """
    if settings is None:
        settings = PickSettings()
    if not isinstance(settings, PickSettings):
        raise InputError(f"settings must be PickSettings, got {type(settings).__name__}")
    if not all(hasattr(spectrum, a) for a in ("x", "y", "is_peak_table", "source")):
        raise InputError(f"spectrum must be a JcampSpectrum, got {type(spectrum).__name__}")
    lo, hi = settings.ppm_range
    x = np.asarray(spectrum.x, dtype=float)
    y = np.asarray(spectrum.y, dtype=float)
    if x.ndim != 1 or x.shape != y.shape:
        raise InputError(f"{spectrum.source}: x and y must be 1-D and of equal length")
    if spectrum.is_peak_table:
        # A table lists lines; for DEPT-135 the sign matters, a 0 carries none.
        keep = (x >= lo) & (x <= hi)
        if both_signs:
            keep &= y != 0
        order = np.argsort(-x[keep], kind="stable")
        xs, hs = x[keep][order], y[keep][order]
        return PickedPeaks(
            tuple(float(round(v, 4)) for v in xs), tuple(float(v) for v in hs), settings, 0.0, 0.0, spectrum.source
        )
    if x.size < 5:
        raise InputError(f"{spectrum.source}: the spectrum has only {x.size} points; too few to pick lines")
    base = _baseline(y, settings.baseline_segments)
    r = y - base
    noise = float(np.median(np.abs(r - np.median(r))) * 1.4826)
    tallest = float(np.max(np.abs(r))) if both_signs else float(np.max(r))
    n_tests = r.size * (2 if both_signs else 1)
    k = max(settings.snr, _normal_quantile_upper(min(0.5, settings.false_line_rate / n_tests)))
    threshold = max(k * noise, settings.min_relative_height * max(tallest, 0.0))
    if threshold <= 0:
        threshold = 1e-12 * max(abs(tallest), 1.0)
    min_prominence = k * noise
    cands: list[tuple[float, float]] = []
    signs = (1.0, -1.0) if both_signs else (1.0,)
    idx_all = np.arange(1, r.size - 1)
    for sgn in signs:
        s = sgn * r
        mid = s[1:-1]
        is_max = (mid > threshold) & (mid >= s[:-2]) & (mid > s[2:])
        for i in idx_all[is_max]:
            if _prominence(s, int(i)) < min_prominence:
                continue  # a noise ripple on the flank of a taller line
            a, b, c = s[i - 1], s[i], s[i + 1]
            denom = a - 2 * b + c
            p = 0.5 * (a - c) / denom if denom < 0 else 0.0
            p = max(-0.5, min(0.5, p))
            j = int(i) if p >= 0 else int(i) - 1
            frac = p if p >= 0 else 1.0 + p
            pos = float(x[j] + frac * (x[j + 1] - x[j]))
            height = b - 0.25 * (a - c) * p
            if lo <= pos <= hi:
                cands.append((pos, sgn * float(height)))
    cands.sort(key=lambda t: (-abs(t[1]), -t[0]))
    chosen: list[tuple[float, float]] = []
    taken: list[float] = []  # sorted positions already chosen
    sep = settings.min_separation_ppm
    for pos, h in cands:
        at = bisect.bisect_left(taken, pos)
        if (at < len(taken) and taken[at] - pos < sep) or (at > 0 and pos - taken[at - 1] < sep):
            continue
        taken.insert(at, pos)
        chosen.append((pos, h))
    chosen.sort(key=lambda t: -t[0])
    return PickedPeaks(
        tuple(round(p, 4) for p, _ in chosen),
        tuple(h for _, h in chosen),
        settings,
        noise,
        float(threshold),
        spectrum.source,
        float(k),
    )


