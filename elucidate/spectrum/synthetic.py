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
import os
from pathlib import Path

import numpy as np

from ..errors import InputError

__all__ = ["lorentzian_spectrum", "dept_heights", "solvent_multiplet", "write_demo_spectra"]


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


def solvent_multiplet(solvent: str, observe_mhz: float) -> list[tuple[float, float]]:
    """Lines (ppm, relative height) of a solvent's 13C multiplets.

    Spin-1 splitting by n deuterons gives the coefficients of (1 + x + x^2)^n
    (1:1:1, 1:2:3:2:1, 1:3:6:7:6:3:1); spin-1/2 (F) gives binomial ones.
    Centres and couplings from :mod:`elucidate.spectrum.solvents`.
    """
    from .solvents import _CANONICAL, SOLVENT_MULTIPLETS, resolve_solvent

    name = resolve_solvent(solvent)
    if name == "none":
        return []
    out: list[tuple[float, float]] = []
    for centre, couplings in zip(_CANONICAL[name], SOLVENT_MULTIPLETS[name]):
        pattern = {0.0: 1.0}
        for n, spin, j in couplings:
            unit = [1.0, 1.0, 1.0] if spin == 1 else [1.0, 1.0]
            coeffs = np.array([1.0])
            for _ in range(n):
                coeffs = np.convolve(coeffs, unit)
            step = j
            start = -(len(coeffs) - 1) / 2 * step
            new: dict[float, float] = {}
            for off, h in pattern.items():
                for k, c in enumerate(coeffs):
                    key = round(off + start + k * step, 6)
                    new[key] = new.get(key, 0.0) + h * c
            pattern = new
        top = max(pattern.values())
        out.extend((centre + off / observe_mhz, h / top) for off, h in sorted(pattern.items()))
    return out


def write_demo_spectra(
    carbons,
    directory,
    *,
    stem: str = "sample",
    solvent: str = "cdcl3",
    observe_mhz: float = 100.6,
    form: str = "DIFDUP",
    noise: float = 0.4,
    seed: int = 0,
    npoints: int = 65536,
) -> dict[str, Path]:
    """Write a synthetic 13C, DEPT-135 and DEPT-90 set as JCAMP-DX files.

    For demonstration scenarios and tests: the spectra are computed, not
    measured, and say so in their ``##ORIGIN`` record and comments.

    Parameters
    ----------
    carbons : iterable of (shift_ppm, hydrogens)
        One entry per carbon atom (equivalent carbons repeated).
    directory : path
        Existing directory to write ``<stem>_13c.jdx``, ``<stem>_dept135.jdx``
        and ``<stem>_dept90.jdx`` into.
    solvent : str
        Its C-D multiplet goes into the 13C spectrum ("none" for none).

    Returns
    -------
    dict
        ``{"c13": path, "dept135": path, "dept90": path}``.
    """
    from .jcamp_write import format_jcamp_spectrum

    items = [(float(sh), h) for sh, h in carbons]
    if not items:
        raise InputError("write_demo_spectra needs at least one carbon")
    directory = Path(directory)
    if not directory.is_dir():
        raise InputError(f"directory {os.fspath(directory)} does not exist")
    # Quaternary carbons relax slowly and lack NOE: drawn at 40 % height.
    c13 = [(sh, 40.0 if h == 0 else 100.0) for sh, h in items]
    c13 += [(sh, 80.0 * rel) for sh, rel in solvent_multiplet(solvent, observe_mhz)]
    sets = {
        "c13": (c13, "13C{1H}"),
        "dept135": ([(sh, 100.0 * dept_heights(h, 135)) for sh, h in items if h], "DEPT-135"),
        "dept90": ([(sh, 100.0 * dept_heights(h, 90)) for sh, h in items if h], "DEPT-90"),
    }
    paths = {}
    for k, (key, (lines, label)) in enumerate(sets.items()):
        x, y = lorentzian_spectrum(
            lines, npoints=npoints, observe_mhz=observe_mhz, width_hz=1.5, noise=noise, seed=seed + k
        )
        text = format_jcamp_spectrum(
            x,
            y,
            title=f"{stem} {label}",
            form=form,
            observe_mhz=observe_mhz,
            comments=(f"synthetic {label} spectrum computed by elucidate for a demonstration; not measured",),
        )
        path = directory / f"{stem}_{key}.jdx"
        path.write_text(text, encoding="ascii")
        paths[key] = path
    return paths
