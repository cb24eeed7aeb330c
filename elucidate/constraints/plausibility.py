"""Chemical plausibility of a constitution, learned from the training constitutions.

The environment-rarity prior (:mod:`elucidate.constraints.environments`)
looks at one atom and its direct neighbours.  It cannot see that a benzene
ring is bridged 1,3 by a single sulfur, that a furan carries a bridge, or
that an aryl ketone has become a methylenecyclopropene: every atom of those
structures has an ordinary first sphere.  This module counts larger motifs
in the training constitutions and turns the counts into a cost.

Motifs
------
All motifs are read from the sanitized molecule (RDKit aromaticity, so a
ring counts the same whichever Kekulé form was built).  Bond symbols:
``-`` single, ``=`` double, ``#`` triple, ``:`` aromatic.

*ring*
    one ring of RDKit's symmetrized smallest set of smallest rings, written
    as its size and the cyclic sequence of its atoms (element, lower case
    when aromatic, with every double or triple bond leaving the ring in
    brackets) and ring bonds, e.g. ``6:c:c:c:c:c:c:`` (benzene),
    ``3:C(=C)-C=C-`` (methylenecyclopropene); the smallest of the rotations
    and reflections is the key.  Double and triple bonds in small rings and
    exocyclic double bonds on them are part of the key.
*ring pair*
    two rings sharing atoms: both sizes, ``a`` for an aromatic ring (every
    ring bond aromatic) or ``n``, and the number of shared atoms (1 spiro, 2
    fused, 3 or more bridged); a bridged pair with a double bond at a
    bridgehead carbon or nitrogen (an end of the shared path; Bredt's rule,
    Bredt 1924, from memory) is marked ``!``, e.g. ``4n+6a/3`` for a benzene
    bridged 1,3 by one atom, ``5n+5n/3!`` for a norbornene with its double
    bond at the bridgehead.
*ring system*
    rings sharing atoms (fused, bridged, spiro) form a system; a system of
    two or more rings is keyed exactly by the canonical SMILES (RDKit) of
    its ring atoms and ring bonds with the atoms double- or triple-bonded
    to them, written without hydrogens, e.g. ``c1ccc2ccccc2c1``.
*cumulated centre*
    a carbon or nitrogen with two double bonds (allene, ketene,
    isocyanate ...), keyed by its neighbours, with `` ring`` when a
    cumulated bond lies in a ring.
*second sphere*
    every heavy atom with its neighbours and theirs: the atom's element and
    the multiset of (bond, neighbour's first sphere), where a first sphere
    is an element with the multiset of its (bond, neighbour element).

Cost
----
Counts are occurrences in the training constitutions (each constitution
once).  With add-one (Laplace) smoothing, the negative log frequency of a
motif seen ``n`` times, relative to a scale, floored at zero::

    r(n) = max(0, ln(SCALE / (n + 1)))          SCALE = 1000

is 0 for a motif seen at least 999 times and ``ln 1000 = 6.9`` for one
never seen -- the same scale as the first-sphere rarity
(:data:`elucidate.constraints.environments.RARITY_SCALE`), so an unseen
ring costs as much as an unseen atom environment.

A ring system costs the sum of ``r`` over its rings and ring pairs (a
decomposition that generalises to systems never seen whole); a polycyclic
system seen in training is charged at most ``r`` of its exact count (the
data vouch for it).  Each cumulated centre costs ``r`` of its count.  A
second sphere costs how much rarer it is than the share ``SECOND_SHARE``
(0.3 %) of its atom's first sphere, floored at 0 and capped at
``SECOND_CAP`` (ln 1000)::

    c2 = min(SECOND_CAP, max(0, ln(SECOND_SHARE * (n_first + 1) / (n_second + 1))))

so an atom whose first sphere is itself rare (charged by the rarity prior)
is not charged again.  The plausibility cost of a molecule is::

    sum over ring systems  min(r(n_exact) if seen, sum_rings r + sum_pairs r)
    + sum over cumulated centres  r(n)
    + sum over heavy atoms  c2

-- a negative log-prior up to a constant, with independent motifs (a naive
Bayes assumption, which double counts overlapping motifs; the calibrated
weight of :mod:`elucidate.rank.calibration` absorbs the scale).

Held-out check (``scripts/plausibility_heldout.py``: table built on nine
tenths of the constitutions, by hash of the SMILES; 400 of the other tenth,
9-22 heavy atoms, against 4,000 near-duplicates made by one to three random
formula-preserving moves): the cost ranks the true structure cheaper in
91.7 % of pairs (2.2 % ties), first-sphere rarity plus half the cost in
94.8 % (rarity alone: 88.5 %).  With the constants edited and the script
rerun: a scale of 100 gives 90.8 % and 94.0 %; at that scale a second-sphere
share of 1 % (0.1 %) gives 93.4 % (88.2 %) alone, at a higher cost of the
true structures (median 5.0 instead of 2.2).

Speed: the molecule is read once into plain Python lists; ring keys and
costs are memoised by their local form, and the exact key of a polycyclic
system (the one RDKit call that is not cheap) is only computed when its
rings or pairs are uncommon and an exact system with the same rings and
pairs was seen often enough to lower the cost (``python
scripts/plausibility_speed.py``; figures in docs/constraints.md).
"""

