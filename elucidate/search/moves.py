"""Formula-preserving moves between constitutions.

A constitution is held as a :class:`Skeleton`: an element, a hydrogen count
and a charge per heavy atom, and a symmetric matrix of bond orders (one
Kekulé form; aromatic rings are alternating single and double bonds).  Three
moves turn one skeleton into another with the same formula and every atom at
an allowed valence:

*bond shift* (:func:`shift_bonds`)
    For four distinct atoms ``i, j, k, l`` with bonds ``i-j`` and ``k-l``:
    lower both by one and raise ``i-k`` and ``j-l`` by one.  Each atom keeps
    its bond-order sum, so hydrogen counts stay; bonds appear and vanish,
    which opens, closes and rewires rings and chains and moves double bonds.
    These are the structure-space moves of Faulon (J. Chem. Inf. Comput.
    Sci. 1996, 36, 731; from memory), which connect all constitutions with
    a given list of atom degrees.
*hydrogen move* (:func:`move_hydrogen`)
    Atom ``i`` gives a hydrogen to atom ``j``; ``j`` lowers its bond to a
    neighbour ``k`` by one and ``i`` raises its bond to ``k`` by one.  With
    ``k`` a substituent of ``j`` this moves the substituent from ``j`` to
    ``i`` (a positional isomer); with a double bond ``j=k`` it is a
    tautomeric shift.  It changes the hydrogen distribution, so the DEPT
    rule is checked again.
*atom swap* (:func:`swap_atoms`)
    Two atoms exchange element and hydrogen count (e.g. an ether O and a
    CH2 of a chain), when both stay at an allowed valence.

All moves change a copy; a move that breaks a rule (a bond order outside
1..3, a disconnected graph, a valence not allowed) returns None.
"""

from __future__ import annotations

import random
from dataclasses import dataclass
from typing import Mapping, Sequence

from rdkit import Chem

from ..formula import VALENCES
from ..generate.atomtypes import AtomType
from ..generate.molecule import build_mol

__all__ = ["Skeleton", "shift_bonds", "move_hydrogen", "swap_atoms", "random_move", "random_skeleton",
           "skeleton_from_mol", "MOVE_KINDS"]

#: Names of the moves, in the order :func:`random_move` draws them.
MOVE_KINDS = ("bond shift", "hydrogen move", "atom swap")
_MOVE_WEIGHTS = (0.55, 0.25, 0.20)


@dataclass
class Skeleton:
    """A constitution as elements, hydrogen counts, charges and bond orders."""

    elements: list[str]
    hydrogens: list[int]
    charges: list[int]
    bonds: list[list[int]]

    def copy(self) -> "Skeleton":
        return Skeleton(self.elements[:], self.hydrogens[:], self.charges[:], [row[:] for row in self.bonds])

    @property
    def size(self) -> int:
        return len(self.elements)

    def valence(self, i: int) -> int:
        return sum(self.bonds[i]) + self.hydrogens[i]

    def types(self) -> tuple[AtomType, ...]:
        """Atom type of every atom, in atom order."""
        return tuple(AtomType(e, self.valence(i), h, c)
                     for i, (e, h, c) in enumerate(zip(self.elements, self.hydrogens, self.charges)))

    def connected(self) -> bool:
        n = self.size
        seen = [False] * n
        seen[0] = True
        stack = [0]
        count = 1
        bonds = self.bonds
        while stack:
            i = stack.pop()
            row = bonds[i]
            for j in range(n):
                if row[j] and not seen[j]:
                    seen[j] = True
                    count += 1
                    stack.append(j)
        return count == n

    def to_mol(self) -> Chem.Mol | None:
        """The sanitized RDKit molecule (None when RDKit rejects it)."""
        return build_mol(self.types(), self.bonds)

    def key(self) -> tuple:
        """A hashable form of this exact labelled skeleton."""
        return (tuple(self.elements), tuple(self.hydrogens), tuple(map(tuple, self.bonds)))


