"""Carbon multiplicities from DEPT-135 and DEPT-90 line lists.

DEPT (distortionless enhancement by polarization transfer; Doddrell, Pegg
& Bendall, J. Magn. Reson. 1982, 48, 323, from memory) shows protonated
carbons only, with a sign and size that depend on the number of attached
hydrogens and the final proton pulse angle.  Each 13C line is read by the
usual rules (common practice, no source):

* positive in DEPT-90 -> CH;
* positive in DEPT-135 but not in DEPT-90 -> CH3;
* negative in DEPT-135 -> CH2;
* present in the 13C spectrum but absent from both -> C (quaternary).

With DEPT-135 alone, positive lines stay unknown (CH or CH3) and absent
lines are C; with DEPT-90 alone only CH is known.  A DEPT line is matched
to the nearest 13C line within a tolerance (each DEPT line marks one 13C
line only).  An imperfect DEPT-90 shows small CH2/CH3 residues; lines below
a fraction of the tallest DEPT-90 line are ignored, but larger residues can
still pass as CH, so the result is a hypothesis to check against the
spectra.

A file given as the wrong experiment cannot always be told from its header;
:func:`dept_sign_warnings` looks at the signs instead (a DEPT-90 has no
strong negative line; a DEPT-135 of a compound with CH2 groups has one) and
only warns, since a compound without CH2 gives a DEPT-135 without negative
lines too.
"""

from __future__ import annotations

import math

from ..errors import InputError

__all__ = ["classify_multiplicities", "dept_sign_warnings"]


def _nearest(line_shifts, pos: float, tol: float) -> int | None:
    best, best_d = None, tol
    for i, s in enumerate(line_shifts):
        d = abs(s - pos)
        if d <= best_d:
            best, best_d = i, d
    return best


def _check_lines(lines, role: str) -> list[tuple[float, float]]:
    out = []
    for item in lines:
        try:
            pos, h = float(item[0]), float(item[1])
        except (TypeError, ValueError, IndexError):
            raise InputError(f"{role} lines must be (shift, height) pairs, got {item!r}") from None
        if not (math.isfinite(pos) and math.isfinite(h)):
            raise InputError(f"{role} line {item!r} is not finite")
        out.append((pos, h))
    return out


def classify_multiplicities(
    shifts,
    dept135=None,
    dept90=None,
    *,
    match_tolerance_ppm: float = 0.15,
    dept90_min_fraction: float = 0.2,
) -> tuple[tuple[int | None, ...], tuple[str, ...]]:
    """Attached-hydrogen counts of 13C lines from DEPT line lists.

    Parameters
    ----------
    shifts : sequence of float
        13C line positions, ppm.
    dept135, dept90 : sequence of (shift, signed height), optional
        Lines picked from the DEPT spectra (``None`` = not recorded).
    match_tolerance_ppm : float
        Largest distance between a DEPT line and its 13C line.
    dept90_min_fraction : float
        DEPT-90 lines below this fraction of the tallest one are residues.

    Returns
    -------
    hydrogens : tuple of (int or None)
        One per 13C line: 0-3, or ``None`` when the data do not decide.
    warnings : tuple of str

    Examples
    --------
    >>> classify_multiplicities([170.0, 60.0, 14.0, 128.0],
    ...     dept135=[(60.0, -1.0), (14.0, 1.0), (128.0, 0.7)], dept90=[(128.0, 1.0)])[0]
    (0, 2, 3, 1)
    """
    shifts = [float(s) for s in shifts]
    if not (0 < match_tolerance_ppm <= 5):
        raise InputError(f"DEPT match tolerance {match_tolerance_ppm!r} must be in (0, 5] ppm")
    if not (0 <= dept90_min_fraction <= 1):
        raise InputError(f"DEPT-90 minimum fraction {dept90_min_fraction!r} must be in [0, 1]")
    have135, have90 = dept135 is not None, dept90 is not None
    warnings: list[str] = []
    if not (have135 or have90):
        return tuple(None for _ in shifts), ()
    signs: list[set[int]] = [set() for _ in shifts]
    in90 = [False] * len(shifts)
    for role, lines in (("DEPT-135", dept135), ("DEPT-90", dept90)):
        if lines is None:
            continue
        lines = _check_lines(lines, role)
        tallest = max((abs(h) for _, h in lines), default=0.0)
        unmatched = []
        for pos, h in lines:
            if h == 0:
                continue
            if role == "DEPT-90" and (h < 0 or abs(h) < dept90_min_fraction * tallest):
                continue
            i = _nearest(shifts, pos, match_tolerance_ppm)
            if i is None:
                unmatched.append(pos)
            elif role == "DEPT-135":
                signs[i].add(1 if h > 0 else -1)
            else:
                in90[i] = True
        if unmatched:
            warnings.append(
                f"{role} lines without a 13C line within {match_tolerance_ppm:g} ppm ignored: "
                + ", ".join(f"{p:.2f}" for p in unmatched)
            )
    hyd: list[int | None] = []
    for i, shift in enumerate(shifts):
        sg = signs[i]
        if len(sg) > 1:
            warnings.append(
                f"{shift:.2f} ppm shows both positive and negative DEPT-135 lines; multiplicity left unknown"
            )
            hyd.append(None)
        elif in90[i]:
            if sg == {-1}:
                warnings.append(
                    f"{shift:.2f} ppm is positive in DEPT-90 but negative in DEPT-135; multiplicity left unknown"
                )
                hyd.append(None)
            else:
                hyd.append(1)
        elif sg == {-1}:
            hyd.append(2)
        elif sg == {1}:
            hyd.append(3 if have90 else None)
        else:
            hyd.append(0 if have135 else None)
    if have135 and not have90:
        warnings.append("DEPT-135 without DEPT-90: positive lines are CH or CH3 and stay unknown")
    if have90 and not have135:
        warnings.append("DEPT-90 without DEPT-135: only CH lines are known")
    return tuple(hyd), tuple(warnings)