from __future__ import annotations

import gzip
import json
import math
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path
from typing import Iterable

from rdkit import Chem

from ..datafiles import data_file
from ..errors import InputError
from .environments import RARITY_SCALE

__all__ = [
    "PlausibilityTable",
    "MolMotifs",
    "mol_motifs",
    "build_plausibility_table",
    "load_plausibility_table",
    "plausibility_cost",
    "absent_motifs",
    "motif_rarity",
    "SCALE",
    "SECOND_SHARE",
    "SECOND_CAP",
    "TABLE_NAME",
    "TABLE_FORMAT",
    "KINDS",
]

TABLE_NAME = "plausibility.json.gz"
TABLE_FORMAT = "elucidate-plausibility/1"
#: Motif kinds counted in the table.  ``signatures`` maps the sorted ring and
#: pair keys of a polycyclic system to the largest count of an exact system
#: with them: a system whose exact count cannot lower its cost (signature
#: unseen, or even its most common exact system costs more than its parts)
#: needs no exact key.
KINDS = ("rings", "pairs", "systems", "signatures", "cumulated", "first", "second")
#: A motif seen this often (occurrences in the training constitutions) costs nothing.
SCALE = RARITY_SCALE
#: A second sphere at least this share of its first sphere's occurrences costs nothing.
SECOND_SHARE = 0.003
#: Largest cost of one atom's second sphere.
SECOND_CAP = math.log(SCALE)

_BOND_SYMBOL = {1.0: "-", 2.0: "=", 3.0: "#", 1.5: ":"}
_PT = Chem.GetPeriodicTable()
_SYMBOLS = [_PT.GetElementSymbol(z) if z else "*" for z in range(119)]
_CHARGED = Chem.MolFromSmarts("[!+0]")
_NOT_CARBON = Chem.MolFromSmarts("[!#6]")
_MEMO_SIZE = 200_000


def motif_rarity(count: float) -> float:
    """``max(0, ln(SCALE / (count + 1)))``: 0 for common motifs, ln 1000 for unseen.

    >>> motif_rarity(5000), round(motif_rarity(0), 3), round(motif_rarity(99), 3)
    (0.0, 6.908, 2.303)
    """
    return max(0.0, math.log(SCALE / (count + 1.0)))


# ---------------------------------------------------------------- motifs

