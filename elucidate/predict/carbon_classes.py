"""Coarse carbon classes for breaking a shift predictor's errors down.

Every carbon gets exactly one label: the first rule of `CLASS_ORDER` that
matches it.  The classes follow the usual chemical-shift regions of 13C NMR
(carbonyls, triple bonds, aromatic and olefinic carbons, then sp3 carbons by
their most shift-relevant neighbour and finally by substitution), so a per-
class mean error shows *where* a predictor is weak rather than how much.

Rules, in order (the molecule must be sanitized with RDKit's default
aromaticity; a Kekulé-only molecule would put aromatic rings in the alkene
classes):

1. ``carbonyl/carboxyl C`` -- a double bond to O or S (ketones, aldehydes,
   acids, esters, amides, thiocarbonyls, ring carbonyls such as pyridones).
2. ``nitrile/alkyne C`` -- a triple bond.
3. ``aromatic CH`` / ``aromatic C (quaternary)`` -- an aromatic carbon with
   at least one / no hydrogen.
4. ``alkene CH/CH2`` / ``alkene C (quaternary)`` -- a non-aromatic double
   bond to carbon, with at least one / no hydrogen.
5. ``sp3 C next to N``, ``... S``, ``... halogen`` (F, Cl, Br, I),
   ``... O`` -- four single bonds (hydrogens included) and that neighbour;
   the first of N, S, halogen, O present wins.
6. ``sp3 CH3``, ``sp3 CH2``, ``sp3 CH``, ``sp3 C (quaternary)`` -- the
   remaining sp3 carbons by hydrogen count (neighbours such as Si, P, B,
   Se do not get classes of their own).
7. ``other`` -- everything else (imine and other C=N carbons, methane,
   charged or radical carbons, carbenes).
"""

from __future__ import annotations

import math

import numpy as np
from rdkit import Chem

from ..errors import InputError

__all__ = ["CLASS_ORDER", "carbon_class", "class_breakdown"]

#: Every label `carbon_class` can return, in the order its rules are tried.
CLASS_ORDER = (
    "carbonyl/carboxyl C",
    "nitrile/alkyne C",
    "aromatic CH",
    "aromatic C (quaternary)",
    "alkene CH/CH2",
    "alkene C (quaternary)",
    "sp3 C next to N",
    "sp3 C next to S",
    "sp3 C next to halogen",
    "sp3 C next to O",
    "sp3 CH3",
    "sp3 CH2",
    "sp3 CH",
    "sp3 C (quaternary)",
    "other",
)

_HALOGENS = frozenset(("F", "Cl", "Br", "I"))

#: (label, neighbour symbols) for sp3 carbons, tried in this order.
_SP3_NEIGHBOUR_RULES = (
    ("sp3 C next to N", frozenset(("N",))),
    ("sp3 C next to S", frozenset(("S",))),
    ("sp3 C next to halogen", _HALOGENS),
    ("sp3 C next to O", frozenset(("O",))),
)

_SP3_BY_H = {3: "sp3 CH3", 2: "sp3 CH2", 1: "sp3 CH", 0: "sp3 C (quaternary)"}


def _double_bonded_to(atom, symbols) -> bool:
    """True if ``atom`` has a (non-aromatic) double bond to an atom in ``symbols``."""
    return any(b.GetBondType() == Chem.BondType.DOUBLE
               and b.GetOtherAtom(atom).GetSymbol() in symbols
               for b in atom.GetBonds())


def _has_triple_bond(atom) -> bool:
    return any(b.GetBondType() == Chem.BondType.TRIPLE for b in atom.GetBonds())


def _is_sp3(atom) -> bool:
    """Four single bonds counting hydrogens, neutral, no unpaired electrons."""
    return (not atom.GetIsAromatic()
            and atom.GetFormalCharge() == 0
            and atom.GetNumRadicalElectrons() == 0
            and atom.GetTotalDegree() == 4
            and all(b.GetBondType() == Chem.BondType.SINGLE for b in atom.GetBonds()))


def _hydrogens(atom) -> int:
    """Total hydrogens, whether implicit, explicit counts or explicit atoms."""
    return atom.GetTotalNumHs(includeNeighbors=True)


