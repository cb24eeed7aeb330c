"""2D NMR correlation tables: the cross peaks of HSQC, HMBC, COSY (and H2BC).

A lab that records 2D spectra reads a peak table off each: one row per
cross peak.  This module reads such a table; what the rows mean for a
structure is :mod:`elucidate.constraints.correlations`.

Accepted text
-------------
One cross peak per line, three fields: the experiment, the 1H shift and
the 13C shift (HSQC, HMQC, HMBC, H2BC) or the second 1H shift (COSY), in
ppm, separated by whitespace, tabs, commas or semicolons.  ``#`` starts a
comment; blank lines are ignored; a first line naming the columns
(``experiment, 1H, 13C``, any words, first one ``experiment``/``type``/
``exp``) is skipped::

    # sample KB-17, CDCl3, 600 MHz
    HSQC   7.26   128.4
    HMBC   2.55   197.8
    COSY   1.25   4.12

Experiment names are the trade's (case-insensitive): ``HSQC`` (also
``HMQC``, the same one-bond information), ``HMBC``, ``H2BC``, ``COSY``
(also ``DQF-COSY``, ``TOCSY`` is not accepted: its relays say nothing about
bond distance).  Peak tables only: reading 2D spectra is out of scope.

Every problem is an :class:`~elucidate.errors.InputError` naming the line
and saying how to fix it.
"""

from __future__ import annotations

import math
import os
import re
from dataclasses import dataclass

from ..errors import InputError
from .peaklist import SHIFT_RANGE
from .textfile import read_utf8

__all__ = ["CrossPeak", "CorrelationTable", "parse_correlations", "read_correlations", "EXPERIMENTS",
           "H_SHIFT_RANGE"]

#: Accepted names -> the experiment they are read as.
EXPERIMENTS = {"HSQC": "HSQC", "HMQC": "HSQC", "HMBC": "HMBC", "H2BC": "H2BC", "COSY": "COSY",
               "DQF-COSY": "COSY", "DQFCOSY": "COSY"}
#: Accepted 1H shift window in ppm (common practice, no source: organic 1H
#: shifts fall between about -1 and 16 ppm).
H_SHIFT_RANGE: tuple[float, float] = (-2.0, 20.0)
_HEADER_WORDS = {"experiment", "type", "exp", "kind", "expt"}
_SPLIT = re.compile(r"[\s,;]+")


@dataclass(frozen=True)
class CrossPeak:
    """One 2D cross peak.

    Attributes
    ----------
    experiment : str
        ``"HSQC"``, ``"HMBC"``, ``"H2BC"`` or ``"COSY"``.
    h_shift : float
        1H shift in ppm (for COSY the first proton).
    other : float
        13C shift in ppm (HSQC, HMBC, H2BC) or the second 1H shift (COSY).
    line : int
        Line number in the table (1-based), for messages; 0 when built in code.
    """

    experiment: str
    h_shift: float
    other: float
    line: int = 0

    def __post_init__(self) -> None:
        if self.experiment not in set(EXPERIMENTS.values()):
            raise InputError(f"{self.where}: experiment {self.experiment!r} unknown; use one of "
                             f"{', '.join(sorted(set(EXPERIMENTS.values())))}")
        for value, what, lo_hi in ((self.h_shift, "1H shift", H_SHIFT_RANGE),
                                   (self.other, "second 1H shift" if self.is_homonuclear else "13C shift",
                                    H_SHIFT_RANGE if self.is_homonuclear else SHIFT_RANGE)):
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
                raise InputError(f"{self.where}: {what} {value!r} is not a number; give it in ppm")
            if not lo_hi[0] <= value <= lo_hi[1]:
                raise InputError(f"{self.where}: {what} {value:g} ppm is outside {lo_hi[0]:g}..{lo_hi[1]:g} ppm; "
                                 f"check the column order (experiment, 1H, "
                                 f"{'1H' if self.is_homonuclear else '13C'})")

    @property
    def is_homonuclear(self) -> bool:
        """True for COSY (two 1H shifts)."""
        return self.experiment == "COSY"

    @property
    def where(self) -> str:
        return f"correlation line {self.line}" if self.line else "correlation"

    def describe(self) -> str:
        """Short text such as ``"HMBC 2.55/197.8"``."""
        return f"{self.experiment} {self.h_shift:g}/{self.other:g}"