class _Graph:
    """A sanitized molecule as plain lists (read once; RDKit calls are slow from Python).

    ``labels``: element (+/- for a charge), lower case when aromatic;
    ``nbrs``: per atom ``(bond symbol, neighbour)``; ``bond``: symbol by
    ``(i, j)``; ``doubles``: double bonds per atom; ``rings``: RDKit's
    symmetrized SSSR, each ring in path order.
    """

    __slots__ = ("mol", "labels", "nbrs", "bond", "doubles", "rings")

    def __init__(self, mol: Chem.Mol):
        n = mol.GetNumAtoms()
        get = mol.GetAtomWithIdx
        # most atoms are carbon: one substructure query finds the others
        # (several times faster than asking every atom from Python)
        labels = ["C"] * n
        symbols = _SYMBOLS
        for (i,) in mol.GetSubstructMatches(_NOT_CARBON, uniquify=False, maxMatches=max(n, 1)):
            labels[i] = symbols[get(i).GetAtomicNum()]
        if mol.HasSubstructMatch(_CHARGED):
            for i in range(n):
                c = get(i).GetFormalCharge()
                if c:
                    labels[i] += "+" if c > 0 else "-"
        nbrs: list[list] = [[] for _ in range(n)]
        bond: dict = {}
        doubles = [0] * n
        if n > 1:
            adjacency = Chem.GetAdjacencyMatrix(mol, useBO=True)
            rows, cols = adjacency.nonzero()  # both directions
            sym = _BOND_SYMBOL
            for i, j, o in zip(rows.tolist(), cols.tolist(), adjacency[rows, cols].tolist()):
                s = sym.get(o, "~")
                nbrs[i].append((s, j))
                bond[i, j] = s
                if s == ":":
                    labels[i] = labels[i].lower()
                elif s == "=":
                    doubles[i] += 1
        self.mol = mol
        self.labels = labels
        self.nbrs = nbrs
        self.bond = bond
        self.doubles = doubles
        info = mol.GetRingInfo()
        self.rings = info.AtomRings() if info.NumRings() else ()


_RING_MEMO: dict[tuple, str] = {}


def _ring_key(g: _Graph, ring: tuple[int, ...]) -> str:
    """Canonical key of one ring (smallest rotation/reflection of its atom-bond cycle)."""
    members = set(ring)
    n = len(ring)
    labels, nbrs, bond = g.labels, g.nbrs, g.bond
    atoms = []
    for a in ring:
        exo = sorted([s + labels[j] for s, j in nbrs[a] if j not in members and s in "=#"])
        atoms.append(labels[a] + "(" + ",".join(exo) + ")" if exo else labels[a])
    bonds = [bond[ring[k], ring[(k + 1) % n]] for k in range(n)]
    raw = (tuple(atoms), tuple(bonds))
    key = _RING_MEMO.get(raw)
    if key is None:
        forward = [""] * (2 * n)
        forward[0::2] = atoms
        forward[1::2] = bonds
        # reflection: atoms in reverse order, each followed by the bond to the next one
        backward = [""] * (2 * n)
        backward[0::2] = atoms[::-1]
        backward[1::2] = [bonds[(n - 2 - k) % n] for k in range(n)]
        best = None
        for seq in (forward, backward):
            for k in range(0, 2 * n, 2):
                s = "".join(seq[k:] + seq[:k])
                if best is None or s < best:
                    best = s
        key = f"{n}:{best}"
        if len(_RING_MEMO) >= _MEMO_SIZE:
            _RING_MEMO.clear()
        _RING_MEMO[raw] = key
    return key


def _ring_aromatic(g: _Graph, ring: tuple[int, ...]) -> bool:
    bond = g.bond
    n = len(ring)
    return all(bond[ring[k], ring[(k + 1) % n]] == ":" for k in range(n))


