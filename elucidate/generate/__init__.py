"""Exhaustive constitutional isomer generation under constraints.

The public entry is :func:`enumerate_isomers`; it streams each constitution
once (canonical SMILES) and reports whether the whole space was searched.

Pipeline inside: stage 1 (:mod:`.atomtypes`) lists hydrogen/valence
distributions, an optional predicate drops those the spectrum rules out;
stage 2 (:mod:`.assembly`) builds all connected bond matrices for each, with
an optional per-atom check as atoms close; :mod:`.molecule` sanitizes and
canonicalizes; optional structure filters run last, each one counted.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Callable, Iterator, Mapping, Sequence

from rdkit import Chem

from ..errors import InputError
from ..formula import VALENCES, Formula
from .assembly import SearchInterrupted, bond_matrices
from .atomtypes import STANDARD_VALENCES, WIDE_VALENCES, AtomType, max_bond_order, type_distributions
from .molecule import build_mol, canonical_smiles

__all__ = [
    "AtomType",
    "Structure",
    "StructureFilter",
    "Enumeration",
    "enumerate_isomers",
    "parse_valence_option",
    "STANDARD_VALENCES",
    "WIDE_VALENCES",
]


@dataclass(frozen=True)
class Structure:
    """One generated constitution: canonical SMILES and its RDKit molecule.

    ``mol`` atom indices follow the generator's atom order, not the SMILES;
    use ``Chem.MolFromSmiles(smiles)`` when indices must match the SMILES.
    """

    smiles: str
    mol: Chem.Mol = field(compare=False, repr=False)


@dataclass(frozen=True)
class StructureFilter:
    """A named yes/no test on a finished molecule (kept when it returns True)."""

    name: str
    keep: Callable[[Chem.Mol], bool]


RowCheckFactory = Callable[[tuple[AtomType, ...]], Callable[[int, list[list[int]]], bool] | None]


class Enumeration:
    """An iterable over generated structures that records how the search went.

    Attributes (meaningful once iteration ended)
    ----------
    complete : bool
        True when the whole constrained space was searched.
    distributions : int
        Atom-type distributions examined by stage 2.
    graphs : int
        Bond matrices produced by stage 2 (before de-duplication).
    unique : int
        Distinct constitutions after de-duplication (before filters).
    filter_log : list of (name, before, after)
        How many structures each structure filter received and kept.
    elapsed_s : float
    """

    def __init__(
        self,
        formula: Formula,
        *,
        valences: Mapping[str, Sequence[int]] | None = None,
        charged_nitrogen: bool = False,
        accept_types: Callable[[tuple[AtomType, ...]], bool] | None = None,
        row_check_factory: RowCheckFactory | None = None,
        filters: Sequence[StructureFilter] = (),
        time_limit: float | None = None,
    ) -> None:
        self.formula = formula
        self.valences = _normalise_valences(valences)
        self.charged_nitrogen = charged_nitrogen
        self.accept_types = accept_types
        self.row_check_factory = row_check_factory
        self.filters = tuple(filters)
        self.time_limit = time_limit
        self.complete = False
        self.distributions = 0
        self.graphs = 0
        self.unique = 0
        self.filter_counts = [[f.name, 0, 0] for f in self.filters]
        self.elapsed_s = 0.0
        self._started = False

    @property
    def filter_log(self) -> list[tuple[str, int, int]]:
        return [tuple(x) for x in self.filter_counts]

    def __iter__(self) -> Iterator[Structure]:
        if self._started:
            raise RuntimeError("an Enumeration can be iterated once")
        self._started = True
        start = time.monotonic()
        deadline = start + self.time_limit if self.time_limit is not None else None
        seen: set[str] = set()
        try:
            for dist in type_distributions(
                self.formula,
                self.valences,
                charged_nitrogen=self.charged_nitrogen,
                accept=self.accept_types,
            ):
                if deadline is not None and time.monotonic() > deadline:
                    raise SearchInterrupted
                self.distributions += 1
                yield from self._assemble(dist, seen, deadline)
            self.complete = True
        except SearchInterrupted:
            self.complete = False
        finally:
            self.elapsed_s = time.monotonic() - start

    def _assemble(self, dist, seen, deadline):
        type_ids: dict[AtomType, int] = {}
        labels = [type_ids.setdefault(t, len(type_ids)) for t in dist]
        degrees = [t.degree for t in dist]
        max_order = _max_order(dist)
        row_check = self.row_check_factory(dist) if self.row_check_factory else None
        for matrix in bond_matrices(
            degrees, labels, max_order, deadline=deadline, row_check=row_check
        ):
            self.graphs += 1
            mol = build_mol(dist, matrix)
            if mol is None or (self.charged_nitrogen and not _charges_paired(mol)):
                continue
            smi = canonical_smiles(mol)
            if smi in seen:
                continue
            seen.add(smi)
            self.unique += 1
            if self._passes(mol):
                yield Structure(smi, mol)

    def _passes(self, mol) -> bool:
        for counts, flt in zip(self.filter_counts, self.filters):
            counts[1] += 1
            if not flt.keep(mol):
                return False
            counts[2] += 1
        return True


def enumerate_isomers(
    formula: Formula,
    *,
    valences: Mapping[str, Sequence[int]] | None = None,
    charged_nitrogen: bool = False,
    filters: Sequence[StructureFilter] = (),
    time_limit: float | None = None,
    accept_types: Callable[[tuple[AtomType, ...]], bool] | None = None,
    row_check_factory: RowCheckFactory | None = None,
) -> Enumeration:
    """Every constitutional isomer of ``formula``, each exactly once.

    Parameters
    ----------
    formula : Formula
    valences : mapping element -> allowed valences, optional
        Default: lowest valence of each element (:data:`STANDARD_VALENCES`).
        :data:`WIDE_VALENCES` adds S 4/6 and P 5.  Atoms above their
        lowest valence carry no hydrogen.
    charged_nitrogen : bool
        Also generate charge-separated N+ / O- pairs (nitro groups, N-oxides).
    filters : sequence of StructureFilter
        Applied in order to each new constitution; counted in ``filter_log``.
    time_limit : float, optional
        Seconds; the iteration stops early and ``complete`` stays False.
    accept_types, row_check_factory
        Hooks for spectral constraints (see :mod:`elucidate.constraints`).

    Returns
    -------
    Enumeration
        Iterate it to receive :class:`Structure` objects.

    Examples
    --------
    >>> from elucidate.formula import parse_formula
    >>> sorted(s.smiles for s in enumerate_isomers(parse_formula("C2H6O")))
    ['CCO', 'COC']
    """
    if time_limit is not None and time_limit <= 0:
        raise InputError(f"time limit must be positive, got {time_limit}")
    return Enumeration(
        formula,
        valences=valences,
        charged_nitrogen=charged_nitrogen,
        accept_types=accept_types,
        row_check_factory=row_check_factory,
        filters=filters,
        time_limit=time_limit,
    )


def parse_valence_option(values: Sequence[str]) -> dict[str, tuple[int, ...]]:
    """Parse ``["S=2,4,6", "P=3,5"]`` into a valence mapping.

    >>> parse_valence_option(["S=2,4"])["S"]
    (2, 4)
    """
    out: dict[str, tuple[int, ...]] = {}
    for item in values:
        if "=" not in item:
            raise InputError(
                f"--valence {item!r}: write ELEMENT=V1,V2 (e.g. S=2,4,6)"
            )
        el, _, vals = item.partition("=")
        el = el.strip()
        if el not in VALENCES:
            raise InputError(
                f"--valence {item!r}: unknown element {el!r}; supported: " + " ".join(VALENCES)
            )
        try:
            nums = tuple(sorted({int(v) for v in vals.split(",") if v.strip()}))
        except ValueError:
            raise InputError(f"--valence {item!r}: valences must be whole numbers, e.g. S=2,4,6") from None
        bad = [v for v in nums if v not in VALENCES[el]]
        if not nums or bad:
            raise InputError(
                f"--valence {item!r}: {el} supports valences "
                + ",".join(map(str, VALENCES[el]))
            )
        if VALENCES[el][0] not in nums:
            raise InputError(f"--valence {item!r}: the lowest valence {VALENCES[el][0]} of {el} must be included")
        out[el] = nums
    return out


def _normalise_valences(valences) -> dict[str, tuple[int, ...]]:
    base = dict(STANDARD_VALENCES)
    if valences:
        for el, vals in valences.items():
            base[el] = tuple(sorted(vals))
    return base


def _charges_paired(mol) -> bool:
    """Every N+ carries at least one O- neighbour (nitro group or N-oxide)."""
    for atom in mol.GetAtoms():
        if atom.GetFormalCharge() == 1:
            if not any(nb.GetFormalCharge() == -1 for nb in atom.GetNeighbors()):
                return False
    return True


def _max_order(dist: Sequence[AtomType]) -> list[list[int]]:
    """Largest bond order between each pair of atoms (:func:`max_bond_order`)."""
    return [[max_bond_order(ta, tb) for tb in dist] for ta in dist]
