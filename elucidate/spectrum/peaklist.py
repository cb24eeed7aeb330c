"""The peak-list types shared by every spectrum reader: :class:`Peak`,
:class:`PeakList` and the merging of identical lines.

Kept apart from the readers so that the text reader (:mod:`.peaks`), the
JCAMP-DX reader (:mod:`.jcamp`) and peak picking (:mod:`.picking`) import
in one direction only: ``peaks -> jcamp -> picking -> peaklist``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

from ..errors import InputError

__all__ = ["Peak", "PeakList", "SHIFT_RANGE", "MULTIPLICITY_NAMES", "merge_lines"]

#: Accepted chemical-shift window in ppm (inclusive).  13C shifts of organic
#: compounds fall well inside it (common practice, no source).
SHIFT_RANGE: tuple[float, float] = (-20.0, 250.0)

#: Hydrogen count -> multiplicity name (``None``: unknown).
MULTIPLICITY_NAMES = {0: "C", 1: "CH", 2: "CH2", 3: "CH3", None: "?"}
_NAMES = MULTIPLICITY_NAMES


@dataclass(frozen=True)
class Peak:
    """One observed 13C line.

    Attributes
    ----------
    shift : float
        Chemical shift in ppm.
    hydrogens : int or None
        Attached hydrogens (0-3) from the multiplicity; ``None`` = unknown.
    count : int or None
        Number of carbons under this line; ``None`` = not given.
    """

    shift: float
    hydrogens: int | None
    count: int | None = None

    def __post_init__(self) -> None:
        if isinstance(self.shift, bool) or not isinstance(self.shift, (int, float)):
            raise InputError(f"peak shift {self.shift!r} is not a number; give the shift in ppm")
        if not math.isfinite(self.shift):
            raise InputError(f"peak shift {self.shift!r} is not finite; give the shift in ppm")
        if self.hydrogens is not None and (
            isinstance(self.hydrogens, bool)
            or not isinstance(self.hydrogens, int)
            or not 0 <= self.hydrogens <= 3
        ):
            raise InputError(
                f"peak at {self.shift:g} ppm: hydrogens {self.hydrogens!r} must be 0, 1, 2, 3 or None"
            )
        if self.count is not None and (
            isinstance(self.count, bool) or not isinstance(self.count, int) or self.count < 1
        ):
            raise InputError(
                f"peak at {self.shift:g} ppm: count {self.count!r} must be a positive integer or None"
            )

    @property
    def multiplicity(self) -> str:
        """``"C"``, ``"CH"``, ``"CH2"``, ``"CH3"`` or ``"?"``."""
        return _NAMES[self.hydrogens]

    def describe(self) -> str:
        """Short text such as ``"128.4 CH x2"``."""
        text = f"{self.shift:g} {self.multiplicity}"
        if self.count is not None:
            text += f" x{self.count}"
        return text


@dataclass(frozen=True)
class PeakList:
    """An ordered list of observed lines plus warnings collected on the way.

    Attributes
    ----------
    peaks : tuple of Peak
        In the order given (duplicates merged at the first occurrence).
    warnings : tuple of str
        Human-readable notes (merged duplicates, dropped solvent lines, ...).
    provenance : tuple of str
        How the list was obtained when it was not typed in (e.g. the peak
        picking settings used on a JCAMP-DX spectrum), for reports.
    observe_mhz : float or None
        13C observe frequency when known (from a spectrum file); lets
        solvent removal cover the whole C-D multiplet.
    """

    peaks: tuple[Peak, ...]
    warnings: tuple[str, ...] = field(default=())
    provenance: tuple[str, ...] = field(default=())
    observe_mhz: float | None = None

    def __len__(self) -> int:
        return len(self.peaks)

    def __iter__(self):
        return iter(self.peaks)

    @property
    def n_lines(self) -> int:
        """Number of lines."""
        return len(self.peaks)

    @property
    def shifts(self) -> tuple[float, ...]:
        return tuple(p.shift for p in self.peaks)

    @property
    def has_multiplicities(self) -> bool:
        """True when every line has a known multiplicity."""
        return bool(self.peaks) and all(p.hydrogens is not None for p in self.peaks)

    @property
    def has_counts(self) -> bool:
        """True when every line has a carbon count."""
        return bool(self.peaks) and all(p.count is not None for p in self.peaks)

    @property
    def min_carbons(self) -> int:
        """Fewest carbons the list can stand for (a line without count = 1)."""
        return sum(p.count or 1 for p in self.peaks)

    @property
    def min_carbon_hydrogens(self) -> int:
        """Fewest H on carbon implied by the known multiplicities."""
        return sum((p.hydrogens or 0) * (p.count or 1) for p in self.peaks)

    def with_warnings(self, *messages: str) -> "PeakList":
        """A copy with ``messages`` appended to the warnings."""
        return replace(self, warnings=self.warnings + tuple(messages))

    def without_multiplicities(self) -> "PeakList":
        """A copy with every multiplicity unknown (lines that become identical merge)."""
        merged = merge_lines(tuple(replace(p, hydrogens=None) for p in self.peaks), self.warnings, "line")
        return replace(merged, provenance=self.provenance, observe_mhz=self.observe_mhz)

    def without_counts(self) -> "PeakList":
        """A copy with every carbon count removed."""
        return replace(self, peaks=tuple(replace(p, count=None) for p in self.peaks))

    def to_text(self) -> str:
        """The lines in the plain file syntax (``shift mult [count]`` per line).

        ``parse_peaks(pl.to_text())`` gives the same lines back.
        """
        out = []
        for p in self.peaks:
            line = f"{float(p.shift)!r} {p.multiplicity}"
            if p.count is not None:
                line += f" {p.count}"
            out.append(line)
        return "\n".join(out) + "\n"

    def to_records(self) -> list[dict]:
        """``[{"shift", "mult", "count"}, ...]`` (``mult`` None when unknown)."""
        return [
            {"shift": p.shift, "mult": None if p.hydrogens is None else p.multiplicity, "count": p.count}
            for p in self.peaks
        ]


def merge_lines(
    peaks: tuple[Peak, ...], warnings: tuple[str, ...], what: str = "line", strict: bool = False
) -> PeakList:
    """Merge identical (shift, hydrogens) entries at the first occurrence.

    With ``strict`` (lists typed by a user), copies of which some carry a
    count and others not raise :class:`InputError`: their total is unknown.
    """
    groups: dict[tuple[float, int | None], list[int]] = {}
    for i, p in enumerate(peaks):
        groups.setdefault((p.shift, p.hydrogens), []).append(i)
    out: list[Peak] = []
    notes: list[str] = []
    for key, idx in groups.items():
        first = peaks[idx[0]]
        if len(idx) == 1:
            out.append(first)
            continue
        counts = [peaks[i].count for i in idx]
        numbers = ", ".join(str(i + 1) for i in idx)
        if strict and None in counts and any(c is not None for c in counts):
            raise InputError(
                f"{what}s {numbers} repeat the line {first.shift:g} ppm {first.multiplicity}, some "
                "with a carbon count and some without, so the total is unknown; give the line "
                "once with its total count (or leave the count out on every copy)"
            )
        total = sum(counts) if all(c is not None for c in counts) else None
        out.append(Peak(first.shift, first.hydrogens, total))
        if total is not None:
            tail = f"counts added to {total}"
        else:
            tail = "count left unspecified (add a count column to say how many carbons share it)"
        notes.append(
            f"duplicate {what}s {numbers} ({first.shift:g} ppm {first.multiplicity}) merged into one line; {tail}"
        )
    return PeakList(tuple(out), tuple(warnings) + tuple(notes))