def _pair_key(g: _Graph, a: tuple[int, ...], b: tuple[int, ...], shared: set) -> str:
    """Key of two rings sharing atoms: sizes, aromatic flags, shared atoms, ``!`` for
    a double bond at a bridgehead carbon or nitrogen of a bridged pair."""
    da = (len(a), "a" if _ring_aromatic(g, a) else "n")
    db = (len(b), "a" if _ring_aromatic(g, b) else "n")
    lo, hi = sorted((da, db))
    mark = ""
    if len(shared) >= 3:
        nbrs, labels, doubles = g.nbrs, g.labels, g.doubles
        for x in shared:
            inner = sum(1 for _s, j in nbrs[x] if j in shared)
            if inner <= 1 and doubles[x] and labels[x].rstrip("+-") in ("C", "N"):
                mark = "!"
                break
    return f"{lo[0]}{lo[1]}+{hi[0]}{hi[1]}/{len(shared)}{mark}"


def _systems(rings) -> list[list[int]]:
    """Indices of rings grouped into systems (rings sharing at least one atom)."""
    groups: list[tuple[set, list[int]]] = []
    for k, ring in enumerate(rings):
        atoms = set(ring)
        members = [k]
        keep = []
        for g_atoms, g_members in groups:
            if g_atoms & atoms:
                atoms |= g_atoms
                members += g_members
            else:
                keep.append((g_atoms, g_members))
        keep.append((atoms, sorted(members)))
        groups = keep
    return sorted((m for _a, m in groups), key=lambda m: m[0])


def _ring_parts(g: _Graph) -> list[tuple[tuple[str, ...], tuple[str, ...], set]]:
    """Per ring system: (sorted ring keys, sorted pair keys, atoms)."""
    rings = g.rings
    out = []
    for members in _systems(rings):
        rkeys = sorted([_ring_key(g, rings[k]) for k in members])
        pkeys = []
        atoms = set()
        for x in range(len(members)):
            a = rings[members[x]]
            atoms.update(a)
            sa = set(a)
            for y in range(x + 1, len(members)):
                b = rings[members[y]]
                shared = sa.intersection(b)
                if shared:
                    pkeys.append(_pair_key(g, a, b, shared))
        out.append((tuple(rkeys), tuple(sorted(pkeys)), atoms))
    return out


def _signature(rkeys: tuple[str, ...], pkeys: tuple[str, ...]) -> str:
    return " ".join(rkeys) + " | " + " ".join(pkeys)


def _system_smiles(g: _Graph, atoms: set) -> str:
    """Exact key of a ring system: canonical SMILES of its ring bonds and the
    atoms double/triple-bonded to it, without hydrogens."""
    mol = g.mol
    use = set(atoms)
    ids = []
    for x in atoms:
        for s, j in g.nbrs[x]:
            if j in atoms:
                if x < j:
                    ids.append(mol.GetBondBetweenAtoms(x, j).GetIdx())
            elif s in "=#":
                use.add(j)
                ids.append(mol.GetBondBetweenAtoms(x, j).GetIdx())
    symbols = [lab if lab[-1] not in "+-" else f"[{lab}]" for lab in g.labels]
    return Chem.MolFragmentToSmiles(mol, atomsToUse=sorted(use), bondsToUse=sorted(ids),
                                    atomSymbols=symbols, canonical=True, isomericSmiles=False)


def _spheres(g: _Graph) -> tuple[list[str], list[str]]:
    """First- and second-sphere keys of every atom, e.g. ``C(-C,=O)`` and
    ``C{-C(-C);=O(=C)}``."""
    labels, nbrs = g.labels, g.nbrs
    first = [lab + "(" + ",".join(sorted([s + labels[j] for s, j in nb])) + ")" for lab, nb in zip(labels, nbrs)]
    second = [lab + "{" + ";".join(sorted([s + first[j] for s, j in nb])) + "}" for lab, nb in zip(labels, nbrs)]
    return first, second


def _cumulated(g: _Graph, first: list[str]) -> list[str]:
    """Keys of the carbons and nitrogens with two or more double bonds (``ring``
    added when a cumulated bond lies in a ring)."""
    out = []
    for i, d in enumerate(g.doubles):
        if d < 2 or g.labels[i].rstrip("+-") not in ("C", "N"):
            continue
        ring = any(s == "=" and _bond_in_ring(g, i, j) for s, j in g.nbrs[i])
        out.append(first[i] + (" ring" if ring else ""))
    return out


