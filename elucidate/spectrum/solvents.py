"""13C lines of common NMR solvents, and their removal from a peak list.

A peak list picked from a spectrum usually still holds the lines of the
deuterated solvent (the CDCl3 triplet at 77.16 ppm, the DMSO-d6 septet at
39.52 ppm, ...).  :func:`remove_solvent_lines` drops peaks that fall within
a tolerance of a line of the named solvent and reports what it dropped.

Source of the values
--------------------
Deuterated solvents: G. R. Fulmer, A. J. M. Miller, N. H. Sherden,
H. E. Gottlieb, A. Nudelman, B. M. Stoltz, J. E. Bercaw, K. I. Goldberg,
*Organometallics* 2010, 29, 2176-2179, table of 13C solvent signals
(centre of each multiplet, ppm relative to TMS).  Values written from
memory of that table.

Multiplets: a carbon bearing n deuterons shows 2n+1 lines J(C,D) apart
(spin 1), fluorine splits into n+1 lines (spin 1/2).  When the observe
frequency is known (spectra read from JCAMP-DX files), the outer lines of
these multiplets, which can lie further than the tolerance from the centre
(the DMSO-d6 septet spans +-0.63 ppm at 100 MHz), are removed too.  The
coupling constants are the values commonly quoted on solvent data charts,
from memory, no specific source; they only place removal windows.

Carbon tetrachloride (a non-deuterated solvent still met in older data) is
not in that table; its single line at 96.1 ppm is a commonly quoted value,
from memory, no specific source.

Names
-----
Canonical names (``cdcl3``, ``dmso-d6``, ...) and the aliases in
:data:`SOLVENT_ALIASES` are accepted, case-insensitively: full names
(``chloroform-d``), formulas (``(CD3)2CO``) and the everyday names of the
protonated solvents, which stand for their deuterated form (``dmso``,
``chloroform``, ``methanol``; ``water`` and ``heavy water`` for ``d2o``).
Any other name is an error listing the canonical names; ``none`` keeps
every line.  D2O has no carbon, so nothing is removed for it; the result
then carries a warning saying so, as it does for every solvent without
13C lines, instead of passing silently.
"""

from __future__ import annotations

import itertools
import re
from dataclasses import replace

from ..errors import InputError
from .peaklist import PeakList

__all__ = [
    "SOLVENT_LINES",
    "SOLVENT_ALIASES",
    "resolve_solvent",
    "solvent_from_label",
    "remove_solvent_lines",
    "SOLVENT_MULTIPLETS",
    "multiplet_lines",
]

#: Canonical solvent name -> its 13C lines (ppm).
#: Fulmer et al., Organometallics 2010, 29, 2176 (from memory), except ccl4.
_CANONICAL: dict[str, tuple[float, ...]] = {
    "cdcl3": (77.16,),
    "acetone-d6": (29.84, 206.26),
    "dmso-d6": (39.52,),
    "cd3od": (49.00,),
    "cd3cn": (1.32, 118.26),
    "c6d6": (128.06,),
    "cd2cl2": (53.84,),
    "thf-d8": (25.31, 67.21),
    "toluene-d8": (20.43, 125.13, 127.96, 128.87, 137.48),
    "pyridine-d5": (123.87, 135.91, 150.35),
    "chlorobenzene-d5": (125.96, 128.25, 129.26, 134.19),
    "tfe-d3": (61.50, 126.28),
    "d2o": (),
    # Not in Fulmer et al.: commonly quoted value, from memory.
    "ccl4": (96.1,),
}

#: Couplings splitting each line of ``_CANONICAL`` (same order):
#: tuples of (number of nuclei, spin: 1 for D or 0.5 for F, J in Hz).
#: Commonly quoted chart values, from memory, no specific source.
SOLVENT_MULTIPLETS: dict[str, tuple[tuple[tuple[int, float, float], ...], ...]] = {
    "cdcl3": (((1, 1, 32.0),),),
    "acetone-d6": (((3, 1, 19.4),), ()),
    "dmso-d6": (((3, 1, 21.0),),),
    "cd3od": (((3, 1, 21.4),),),
    "cd3cn": (((3, 1, 21.0),), ()),
    "c6d6": (((1, 1, 24.3),),),
    "cd2cl2": (((2, 1, 27.2),),),
    "thf-d8": (((2, 1, 20.2),), ((2, 1, 22.2),)),
    "toluene-d8": (((3, 1, 19.0),), ((1, 1, 24.0),), ((1, 1, 24.0),), ((1, 1, 23.0),), ()),
    "pyridine-d5": (((1, 1, 25.0),), ((1, 1, 24.5),), ((1, 1, 27.5),)),
    "chlorobenzene-d5": (((1, 1, 24.5),), ((1, 1, 24.5),), ((1, 1, 24.5),), ()),
    "tfe-d3": (((2, 1, 22.0), (3, 0.5, 35.0)), ((3, 0.5, 277.0),)),
    "d2o": (),
    "ccl4": ((),),
}


