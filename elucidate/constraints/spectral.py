"""Constraints and evidence derived from the 13C peak list.

Three pieces of evidence come from the spectrum before any shift is predicted:

* **DEPT hydrogen counts.**  Every carbon sits under some line, so its
  hydrogen count is the multiplicity of a line (any count under a line of
  unknown multiplicity), and every line has at least one carbon.  When line
  counts are given, the number of carbons of each multiplicity is fixed.
  This is a hard rule, applied to stage-1 atom-type distributions
  (:func:`carbon_hydrogen_rule`).
* **Heteroatom hydrogens** (OH, NH, SH) are what the formula leaves after the
  carbons' hydrogens; stage 1 enforces the total automatically.
* **Symmetry.**  The number of lines of each multiplicity should equal the
  number of topologically distinct carbons with that hydrogen count, but
  real spectra break this both ways: inequivalent carbons overlap by accident
  and topologically equivalent carbons split (diastereotopic groups,
  restricted rotation about amide C-N bonds, E/Z isomers).  In 26,288 neutral
  training spectra of the open nmrshiftdb2 data (<= 22 heavy atoms) 95.0 %
  show no overlap, 99.2 % at most 2 and 99.8 % at most 4; 92.3 % show no
  split, 99.8 % at most 2 and 99.9 % at most 3 (``scripts/measure_training_stats.py``;
  figures in ``docs/constraints.md``).  The default hard allowance
  (overlap <= 4, split <= 3) therefore drops almost nothing true; within the
  allowance, ranking charges each overlap and split its negative log
  frequency (:mod:`elucidate.rank.assignment`), and less for the first
  extra line of a class that amide-type rotamers can split
  (:mod:`elucidate.rank.rotamers`).  A rotamer-doubled N,N-diethylamide
  (two split classes) is well inside the allowance.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from typing import Sequence

from rdkit import Chem

from ..generate import AtomType, StructureFilter

__all__ = [
    "SymmetryAllowance",
    "carbon_hydrogen_rule",
    "carbon_classes",
    "symmetry_mismatch",
    "symmetry_filter",
]


@dataclass(frozen=True)
class SymmetryAllowance:
    """How far carbon symmetry classes may differ from the line count.

    overlap : int
        Carbons classes beyond the number of lines (inequivalent carbons
        sharing a line by accident), summed over multiplicities.
    split : int
        Lines beyond the number of classes (equivalent carbons showing
        separate lines), summed over multiplicities.
    """

    overlap: int = 4
    split: int = 3


def carbon_hydrogen_rule(peaks: Sequence, n_carbons: int):
    """Predicate on atom-type distributions enforcing DEPT hydrogen counts.

    Parameters
    ----------
    peaks : sequence of Peak
        Each with ``hydrogens`` (0-3 or None) and ``count`` (int or None).
    n_carbons : int

    Returns
    -------
    callable(tuple of AtomType) -> bool

    Examples
    --------
    >>> from types import SimpleNamespace as P
    >>> rule = carbon_hydrogen_rule([P(hydrogens=3, count=None), P(hydrogens=2, count=None)], 3)
    >>> rule((AtomType("C", 4, 2), AtomType("C", 4, 3), AtomType("C", 4, 3)))
    True
    >>> rule((AtomType("C", 4, 2), AtomType("C", 4, 2), AtomType("C", 4, 3)))
    True
    >>> rule((AtomType("C", 4, 1), AtomType("C", 4, 2), AtomType("C", 4, 3)))
    False
    """
    known = Counter(p.hydrogens for p in peaks if p.hydrogens is not None)
    unknown = sum(1 for p in peaks if p.hydrogens is None)
    all_counted = all(p.count is not None for p in peaks)
    exact: Counter | None = None
    if all_counted:
        exact = Counter()
        for p in peaks:
            if p.hydrogens is not None:
                exact[p.hydrogens] += p.count
        unknown_carbons = sum(p.count for p in peaks if p.hydrogens is None)
    else:
        unknown_carbons = None

    def accept(dist: tuple[AtomType, ...]) -> bool:
        have = Counter(t.hydrogens for t in dist if t.element == "C")
        if exact is not None:
            spare = 0
            for h in range(5):
                if have[h] < exact[h]:
                    return False
                spare += have[h] - exact[h]
            return spare == unknown_carbons and (unknown_carbons == 0 or unknown > 0)
        spare = 0
        for h in range(5):
            if have[h] < known[h]:
                return False
            extra = have[h] - known[h]
            if extra and h not in known and unknown == 0:
                return False
            spare += extra
        return spare >= unknown

    return accept


def carbon_classes(mol: Chem.Mol) -> dict[int, list[list[int]]]:
    """Topologically equivalent carbons, grouped by hydrogen count.

    Returns ``{h: [[atom indices of one class], ...]}`` with classes from
    RDKit's canonical ranking without tie breaking (graph symmetry classes).

    >>> sorted(len(c) for c in carbon_classes(Chem.MolFromSmiles("CC(C)C"))[3])
    [3]
    """
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    groups: dict[tuple[int, int], list[int]] = {}
    get = mol.GetAtomWithIdx
    for i in range(mol.GetNumAtoms()):
        atom = get(i)
        if atom.GetAtomicNum() == 6:
            key = (atom.GetTotalNumHs(), ranks[i])
            groups.setdefault(key, []).append(i)
    out: dict[int, list[list[int]]] = {}
    for (h, _), atoms in sorted(groups.items()):
        out.setdefault(h, []).append(atoms)
    return out


def symmetry_mismatch(mol: Chem.Mol, peaks: Sequence) -> tuple[int, int]:
    """(overlap, split) of a structure against the lines.

    Lines of unknown multiplicity are pooled: the comparison then uses the
    total number of classes against the total number of lines for the
    hydrogen counts not explained by known lines.
    """
    classes = carbon_classes(mol)
    n_classes = {h: len(v) for h, v in classes.items()}
    lines = Counter(p.hydrogens for p in peaks)
    unknown = lines.pop(None, 0)
    overlap = split = 0
    for h in set(n_classes) | set(lines):
        c, l = n_classes.get(h, 0), lines.get(h, 0)
        if c > l:
            overlap += c - l
        else:
            split += l - c
    # unknown-multiplicity lines absorb overlap first
    absorbed = min(unknown, overlap)
    overlap -= absorbed
    split += unknown - absorbed
    return overlap, split


def symmetry_filter(peaks: Sequence, allowance: SymmetryAllowance) -> StructureFilter:
    """Hard filter: keep structures within the symmetry allowance."""

    def keep(mol):
        o, s = symmetry_mismatch(mol, peaks)
        return o <= allowance.overlap and s <= allowance.split

    return StructureFilter(
        f"symmetry (overlap <= {allowance.overlap}, split <= {allowance.split})", keep
    )