def _bond_in_ring(g: _Graph, i: int, j: int) -> bool:
    """Whether bonded atoms i and j lie in one ring (then their bond is a ring bond)."""
    return any(i in ring and j in ring for ring in g.rings)


@dataclass(frozen=True)
class MolMotifs:
    """The motifs of one molecule (keys as stored in the table).

    ``systems``: per ring system ``(ring keys, pair keys, exact key or
    None)``; the exact key is only filled for polycyclic systems.
    """

    systems: tuple[tuple[tuple[str, ...], tuple[str, ...], str | None], ...]
    cumulated: tuple[str, ...]
    first: tuple[str, ...]
    second: tuple[str, ...]


def mol_motifs(mol: Chem.Mol) -> MolMotifs:
    """Every motif of a sanitized molecule, as table keys.

    >>> m = mol_motifs(Chem.MolFromSmiles("CC(=O)C(C)=C1C=CC=C1"))
    >>> m.systems
    ((('5:C(=C)-C=C-C=C-',), (), None),)
    >>> m.second[1]
    'C{-C(-C);-C(-C,-C,=C);=O(=C)}'
    """
    g = _Graph(mol)
    first, second = _spheres(g)
    systems = tuple((rk, pk, _system_smiles(g, atoms) if len(rk) > 1 else None)
                    for rk, pk, atoms in _ring_parts(g))
    return MolMotifs(systems, tuple(sorted(_cumulated(g, first))), tuple(first), tuple(second))


# ---------------------------------------------------------------- the table