def multiplet_lines(solvent: str, observe_mhz: float) -> tuple[float, ...]:
    """Every line (ppm) of the solvent's multiplets at ``observe_mhz`` MHz.

    Spin-1 nuclei (D): n nuclei give offsets -n..n times J; spin-1/2 (F):
    offsets (k - n/2) J, k = 0..n.  Offsets of several couplings add.
    """
    canonical = resolve_solvent(solvent)
    if isinstance(observe_mhz, bool) or not isinstance(observe_mhz, (int, float)) or not observe_mhz > 0:
        raise InputError(f"observe frequency {observe_mhz!r} must be a positive number of MHz")
    if canonical == "none":
        return ()
    out: set[float] = set()
    for centre, couplings in zip(_CANONICAL[canonical], SOLVENT_MULTIPLETS[canonical]):
        offset_sets = []
        for n, spin, j in couplings:
            if spin == 1:
                offset_sets.append([k * j for k in range(-n, n + 1)])
            else:
                offset_sets.append([(k - n / 2) * j for k in range(n + 1)])
        for combo in itertools.product(*offset_sets) if offset_sets else [()]:
            out.add(round(centre + sum(combo) / observe_mhz, 4))
    return tuple(sorted(out))


#: Alternative spellings (lower case) -> canonical name.
SOLVENT_ALIASES: dict[str, str] = {
    "chloroform-d": "cdcl3",
    "chloroform-d1": "cdcl3",
    "deuterochloroform": "cdcl3",
    "chloroform": "cdcl3",
    "acetone": "acetone-d6",
    "(cd3)2co": "acetone-d6",
    "cd3cocd3": "acetone-d6",
    "dmso": "dmso-d6",
    "(cd3)2so": "dmso-d6",
    "dimethyl sulfoxide-d6": "dmso-d6",
    "methanol-d4": "cd3od",
    "methanol": "cd3od",
    "meod": "cd3od",
    "acetonitrile-d3": "cd3cn",
    "acetonitrile": "cd3cn",
    "benzene-d6": "c6d6",
    "benzene": "c6d6",
    "dichloromethane-d2": "cd2cl2",
    "methylene chloride-d2": "cd2cl2",
    "tetrahydrofuran-d8": "thf-d8",
    "thf": "thf-d8",
    "c7d8": "toluene-d8",
    "toluene": "toluene-d8",
    "c5d5n": "pyridine-d5",
    "pyridine": "pyridine-d5",
    "c6d5cl": "chlorobenzene-d5",
    "trifluoroethanol-d3": "tfe-d3",
    "cf3cd2od": "tfe-d3",
    "deuterium oxide": "d2o",
    "water": "d2o",
    "heavy water": "d2o",
    "carbon tetrachloride": "ccl4",
    "tetrachloromethane": "ccl4",
    "none": "none",
}

#: Every accepted name (canonical and alias, lower case) -> 13C lines (ppm).
SOLVENT_LINES: dict[str, tuple[float, ...]] = dict(_CANONICAL)
SOLVENT_LINES.update({a: _CANONICAL[c] for a, c in SOLVENT_ALIASES.items() if c in _CANONICAL})
SOLVENT_LINES["none"] = ()


def _key(name: str) -> str:
    return re.sub(r"\s+", " ", name.strip().lower().replace("_", "-"))


def resolve_solvent(name: str) -> str:
    """Canonical lower-case solvent name for ``name`` (any accepted spelling).

    Raises
    ------
    InputError
        Unknown solvent; the message lists the known names.

    Examples
    --------
    >>> resolve_solvent("Chloroform-d")
    'cdcl3'
    """
    if not isinstance(name, str) or not name.strip():
        raise InputError("solvent name is empty; give one such as cdcl3 or dmso-d6")
    key = _key(name)
    if key in _CANONICAL or key == "none":
        return key
    if key in SOLVENT_ALIASES:
        return SOLVENT_ALIASES[key]
    compact = key.replace(" ", "")
    for cand in (compact, compact.replace("-d", "d")):
        if cand in _CANONICAL:
            return cand
        for k in _CANONICAL:
            if k.replace("-", "") == cand.replace("-", ""):
                return k
    raise InputError(
        f"unknown solvent {name!r}; known: {', '.join(sorted(_CANONICAL))} (also common names such "
        "as chloroform, dmso, methanol, water = d2o), or 'none' to keep every line"
    )