def dept_sign_warnings(
    dept135=None,
    dept90=None,
    *,
    ch2_fraction: float = 0.2,
    dept90_negative_fraction: float = 0.3,
    dept135_name: str = "DEPT-135",
    dept90_name: str = "DEPT-90",
) -> tuple[str, ...]:
    """Warnings when the line signs do not look like the experiment named.

    Rules (common practice, no source): CH2 carbons give negative lines in
    a DEPT-135 and (almost) nothing in a DEPT-90, where only CH shows,
    positive.  So a "DEPT-135" without any negative line is either a
    compound without CH2 or another experiment (DEPT-90, DEPT-45), and a
    "DEPT-90" with strong negative lines is probably a DEPT-135.  Warnings
    only: the data cannot prove which.

    Parameters
    ----------
    dept135, dept90 : sequence of (shift, signed height), optional
        Lines picked with both signs.
    ch2_fraction : float
        A negative DEPT-135 line counts when at least this fraction of the
        tallest line (smaller ones may be artefacts).
    dept90_negative_fraction : float
        A negative DEPT-90 line counts when at least this fraction of the
        tallest line (above the usual residue of an imperfect DEPT-90).
    dept135_name, dept90_name : str
        How the messages name the two spectra (e.g. with their file names).

    Returns
    -------
    tuple of str

    Examples
    --------
    >>> dept_sign_warnings(dept90=[(128.0, 1.0), (29.7, -0.9)])[0][:60]
    'DEPT-90 shows strong negative lines (29.70 ppm); a DEPT-90 s'
    >>> dept_sign_warnings(dept135=[(128.0, 1.0), (29.7, -0.9)])
    ()
    """
    for name, value in (("ch2_fraction", ch2_fraction), ("dept90_negative_fraction", dept90_negative_fraction)):
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not 0 < value <= 1:
            raise InputError(f"{name} {value!r} must be a fraction in (0, 1]")
    out = []
    if dept135 is not None:
        lines = _check_lines(dept135, "DEPT-135")
        tallest = max((abs(h) for _, h in lines), default=0.0)
        if tallest > 0 and not any(h < 0 and -h >= ch2_fraction * tallest for _, h in lines):
            out.append(
                f"{dept135_name} shows no negative (CH2) line: right if the compound has no CH2 group, "
                "otherwise check that the file is not a DEPT-90 or DEPT-45 spectrum"
            )
    if dept90 is not None:
        lines = _check_lines(dept90, "DEPT-90")
        tallest = max((abs(h) for _, h in lines), default=0.0)
        strong = sorted((pos for pos, h in lines if h < 0 and -h >= dept90_negative_fraction * tallest),
                        reverse=True)
        if strong:
            out.append(
                f"{dept90_name} shows strong negative lines ({', '.join(f'{p:.2f}' for p in strong)} ppm); "
                "a DEPT-90 shows CH lines only, positive: check that the file is not a DEPT-135 spectrum"
            )
    return tuple(out)
