"""Molecular formulas: parsing, validation and degrees of unsaturation.

A formula is the first thing a chemist holds (from high-resolution MS).  This
module turns text such as ``C8H8O2``, ``BrC2H5`` or ``C6H5Cl`` into a frozen
:class:`Formula`, checks that a neutral, closed-shell molecule with the
supported valences can have it, and computes the degrees of unsaturation
(DBE, double-bond equivalents).

Supported elements and the neutral valences the generator may use:

====== =================== ==========================================
element valences            notes
====== =================== ==========================================
C       4
H       1
N       3                   (charge-separated N+ only with nitro/N-oxide
                            option in the generator)
O       2
S       2, 4, 6             4 and 6 = sulfoxide/sulfone-type S
P       3, 5                5 = phosphate/phosphonate-type P
Si      4
B       3
Se      2
F Cl Br I  1
====== =================== ==========================================

The DBE uses the lowest valence of each element (the usual formula)::

    DBE = C + Si + 1 + (N + P + B - H - halogens) / 2

Examples
--------
>>> f = parse_formula("BrC2H5")
>>> f.hill
'C2H5Br'
>>> f.dbe
0
>>> parse_formula("C8H8O2").dbe
5
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from .errors import InputError

__all__ = [
    "Formula",
    "parse_formula",
    "SUPPORTED_ELEMENTS",
    "VALENCES",
    "HALOGENS",
]

#: Neutral valences each supported element may take (lowest first).
VALENCES: dict[str, tuple[int, ...]] = {
    "C": (4,),
    "H": (1,),
    "N": (3,),
    "O": (2,),
    "S": (2, 4, 6),
    "P": (3, 5),
    "Si": (4,),
    "B": (3,),
    "Se": (2,),
    "F": (1,),
    "Cl": (1,),
    "Br": (1,),
    "I": (1,),
}

HALOGENS = frozenset({"F", "Cl", "Br", "I"})
SUPPORTED_ELEMENTS = tuple(VALENCES)

# All element symbols, to tell "not an element" from "not supported".
_PERIODIC = set(
    """H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co
    Ni Cu Zn Ga Ge As Se Br Kr Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I
    Xe Cs Ba La Ce Pr Nd Pm Sm Eu Gd Tb Dy Ho Er Tm Yb Lu Hf Ta W Re Os Ir Pt Au
    Hg Tl Pb Bi Po At Rn Fr Ra Ac Th Pa U Np Pu Am Cm Bk Cf Es Fm Md No Lr D T""".split()
)

_TOKEN = re.compile(r"([A-Z][a-z]?)(\d*)")
_MAX_COUNT = 999


@dataclass(frozen=True)
class Formula:
    """A validated molecular formula.

    Attributes
    ----------
    counts : tuple of (element, count)
        Elements in Hill order (C, H, then alphabetical), counts > 0.
    """

    counts: tuple[tuple[str, int], ...]

    def count(self, element: str) -> int:
        """Number of atoms of ``element`` (0 when absent)."""
        for el, n in self.counts:
            if el == element:
                return n
        return 0

    @property
    def elements(self) -> tuple[str, ...]:
        return tuple(el for el, _ in self.counts)

    @property
    def carbons(self) -> int:
        return self.count("C")

    @property
    def hydrogens(self) -> int:
        return self.count("H")

    @property
    def heavy_atoms(self) -> int:
        """Number of non-hydrogen atoms."""
        return sum(n for el, n in self.counts if el != "H")

    @property
    def dbe2(self) -> int:
        """Twice the DBE (an integer even when the formula is odd-electron)."""
        twice = 2 + 2 * (self.count("C") + self.count("Si"))
        twice += self.count("N") + self.count("P") + self.count("B")
        twice -= self.count("H") + sum(self.count(x) for x in HALOGENS)
        return twice

    @property
    def dbe(self) -> int:
        """Degrees of unsaturation (rings + pi bonds) with lowest valences."""
        return self.dbe2 // 2

    @property
    def hill(self) -> str:
        """The formula in Hill order, e.g. ``C2H5Br``."""
        return "".join(f"{el}{n if n > 1 else ''}" for el, n in self.counts)

    def __str__(self) -> str:  # pragma: no cover - trivial
        return self.hill


def _hill_order(elements) -> list[str]:
    rest = sorted(e for e in elements if e not in ("C", "H"))
    head = [e for e in ("C", "H") if e in elements]
    return head + rest


def parse_formula(text: str) -> Formula:
    """Parse and validate a molecular formula.

    Parameters
    ----------
    text : str
        Element symbols with counts in any order, e.g. ``"C8H8O2"``,
        ``"BrC2H5"``.  A symbol may repeat (``"CH3CH2OH"``); counts add.

    Returns
    -------
    Formula

    Raises
    ------
    InputError
        Unknown or unsupported element, malformed text, no carbon, a
        negative or half-integer DBE (H parity / nitrogen rule).

    Examples
    --------
    >>> parse_formula("CH3CH2OH").hill
    'C2H6O'
    """
    if not isinstance(text, str) or not text.strip():
        raise InputError("formula is empty; give one such as C8H8O2")
    raw = text.strip().replace(" ", "")
    pos = 0
    totals: dict[str, int] = {}
    for m in _TOKEN.finditer(raw):
        if m.start() != pos:
            break
        pos = m.end()
        sym, num = m.group(1), m.group(2)
        if sym not in _PERIODIC:
            raise InputError(
                f"formula {text!r}: {sym!r} is not an element symbol; "
                "write symbols with one capital letter, e.g. Cl not CL"
            )
        if sym not in VALENCES:
            raise InputError(
                f"formula {text!r}: element {sym} is not supported; supported: "
                + " ".join(SUPPORTED_ELEMENTS)
            )
        n = int(num) if num else 1
        if n == 0:
            raise InputError(f"formula {text!r}: count 0 for {sym}; leave the element out")
        totals[sym] = totals.get(sym, 0) + n
    if pos != len(raw):
        rest = raw[pos:]
        if any(ch in rest for ch in "+-"):
            hint = ("a charge is not accepted: give the neutral molecule's formula (for a protonated "
                    "ion [M+H]+ from MS, subtract one H)")
        elif any(ch in rest for ch in "[]()"):
            hint = "brackets are not accepted: write the plain molecular formula, e.g. C4H8O2"
        elif rest[0].islower():
            hint = "element symbols start with a capital letter (C, Cl, Br), e.g. C8H8O2"
        else:
            hint = "use element symbols followed by counts, e.g. C8H8O2 (no charges, brackets or isotopes)"
        raise InputError(f"formula {text!r}: cannot read {rest!r}; {hint}")
    for sym, n in totals.items():
        if n > _MAX_COUNT:
            raise InputError(f"formula {text!r}: {n} atoms of {sym} is beyond the supported {_MAX_COUNT}")
    formula = Formula(tuple((el, totals[el]) for el in _hill_order(totals)))
    _check_possible(formula, text)
    return formula


def _check_possible(f: Formula, text: str) -> None:
    if f.carbons == 0:
        raise InputError(
            f"formula {text!r} has no carbon; a 13C spectrum needs at least one carbon atom"
        )
    if f.dbe2 % 2:
        raise InputError(
            f"formula {text!r} has a half-integer DBE ({f.dbe2 / 2:g}): the number of "
            "H + halogen + N + P + B atoms must be even for a neutral closed-shell "
            "molecule (nitrogen rule); check the H count or the N count"
        )
    # Highest valences allow more H than the lowest-valence DBE suggests
    # (e.g. S(VI) or P(V) carry no H here, so the lowest-valence DBE is the
    # right feasibility test for H excess).
    if f.dbe2 < 0:
        raise InputError(
            f"formula {text!r} has a negative DBE ({f.dbe2 / 2:g}): too many H or "
            "halogen atoms for the heavy atoms given; check the formula"
        )
    if f.heavy_atoms == 1 and f.hydrogens + sum(f.count(x) for x in HALOGENS) == 0:
        raise InputError(f"formula {text!r} is a bare atom, not a molecule")
