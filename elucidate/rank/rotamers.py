"""Rotamer splitting: which equivalent carbons can show two lines.

Rotation about a bond with partial double-bond character is slow on the
13C NMR timescale at room temperature, so the two substituents on its
nitrogen see different surroundings (one *cis*, one *trans* to the
double-bonded partner) and topologically equivalent carbons give separate
lines.  The textbook case is N,N-dimethylformamide, whose two methyls appear
at about 36.5 and 31.4 ppm; the N-ethyl groups of N,N-diethylamides likewise
give two CH2 and two CH3 lines (amide C-N barrier about 15-20 kcal/mol,
resonance R2N-C=O <-> R2N+=C-O-; from memory, any organic spectroscopy
textbook).  The same holds for the other groups in :data:`BOND_KINDS`
where the training spectra show it (``scripts/measure_rotamer_splits.py``,
``docs/constraints.md``).

Method
------
1. Hindered bonds are found with SMARTS (:data:`BOND_KINDS`): a tertiary,
   non-aromatic nitrogen (three heavy neighbours) bonded to the sp2 partner
   of a C=O (amides, N-acyl heterocycles, carbamates), C=S, N=O, C=N
   (amidines) or a push-pull C=C-C=O system.  Which kinds count as hindered
   was decided on the training spectra: ureas, N-acyl azoles, sulfonamides
   and N,N-dialkylanilines split no more often than any other class, so
   they are matched (a urea is not mistaken for an amide) but not marked.
2. The ordinary symmetry classes are RDKit's canonical ranks without tie
   breaking (graph symmetry classes, as in
   :func:`elucidate.constraints.spectral.carbon_classes`).
3. *Fixed geometry*: for every hindered bond in turn whose two other
   nitrogen substituents are still equivalent, one of them is given a label
   ("the substituent cis to the double-bonded atom") and the ranks are
   recomputed with the labels as atom invariants (individualisation and
   refinement).  One label serves all bonds, so symmetry relating whole
   groups (the two NMe2 of tetramethylurea) survives.
4. An ordinary class whose carbons fall into more than one fixed-geometry
   class is *rotamer-capable*.  Each such class records the kind of its
   hindered bond and its graph distance (bonds) from the nitrogen, so the
   CH3 of an N-ethyl group (distance 2) is marked as well as its CH2
   (distance 1).

Other causes of splitting (diastereotopic groups next to a stereocentre,
E/Z mixtures) are not rotamer splitting and keep the ordinary penalty.

Examples
--------
>>> from rdkit import Chem
>>> sites = rotamer_sites(Chem.MolFromSmiles("CN(C)C=O"))      # DMF
>>> [(s.atoms, s.kind, s.distance) for s in sites]
[((0, 2), 'amide', 1)]
>>> rotamer_sites(Chem.MolFromSmiles("CCN(CC)CC"))              # triethylamine
()
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Collection

from rdkit import Chem

from ..errors import InputError

__all__ = [
    "BOND_KINDS",
    "HINDERED_KINDS",
    "ROTAMER_SPLIT_COST",
    "HinderedBond",
    "RotamerSite",
    "hindered_bonds",
    "rotamer_sites",
    "rotamer_split_costs",
]

#: Bond kinds with partial double-bond character, as SMARTS: atom 0 is the
#: tertiary nitrogen, atom 1 the partner whose double bond it conjugates with.
#: Each bond takes the first kind that matches (specific groups before the
#: general amide).  The third field is the kind's split-cost group from the
#: training spectra (``scripts/measure_rotamer_splits.py``): "frequent" (amides,
#: thioamides, N-nitroso: split more often than not), "occasional"
#: (carbamates, vinylogous amides, amidines: split in about a third), or None:
#: measured, but split no more often than ordinary classes (ureas, N-acyl azoles,
#: sulfonamides, N,N-dialkylanilines), so not treated as hindered.
BOND_KINDS: tuple[tuple[str, str, str | None], ...] = (
    ("thioamide", "[NX3;!a;D3;+0]-[CX3]=[SX1]", "frequent"),
    ("carbamate", "[NX3;!a;D3;+0]-[CX3](=[OX1])-[OX2]", "occasional"),
    ("urea", "[NX3;!a;D3;+0]-[CX3](=[OX1])-[#7]", None),
    ("amide", "[NX3;!a;D3;+0]-[CX3]=[OX1]", "frequent"),
    ("N-nitroso", "[NX3;!a;D3;+0]-[NX2]=[OX1]", "frequent"),
    ("vinylogous amide", "[NX3;!a;D3;+0]-[CX3]=[CX3]-[CX3]=[OX1]", "occasional"),
    ("amidine", "[NX3;!a;D3;+0]-[CX3;!a]=[NX2;!a]", "occasional"),
    ("sulfonamide", "[NX3;!a;D3;+0]-[SX4](=[OX1])=[OX1]", None),
    ("N-acyl azole", "[nX3;+0]-[CX3]=[OX1]", None),
    ("aniline", "[NX3;!a;D3;+0;!$(N-[!#6])](-[CX4])-c", None),
)

#: The kinds treated as hindered (rotamer splitting expected).
HINDERED_KINDS: frozenset[str] = frozenset(k for k, _, g in BOND_KINDS if g is not None)

#: Cost of a rotamer-capable class's first extra line, per group: the negative
#: log odds of split vs merged classes of that group in the training spectra,
#: floored at 0 (a split is never a bonus: against a structure that needs no
#: split at all, a negative cost would favour the one that can split).
#: Counts from scripts/measure_rotamer_splits.py ("all" attribution), 26,288
#: neutral nmrshiftdb2 training spectra with <= 22 heavy atoms:
#:   frequent   (amide, thioamide, N-nitroso):           241 split, 103 merged
#:              -ln(241/103) = -0.85 -> 0.0
#:   occasional (carbamate, vinylogous amide, amidine):   52 split,  96 merged
#:              -ln(52/96) = 0.61
#:   not hindered (urea, N-acyl azole, sulfonamide, N,N-dialkylaniline): 3 split,
#:              140 merged; ordinary classes: 2,145 split, 26,382 merged
#:              (-ln = 2.51, close to SPLIT_COST = 2.66, which they keep)
ROTAMER_SPLIT_COST: dict[str, float] = {
    "frequent": max(0.0, -math.log(241 / 103)),
    "occasional": max(0.0, -math.log(52 / 96)),
}

_PATTERNS = tuple((kind, Chem.MolFromSmarts(smarts)) for kind, smarts, _ in BOND_KINDS)
_LABEL = 1000  # isotope used as the "cis" label; no real isotope is this heavy
#: Matches every atom 0 of :data:`BOND_KINDS` (``[NX3;!a;D3;+0]`` and
#: ``[nX3;+0]``): a molecule without one has no bond of any kind.
_NITROGEN = Chem.MolFromSmarts("[#7X3+0]")
#: Matches exactly the atoms that are atom 0 of some match of :data:`BOND_KINDS`.
_ANY_KIND = Chem.MolFromSmarts("[" + ",".join(f"$({smarts})" for _, smarts, _ in BOND_KINDS) + "]")


@dataclass(frozen=True)
class HinderedBond:
    """A bond of :data:`BOND_KINDS`: ``nitrogen`` bonded to ``partner``.

    Slow rotation is expected only when ``kind`` is in :data:`HINDERED_KINDS`.
    """

    kind: str
    nitrogen: int
    partner: int


@dataclass(frozen=True)
class RotamerSite:
    """An ordinary symmetry class of carbons that rotamers can split.

    atoms : the class's atom indices (sorted)
    kind : the hindered bond's kind (nearest bond if several)
    distance : bonds from that bond's nitrogen to the class's nearest carbon
    """

    atoms: tuple[int, ...]
    kind: str
    distance: int


def hindered_bonds(mol: Chem.Mol) -> tuple[HinderedBond, ...]:
    """Bonds of :data:`BOND_KINDS` in a molecule, one per nitrogen-partner pair.

    Every kind is reported, hindered or not; :func:`rotamer_sites` chooses.

    Parameters
    ----------
    mol : rdkit.Chem.Mol

    Returns
    -------
    tuple of HinderedBond, ordered by (nitrogen, partner)

    Raises
    ------
    InputError
        If ``mol`` is not an RDKit molecule.

    Examples
    --------
    >>> [b.kind for b in hindered_bonds(Chem.MolFromSmiles("CN(C)C(=O)OC"))]
    ['carbamate']
    """
    if not isinstance(mol, Chem.Mol):
        raise InputError(f"expected an RDKit molecule, got {type(mol).__name__}; "
                         "parse the SMILES with rdkit.Chem.MolFromSmiles first")
    found: dict[tuple[int, int], str] = {}
    # quick exits: atom 0 of every pattern is such a nitrogen, and the union
    # pattern matches every atom 0 of any kind
    if not mol.HasSubstructMatch(_NITROGEN) or not mol.HasSubstructMatch(_ANY_KIND):
        return ()
    for kind, pattern in _PATTERNS:
        for match in mol.GetSubstructMatches(pattern, uniquify=False):
            found.setdefault((match[0], match[1]), kind)
    return tuple(HinderedBond(kind, n, p) for (n, p), kind in sorted(found.items()))


def rotamer_sites(mol: Chem.Mol, kinds: Collection[str] = HINDERED_KINDS) -> tuple[RotamerSite, ...]:
    """Symmetry classes of carbons that split when the hindered bonds are slow.

    See the module docstring for the method.  The classes are those of
    :func:`elucidate.constraints.spectral.carbon_classes` (canonical ranks
    without tie breaking).

    Parameters
    ----------
    mol : rdkit.Chem.Mol
    kinds : collection of str
        Bond kinds treated as hindered; default :data:`HINDERED_KINDS`.  The
        measurement script passes every kind of :data:`BOND_KINDS`.

    Returns
    -------
    tuple of RotamerSite, ordered by their atoms

    Raises
    ------
    InputError
        If ``mol`` is not an RDKit molecule or a kind is unknown.

    Examples
    --------
    DEET: both N-ethyl carbons (CH2 at distance 1, CH3 at distance 2).

    >>> deet = Chem.MolFromSmiles("CCN(CC)C(=O)c1cccc(C)c1")
    >>> [(s.atoms, s.distance) for s in rotamer_sites(deet)]
    [((0, 4), 2), ((1, 3), 1)]
    """
    unknown = set(kinds) - {k for k, _, _ in BOND_KINDS}
    if unknown:
        raise InputError(f"unknown bond kind(s) {sorted(unknown)}; use names from BOND_KINDS: "
                         + ", ".join(k for k, _, _ in BOND_KINDS))
    bonds = [b for b in hindered_bonds(mol) if b.kind in kinds]
    if not bonds:
        return ()
    ordinary = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    work = Chem.RWMol(mol)
    ranks = ordinary
    for bond in bonds:
        subs = [a.GetIdx() for a in work.GetAtomWithIdx(bond.nitrogen).GetNeighbors()
                if a.GetIdx() != bond.partner]
        if len(subs) == 2 and ranks[subs[0]] == ranks[subs[1]]:
            atom = work.GetAtomWithIdx(min(subs))
            atom.SetIsotope(_LABEL + atom.GetIsotope())
            ranks = list(Chem.CanonicalRankAtoms(work, breakTies=False))
    if ranks is ordinary:
        return ()
    classes: dict[int, list[int]] = {}
    for atom in mol.GetAtoms():
        if atom.GetAtomicNum() == 6:
            classes.setdefault(ordinary[atom.GetIdx()], []).append(atom.GetIdx())
    dist = Chem.GetDistanceMatrix(mol)
    sites = []
    for atoms in classes.values():
        if len({ranks[a] for a in atoms}) < 2:
            continue
        d, kind = min((int(min(dist[b.nitrogen][a] for a in atoms)), b.kind) for b in bonds)
        sites.append(RotamerSite(tuple(sorted(atoms)), kind, d))
    return tuple(sorted(sites, key=lambda s: s.atoms))


def rotamer_split_costs(mol: Chem.Mol) -> dict[int, float]:
    """Split cost of every carbon in a rotamer-capable class.

    Parameters
    ----------
    mol : rdkit.Chem.Mol

    Returns
    -------
    dict
        ``{atom index: cost}`` for the carbons of :func:`rotamer_sites`, the
        cost of their kind's group (:data:`ROTAMER_SPLIT_COST`); carbons not
        listed keep the ordinary ``SPLIT_COST``.

    Examples
    --------
    >>> rotamer_split_costs(Chem.MolFromSmiles("CN(C)C=O"))
    {0: 0.0, 2: 0.0}
    """
    group = {k: g for k, _, g in BOND_KINDS}
    return {a: ROTAMER_SPLIT_COST[group[s.kind]] for s in rotamer_sites(mol) for a in s.atoms}
