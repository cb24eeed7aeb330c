"""Synthetic 13C and DEPT spectra made of Lorentzian lines.

For tests and demonstration files only: a sum of Lorentzian lines
(the absorption line shape of a freely decaying signal after Fourier
transformation), optional Gaussian noise from a seeded generator, and a
constant or sloping baseline.

DEPT line heights follow the textbook transfer dependence on the flip angle
theta (common practice, no source; Doddrell, Pegg & Bendall 1982 for the
method, from memory): CH ~ sin(theta), CH2 ~ sin(2 theta),
CH3 ~ (3/4)(sin(theta) + sin(3 theta)); quaternary carbons give nothing.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InputError

__all__ = ["lorentzian_spectrum", "dept_heights"]


def lorentzian_spectrum(
    lines,
    *,
    first_ppm: float = 230.0,
    last_ppm: float = -10.0,
    npoints: int = 32768,
    observe_mhz: float = 100.6,
    width_hz: float = 2.0,
    noise: float = 0.0,
    seed: int = 0,
    baseline: tuple[float, float] = (0.0, 0.0),
):
    """Sample a spectrum of Lorentzian lines.

    Parameters
    ----------
    lines : iterable of (shift_ppm, height) or (shift_ppm, height, width_hz)
    first_ppm, last_ppm : float
        Axis ends (first point, last point).
    npoints : int
    observe_mhz : float
        Converts the line widths from Hz to ppm.
    width_hz : float
        Default full width at half height.
    noise : float
        Standard deviation of added Gaussian noise (seeded).
    seed : int
    baseline : (offset, slope per ppm)

    Returns
    -------
    x, y : numpy.ndarray
    """
    if npoints < 2 or observe_mhz <= 0 or width_hz <= 0 or noise < 0:
        raise InputError("lorentzian_spectrum: npoints >= 2, observe_mhz > 0, width_hz > 0, noise >= 0")
    x = np.linspace(first_ppm, last_ppm, npoints)
    y = np.full(npoints, float(baseline[0])) + baseline[1] * (x - x.mean())
    for line in lines:
        shift, height = float(line[0]), float(line[1])
        w = (float(line[2]) if len(line) > 2 else width_hz) / observe_mhz
        half = w / 2.0
        y += height * half * half / ((x - shift) ** 2 + half * half)
    if noise > 0:
        y += np.random.default_rng(seed).normal(0.0, noise, npoints)
    return x, y


def dept_heights(hydrogens: int | None, theta_deg: float) -> float:
    """Relative DEPT height of a carbon with ``hydrogens`` H at flip angle theta."""
    if hydrogens not in (0, 1, 2, 3):
        raise InputError(f"dept_heights: hydrogens must be 0-3, got {hydrogens!r}")
    t = math.radians(theta_deg)
    return {
        0: 0.0,
        1: math.sin(t),
        2: math.sin(2 * t),
        3: 0.75 * (math.sin(t) + math.sin(3 * t)),
    }[hydrogens]