@dataclass(frozen=True)
class PlausibilityTable:
    """Motif counts from the training constitutions, and the cost built on them.

    ``counts`` maps each motif kind (:data:`KINDS`) to ``{key: occurrences}``.
    """

    counts: dict
    provenance: dict = field(default_factory=dict, compare=False)
    _memo: dict = field(default_factory=dict, compare=False, repr=False)

    def __post_init__(self):
        for kind in KINDS:
            if kind not in self.counts:
                raise ValueError(f"plausibility table lacks the {kind!r} counts; rebuild it with "
                                 "`elucidate build-table --only plausibility`")

    def count(self, kind: str, key: str) -> int:
        """Occurrences of a motif in the training constitutions."""
        return self.counts[kind].get(key, 0)

    def rarity(self, kind: str, key: str) -> float:
        """:func:`motif_rarity` of a motif."""
        return motif_rarity(self.counts[kind].get(key, 0))

    def second_cost(self, first: str, second: str) -> float:
        """Cost of an atom's second sphere given its first (module docstring)."""
        n1 = self.counts["first"].get(first, 0)
        n2 = self.counts["second"].get(second, 0)
        return min(SECOND_CAP, max(0.0, math.log(SECOND_SHARE * (n1 + 1.0) / (n2 + 1.0))))

    def local_cost(self, ring_keys: Iterable[str], pair_keys: Iterable[str]) -> float:
        """Summed rarity of a ring system's rings and ring pairs."""
        return sum(self.rarity("rings", k) for k in ring_keys) + sum(self.rarity("pairs", k) for k in pair_keys)

    def system_cost(self, ring_keys: tuple[str, ...], pair_keys: tuple[str, ...], exact: str | None) -> float:
        """Cost of one ring system (module docstring)."""
        local = self.local_cost(ring_keys, pair_keys)
        if exact is not None and local > 0:
            n = self.counts["systems"].get(exact, 0)
            if n > 0:
                return min(local, motif_rarity(n))
        return local

    def terms(self, mol: Chem.Mol) -> dict:
        """The cost split by motif kind (``ring systems``, ``cumulated``,
        ``second sphere``) with the costly motifs named, for reports and checks;
        the three parts sum to :meth:`cost`."""
        m = mol_motifs(mol)
        systems = []
        total_sys = 0.0
        for rk, pk, ex in m.systems:
            c = self.system_cost(rk, pk, ex)
            total_sys += c
            if c > 0:
                systems.append({"rings": list(rk), "pairs": list(pk), "exact": ex, "cost": round(c, 3)})
        cum = [(k, self.rarity("cumulated", k)) for k in m.cumulated]
        sec = [(s, self.second_cost(f, s)) for f, s in zip(m.first, m.second)]
        return {
            "ring systems": total_sys,
            "cumulated": sum(c for _k, c in cum),
            "second sphere": sum(c for _k, c in sec),
            "costly": {"ring systems": systems,
                       "cumulated": [{"key": k, "cost": round(c, 3)} for k, c in cum if c > 0],
                       "second sphere": [{"key": k, "cost": round(c, 3)} for k, c in sec if c > 0]},
        }

    def cost(self, mol: Chem.Mol) -> float:
        """Plausibility cost of a sanitized molecule (module docstring); 0 for
        a molecule made of common motifs only.

        The same sum as :meth:`terms`, with costs memoised per ring system and
        per second sphere, and the exact key of a polycyclic system (the one
        costly RDKit call) computed only when its rings or pairs are uncommon
        and an exact system of the same signature was seen often enough to
        lower the cost.
        """
        memo = self._memo
        if not memo or len(memo["second"]) > _MEMO_SIZE:
            memo.update(local={}, exact={}, second={})
        g = _Graph(mol)
        total = 0.0
        if g.rings:
            local_memo, exact_memo = memo["local"], memo["exact"]
            signatures = self.counts["signatures"]
            for rkeys, pkeys, atoms in _ring_parts(g):
                mk = (rkeys, pkeys)
                hit = local_memo.get(mk)
                if hit is None:
                    local = self.local_cost(rkeys, pkeys)
                    best = signatures.get(_signature(rkeys, pkeys), 0) if local > 0 and len(rkeys) > 1 else 0
                    hit = local_memo[mk] = (local, best > 0 and motif_rarity(best) < local)
                local, needs_exact = hit
                if needs_exact:
                    exact = _system_smiles(g, atoms)
                    c = exact_memo.get(exact)
                    if c is None:
                        n = self.counts["systems"].get(exact, 0)
                        c = exact_memo[exact] = motif_rarity(n) if n > 0 else math.inf
                    local = min(local, c)
                total += local
        first, second = _spheres(g)
        if max(g.doubles, default=0) >= 2:
            for k in _cumulated(g, first):
                total += self.rarity("cumulated", k)
        second_memo = memo["second"]
        for f, s in zip(first, second):
            c = second_memo.get(s)
            if c is None:
                c = second_memo[s] = self.second_cost(f, s)
            total += c
        return total

    def save(self, path: Path | str) -> None:
        """Write the table (gzip'd JSON, sorted keys, fixed gzip time: same input, same bytes)."""
        payload = json.dumps({"provenance": self.provenance, "counts": self.counts},
                             sort_keys=True, separators=(",", ":")).encode("utf-8")
        with open(path, "wb") as raw:
            with gzip.GzipFile(filename="", mode="wb", fileobj=raw, mtime=0) as fh:
                fh.write(payload)