def _classify(atom) -> str:
    """The label of one carbon atom (rules in `CLASS_ORDER` order)."""
    if _double_bonded_to(atom, ("O", "S")):
        return "carbonyl/carboxyl C"
    if _has_triple_bond(atom):
        return "nitrile/alkyne C"
    h = _hydrogens(atom)
    if atom.GetIsAromatic():
        return "aromatic CH" if h else "aromatic C (quaternary)"
    if _double_bonded_to(atom, ("C",)):
        return "alkene CH/CH2" if h else "alkene C (quaternary)"
    if _is_sp3(atom):
        symbols = {n.GetSymbol() for n in atom.GetNeighbors()}
        for label, wanted in _SP3_NEIGHBOUR_RULES:
            if symbols & wanted:
                return label
        return _SP3_BY_H.get(h, "other")
    return "other"


def carbon_class(mol, atom_index) -> str:
    """Coarse class of one carbon, for per-class error breakdowns.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        A sanitized molecule (RDKit default aromaticity).
    atom_index : int
        RDKit index of a carbon atom of ``mol``.

    Returns
    -------
    str
        One of `CLASS_ORDER` (the first rule that matches; see the module
        docstring).

    Raises
    ------
    InputError
        If ``mol`` is not an RDKit molecule, the index is not an integer in
        range, or the atom is not a carbon.

    Examples
    --------
    >>> from rdkit import Chem
    >>> mol = Chem.MolFromSmiles("CC(=O)OC")
    >>> [carbon_class(mol, i) for i in (0, 1, 4)]
    ['sp3 CH3', 'carbonyl/carboxyl C', 'sp3 C next to O']
    """
    if not isinstance(mol, Chem.Mol):
        raise InputError(
            f"carbon_class needs an RDKit Mol, got {type(mol).__name__}; "
            "parse the SMILES with Chem.MolFromSmiles first")
    if isinstance(atom_index, bool) or not isinstance(atom_index, (int, np.integer)):
        raise InputError(
            f"atom index must be an integer, got {atom_index!r}; give an RDKit atom index")
    n = mol.GetNumAtoms()
    if not 0 <= int(atom_index) < n:
        raise InputError(
            f"atom index {atom_index} is out of range for a molecule of {n} atoms; "
            f"give an index from 0 to {n - 1}")
    atom = mol.GetAtomWithIdx(int(atom_index))
    if atom.GetAtomicNum() != 6:
        raise InputError(
            f"atom {atom_index} is {atom.GetSymbol()}, not carbon; "
            "carbon classes exist only for carbon atoms")
    return _classify(atom)


def _summary(errors) -> tuple[float, float]:
    e = np.asarray(errors, dtype=float)
    return float(e.mean()), float(np.percentile(e, 95))


def class_breakdown(rows) -> list[dict]:
    """Mean and 95th-percentile absolute error per carbon class.

    Parameters
    ----------
    rows : iterable of (str, float)
        ``(label, abs_error)`` per carbon; labels from `CLASS_ORDER`,
        errors finite and non-negative (ppm).

    Returns
    -------
    list of dict
        ``{"class", "carbons", "mae", "p95"}`` per class in `CLASS_ORDER`
        order, classes without carbons left out.  ``p95`` is numpy's default
        (linear-interpolation) percentile.

    Raises
    ------
    InputError
        If a row is not a (label, error) pair, a label is unknown or an error
        is negative or not finite.

    Examples
    --------
    >>> class_breakdown([("sp3 CH3", 1.0), ("aromatic CH", 0.5), ("sp3 CH3", 3.0)])[1]
    {'class': 'sp3 CH3', 'carbons': 2, 'mae': 2.0, 'p95': 2.9}
    """
    groups: dict[str, list[float]] = {}
    for n, row in enumerate(rows):
        try:
            label, err = row
        except (TypeError, ValueError):
            raise InputError(
                f"row {n} is {row!r}, not a (label, abs_error) pair; "
                "give one pair per carbon") from None
        if label not in CLASS_ORDER:
            raise InputError(
                f"row {n} has unknown class {label!r}; use a label from CLASS_ORDER "
                "(as returned by carbon_class)")
        try:
            err = float(err)
        except (TypeError, ValueError):
            raise InputError(
                f"row {n} has error {err!r}, not a number; give the absolute error in ppm") from None
        if not math.isfinite(err) or err < 0:
            raise InputError(
                f"row {n} has error {err!r}; give a finite absolute error (>= 0 ppm)")
        groups.setdefault(label, []).append(err)
    out = []
    for label in CLASS_ORDER:
        if label in groups:
            mae, p95 = _summary(groups[label])
            out.append({"class": label, "carbons": len(groups[label]), "mae": mae, "p95": p95})
    return out