_LABEL_FORMULAS = {
    "cdcl3": "cdcl3",
    "dmso-d6": "dmso-d6",
    "cd3od": "cd3od",
    "(cd3)2co": "acetone-d6",
    "cd3cocd3": "acetone-d6",
    "c6d6": "c6d6",
    "c5d5n": "pyridine-d5",
    "d2o": "d2o",
    "cd3cn": "cd3cn",
    "cd2cl2": "cd2cl2",
    "thf-d8": "thf-d8",
    "ccl4": "ccl4",
}


def solvent_from_label(label: str | None) -> str | None:
    """Best-effort canonical solvent from a free-text database label.

    Labels such as ``"Chloroform-D1 (CDCl3)"`` or ``"CDCL3,TMS"`` map to a
    canonical name; mixtures (``"... + ..."``, ``"A/B"``), unknown or empty
    labels give ``None`` (nothing should be removed then).
    """
    if not label or not isinstance(label, str):
        return None
    key = _key(label)
    if "+" in key or " or " in key or re.search(r"\(\d+:\d+\)", key):
        return None
    try:
        return resolve_solvent(key)
    except InputError:
        pass
    found = set()
    for token in re.split(r"[\s,()]+", key):
        if token in _LABEL_FORMULAS:
            found.add(_LABEL_FORMULAS[token])
        else:
            try:
                found.add(resolve_solvent(token))
            except InputError:
                continue
    found.discard("none")
    return found.pop() if len(found) == 1 else None


def remove_solvent_lines(
    peaks: PeakList,
    solvent: str,
    tolerance: float = 0.5,
    observe_mhz: float | None = None,
    line_tolerance: float = 0.1,
) -> PeakList:
    """Drop peaks lying within ``tolerance`` ppm of a line of ``solvent``.

    Parameters
    ----------
    peaks : PeakList
    solvent : str
        Any accepted solvent name (see :data:`SOLVENT_LINES`).
    tolerance : float
        Half-width of the window around each solvent line centre, ppm
        (> 0, at most 5).
    observe_mhz : float, optional
        13C observe frequency; defaults to ``peaks.observe_mhz``.  When
        known, peaks within ``line_tolerance`` of any line of the C-D (C-F)
        multiplets are dropped as well.
    line_tolerance : float
        Window around each multiplet line, ppm.

    Returns
    -------
    PeakList
        The remaining lines, with a warning listing each dropped line (for
        a solvent without carbon, such as D2O, a warning that nothing was
        removed; ``"none"`` returns ``peaks`` unchanged).

    Raises
    ------
    InputError
        Unknown solvent, bad tolerance, or every line removed.
    """
    if not isinstance(peaks, PeakList):
        raise InputError(f"peaks must be a PeakList, got {type(peaks).__name__}")
    canonical = resolve_solvent(solvent)
    for name, value in (("solvent tolerance", tolerance), ("solvent line tolerance", line_tolerance)):
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not 0 < value <= 5:
            raise InputError(f"{name} {value!r} must be a number of ppm in (0, 5]")
    mhz = peaks.observe_mhz if observe_mhz is None else observe_mhz
    lines = SOLVENT_LINES[canonical]
    if not lines:
        if canonical == "none":
            return peaks
        named = canonical if _key(solvent) == canonical else f"{solvent!r} (read as {canonical})"
        return peaks.with_warnings(f"solvent {named} has no carbon, so no 13C line was removed")
    satellites = multiplet_lines(canonical, mhz) if mhz is not None else ()
    keep, dropped = [], []
    for p in peaks.peaks:
        near = [s for s in lines if abs(p.shift - s) <= tolerance]
        near += [s for s in satellites if abs(p.shift - s) <= line_tolerance]
        if near:
            centre = min(lines, key=lambda s: abs(p.shift - s))
            dropped.append((p, centre))
        else:
            keep.append(p)
    if not dropped:
        return peaks
    if not keep:
        raise InputError(
            f"every peak lies within {tolerance:g} ppm of a {canonical} line; "
            "check the solvent name or the peak list"
        )
    listed = ", ".join(f"{p.shift:g} ppm ({s:g})" for p, s in dropped)
    note = f"removed {len(dropped)} line(s) near {canonical} solvent signals: {listed}"
    return replace(peaks, peaks=tuple(keep), warnings=peaks.warnings + (note,))