def build_plausibility_table(smiles: Iterable[str], provenance: dict | None = None) -> PlausibilityTable:
    """Count motifs over constitutions (each distinct stereo-free canonical SMILES once).

    Parameters
    ----------
    smiles : iterable of str
        Training structures; unparsable ones are skipped (and counted).
    provenance : dict, optional
        Stored with the table; counts are added.
    """
    seen: set[str] = set()
    skipped = 0
    counts = {k: Counter() for k in KINDS}
    signature_of: dict[str, str] = {}
    for smi in smiles:
        mol = Chem.MolFromSmiles(smi) if isinstance(smi, str) else None
        if mol is None:
            skipped += 1
            continue
        can = Chem.MolToSmiles(mol, isomericSmiles=False)
        if can in seen:
            continue
        seen.add(can)
        m = mol_motifs(Chem.MolFromSmiles(can))
        for rkeys, pkeys, exact in m.systems:
            counts["rings"].update(rkeys)
            counts["pairs"].update(pkeys)
            if exact is not None:
                counts["systems"][exact] += 1
                signature_of[exact] = _signature(rkeys, pkeys)
        counts["cumulated"].update(m.cumulated)
        counts["first"].update(m.first)
        counts["second"].update(m.second)
    for exact, n in counts["systems"].items():
        sig = signature_of[exact]
        counts["signatures"][sig] = max(counts["signatures"][sig], n)
    if not seen:
        raise InputError("no parsable structure to build the plausibility table from; "
                         "pass training constitutions as SMILES")
    prov = dict(provenance or {})
    prov.update({
        "format": TABLE_FORMAT,
        "constitutions": len(seen),
        "unparsable_skipped": skipped,
        "motifs": {k: ({"distinct": len(c)} if k == "signatures" else
                       {"distinct": len(c), "occurrences": int(sum(c.values()))}) for k, c in counts.items()},
    })
    return PlausibilityTable({k: dict(sorted(c.items())) for k, c in counts.items()}, prov)


_CACHE: dict[str, PlausibilityTable] = {}


def load_plausibility_table(path: Path | str | None = None) -> PlausibilityTable | None:
    """The shipped table (or one at ``path``), cached; None when it is absent."""
    p = Path(path) if path else data_file(TABLE_NAME)
    key = str(p)
    if key not in _CACHE:
        if not p.exists():
            return None
        with gzip.open(p, "rt", encoding="utf-8") as fh:
            obj = json.load(fh)
        if obj.get("provenance", {}).get("format") != TABLE_FORMAT:
            raise InputError(f"{p} is not a plausibility table ({TABLE_FORMAT}); rebuild it with "
                             "`elucidate build-table --only plausibility`")
        _CACHE[key] = PlausibilityTable(obj["counts"], obj["provenance"])
    return _CACHE[key]


def plausibility_cost(mol: Chem.Mol, table: PlausibilityTable | None = None) -> float:
    """Plausibility cost of a sanitized molecule under the shipped table
    (0 when no table is shipped); see the module docstring.

    Raises
    ------
    InputError
        When ``mol`` is not an RDKit molecule.
    """
    if not isinstance(mol, Chem.Mol):
        raise InputError(f"plausibility_cost needs an RDKit molecule, got {type(mol).__name__}; "
                         "parse SMILES with rdkit.Chem.MolFromSmiles first")
    table = table if table is not None else load_plausibility_table()
    return 0.0 if table is None else table.cost(mol)


def absent_motifs(mol: Chem.Mol, table: PlausibilityTable) -> list[str]:
    """The ring and small-ring bond patterns of ``mol`` that no training
    constitution has: ring keys (ring size, aromaticity, heteroatoms and the
    bond orders in and at the ring), fused ring pairs and cumulated bonds
    with a count of 0 in ``table``. Used to measure how often exotic
    structures reach the top of a list (``elucidate bench``).

    >>> t = PlausibilityTable({k: {} for k in KINDS})
    >>> absent_motifs(Chem.MolFromSmiles("CCO"), t)
    []
    >>> absent_motifs(Chem.MolFromSmiles("C1=CC1"), t)
    ['3:C-C-C=']
    """
    m = mol_motifs(mol)
    out = []
    for rings, pairs, _exact in m.systems:
        out += [k for k in rings if table.count("rings", k) == 0]
        out += [k for k in pairs if table.count("pairs", k) == 0]
    out += [k for k in m.cumulated if table.count("cumulated", k) == 0]
    return sorted(set(out))