def skeleton_from_mol(mol: Chem.Mol) -> Skeleton:
    """A Kekulé skeleton of an RDKit molecule (hydrogens become counts)."""
    kek = Chem.Mol(mol)
    Chem.Kekulize(kek, clearAromaticFlags=True)
    n = kek.GetNumAtoms()
    bonds = [[0] * n for _ in range(n)]
    for b in kek.GetBonds():
        i, j = b.GetBeginAtomIdx(), b.GetEndAtomIdx()
        o = int(round(b.GetBondTypeAsDouble()))
        bonds[i][j] = bonds[j][i] = o
    return Skeleton([a.GetSymbol() for a in kek.GetAtoms()], [a.GetTotalNumHs() for a in kek.GetAtoms()],
                    [a.GetFormalCharge() for a in kek.GetAtoms()], bonds)


def _valence_ok(element: str, valence: int, hydrogens: int, charge: int,
                valences: Mapping[str, Sequence[int]]) -> bool:
    """The valence rules of the generator: an allowed valence, and no H on an
    atom above its lowest valence (charged atoms are never moved)."""
    if charge:
        return False
    allowed = valences.get(element, VALENCES[element][:1])
    if valence not in allowed:
        return False
    return hydrogens == 0 or valence == VALENCES[element][0]


def shift_bonds(sk: Skeleton, i: int, j: int, k: int, l: int) -> Skeleton | None:
    """Bonds ``i-j`` and ``k-l`` down by one, ``i-k`` and ``j-l`` up by one.

    >>> sk = skeleton_from_mol(Chem.MolFromSmiles("CCCC"))   # C0-C1-C2-C3
    >>> out = shift_bonds(sk, 1, 0, 2, 3)                    # rewire into a ring?
    >>> out is None   # C0 and C3 would lose their only bond: disconnected
    True
    """
    if len({i, j, k, l}) < 4:
        return None
    b = sk.bonds
    if not b[i][j] or not b[k][l] or b[i][k] >= 3 or b[j][l] >= 3:
        return None
    if sk.charges[i] or sk.charges[j] or sk.charges[k] or sk.charges[l]:
        return None
    out = sk.copy()
    o = out.bonds
    o[i][j] -= 1
    o[j][i] -= 1
    o[k][l] -= 1
    o[l][k] -= 1
    o[i][k] += 1
    o[k][i] += 1
    o[j][l] += 1
    o[l][j] += 1
    if (o[i][j] == 0 or o[k][l] == 0) and not out.connected():
        return None
    return out


def move_hydrogen(sk: Skeleton, i: int, j: int, k: int,
                  valences: Mapping[str, Sequence[int]]) -> Skeleton | None:
    """Atom ``i`` gives one H to ``j``; bond ``j-k`` down by one, ``i-k`` up by one.

    >>> sk = skeleton_from_mol(Chem.MolFromSmiles("CC(O)C"))  # propan-2-ol: C0 C1 O2 C3
    >>> out = move_hydrogen(sk, 0, 1, 2, {"C": (4,), "O": (2,)})  # the OH moves from C1 to C0
    >>> Chem.MolToSmiles(out.to_mol())
    'CCCO'
    """
    if i == j or k == i or k == j or sk.hydrogens[i] < 1:
        return None
    b = sk.bonds
    if not b[j][k] or b[i][k] >= 3:
        return None
    out = sk.copy()
    o = out.bonds
    o[j][k] -= 1
    o[k][j] -= 1
    o[i][k] += 1
    o[k][i] += 1
    out.hydrogens[i] -= 1
    out.hydrogens[j] += 1
    for a in (i, j, k):
        if not _valence_ok(out.elements[a], out.valence(a), out.hydrogens[a], out.charges[a], valences):
            return None
    if o[j][k] == 0 and not out.connected():
        return None
    return out