@dataclass(frozen=True)
class CorrelationTable:
    """The cross peaks of one sample, in the order given."""

    rows: tuple[CrossPeak, ...]
    source: str = ""

    def __len__(self) -> int:
        return len(self.rows)

    def __iter__(self):
        return iter(self.rows)

    def experiments(self) -> tuple[str, ...]:
        """The experiments present, in a fixed order."""
        present = {r.experiment for r in self.rows}
        return tuple(e for e in ("HSQC", "HMBC", "H2BC", "COSY") if e in present)


def _number(token: str, line: int, what: str) -> float:
    try:
        value = float(token)
    except ValueError:
        raise InputError(f"correlation line {line}: {what} {token!r} is not a number; give shifts in ppm "
                         "with a decimal point") from None
    return value


def parse_correlations(text: str, source: str = "") -> CorrelationTable:
    """Read a correlation table from text (see the module docstring).

    >>> t = parse_correlations("HSQC 7.26 128.4\\nHMBC 2.55 197.8")
    >>> [r.describe() for r in t]
    ['HSQC 7.26/128.4', 'HMBC 2.55/197.8']
    """
    rows: list[CrossPeak] = []
    first = True
    for n, raw in enumerate(text.splitlines(), start=1):
        line = raw.split("#", 1)[0].strip()
        if not line:
            continue
        tokens = [t for t in _SPLIT.split(line) if t]
        if first and tokens[0].lower() in _HEADER_WORDS:
            first = False
            continue
        first = False
        name = tokens[0].upper()
        if name not in EXPERIMENTS:
            raise InputError(f"correlation line {n}: experiment {tokens[0]!r} unknown; use HSQC (or HMQC), HMBC, "
                             "H2BC or COSY as the first field")
        if len(tokens) != 3:
            raise InputError(f"correlation line {n}: {len(tokens)} field(s) in {line!r}; give three: the "
                             f"experiment, the 1H shift and the {'second 1H' if EXPERIMENTS[name] == 'COSY' else '13C'} "
                             "shift (decimal points, not commas)")
        experiment = EXPERIMENTS[name]
        h = _number(tokens[1], n, "1H shift")
        other = _number(tokens[2], n, "second 1H shift" if experiment == "COSY" else "13C shift")
        if experiment == "COSY" and h == other:
            raise InputError(f"correlation line {n}: COSY {h:g}/{other:g} is a diagonal peak; list cross "
                             "peaks only (two different 1H shifts)")
        rows.append(CrossPeak(experiment, h, other, n))
    if not rows:
        raise InputError("the correlation table has no cross peaks; give one row per cross peak, e.g. "
                         "\"HSQC 7.26 128.4\"")
    return CorrelationTable(tuple(rows), source)


def read_correlations(source: str) -> CorrelationTable:
    """Read a correlation table from a file path, or from inline text (a
    string with a newline or a ``;``-free single row)."""
    if not isinstance(source, str) or not source.strip():
        raise InputError("the correlation table is empty; give a file with one cross peak per line")
    path = source.strip()
    if "\n" not in path and os.path.exists(path):
        if os.path.isdir(path):
            raise InputError(f"correlation file {path} is a directory; give the path of a text/CSV file")
        text = read_utf8(path, "correlation file")
        try:
            return parse_correlations(text, source=path)
        except InputError as exc:
            raise InputError(f"correlation file {path}: {exc}") from None
    if "\n" not in path and (path.lower().endswith((".csv", ".tsv", ".txt")) or "/" in path):
        raise InputError(f"correlation file {path} not found; check the path")
    return parse_correlations(source)