def swap_atoms(sk: Skeleton, i: int, j: int, valences: Mapping[str, Sequence[int]]) -> Skeleton | None:
    """Atoms ``i`` and ``j`` exchange element and hydrogen count.

    >>> sk = skeleton_from_mol(Chem.MolFromSmiles("COCC"))     # C0 O1 C2 C3
    >>> Chem.MolToSmiles(swap_atoms(sk, 1, 2, {"C": (4,), "O": (2,)}).to_mol())
    'CCOC'
    """
    if i == j:
        return None
    if sk.elements[i] == sk.elements[j] and sk.hydrogens[i] == sk.hydrogens[j]:
        return None
    out = sk.copy()
    out.elements[i], out.elements[j] = out.elements[j], out.elements[i]
    out.hydrogens[i], out.hydrogens[j] = out.hydrogens[j], out.hydrogens[i]
    out.charges[i], out.charges[j] = out.charges[j], out.charges[i]
    for a in (i, j):
        if not _valence_ok(out.elements[a], out.valence(a), out.hydrogens[a], out.charges[a], valences):
            return None
    return out


def random_move(sk: Skeleton, rng: random.Random, valences: Mapping[str, Sequence[int]],
                focus: Sequence[float] | None = None) -> tuple[str, Skeleton | None]:
    """One random move; returns (kind, new skeleton or None when the drawn
    move breaks a rule).

    ``focus`` weights the atoms a move starts from (e.g. atoms near carbons
    whose predicted shift misses its line); uniform when None.
    """
    n = sk.size
    kind = rng.choices(MOVE_KINDS, _MOVE_WEIGHTS)[0]
    atoms = range(n)

    def pick():
        return rng.choices(atoms, focus)[0] if focus is not None else rng.randrange(n)

    b = sk.bonds
    if kind == "bond shift":
        i = pick()
        nbs = [x for x in range(n) if b[i][x]]
        if not nbs:
            return kind, None
        j = rng.choice(nbs)
        k = rng.randrange(n)
        nbs_k = [x for x in range(n) if b[k][x]]
        if not nbs_k:
            return kind, None
        l = rng.choice(nbs_k)
        return kind, shift_bonds(sk, i, j, k, l)
    if kind == "hydrogen move":
        j = pick()
        nbs = [x for x in range(n) if b[j][x]]
        donors = [x for x in range(n) if sk.hydrogens[x] and x != j]
        if not nbs or not donors:
            return kind, None
        return kind, move_hydrogen(sk, rng.choice(donors), j, rng.choice(nbs), valences)
    i = pick()
    j = rng.randrange(n)
    return kind, swap_atoms(sk, i, j, valences)


def random_skeleton(types: Sequence[AtomType], rng: random.Random, tries: int = 100) -> Skeleton | None:
    """A random connected skeleton with exactly these atom types.

    A random spanning tree (atoms of high degree first, each attached to a
    random atom with bonds to spare), then the remaining bond orders paired
    at random (raising existing bonds or closing rings); retried on a dead
    end.  Used to start searches that have no better seed.
    """
    n = len(types)
    degree = [t.degree for t in types]
    if n == 1:
        return Skeleton([types[0].element], [types[0].hydrogens], [types[0].charge], [[0]])
    for _ in range(tries):
        order = list(range(n))
        rng.shuffle(order)
        order.sort(key=lambda a: -degree[a])
        left = degree[:]
        bonds = [[0] * n for _ in range(n)]
        placed = [order[0]]
        ok = True
        for x in order[1:]:
            hosts = [t for t in placed if left[t] > 0]
            if not hosts or left[x] < 1:
                ok = False
                break
            t = rng.choice(hosts)
            bonds[t][x] = bonds[x][t] = 1
            left[t] -= 1
            left[x] -= 1
            placed.append(x)
        if not ok:
            continue
        for _guard in range(4 * n * 3):
            open_atoms = [a for a in range(n) if left[a] > 0]
            if not open_atoms:
                break
            a = rng.choice(open_atoms)
            partners = [c for c in open_atoms if c != a and bonds[a][c] < 3]
            if not partners:
                break
            c = rng.choice(partners)
            bonds[a][c] += 1
            bonds[c][a] += 1
            left[a] -= 1
            left[c] -= 1
        if any(left):
            continue
        return Skeleton([t.element for t in types], [t.hydrogens for t in types],
                        [t.charge for t in types], bonds)
    return None
