"""Starting points from reference structures of a different formula.

The reference spectra most similar to the sample's (:mod:`elucidate.reference`)
belong to compounds that often share most of the unknown's skeleton: the
same ring system with another substituent, a chlorine where the sample has a
fluorine, one methyl more.  Such a structure is turned into one with the
sample's formula by small edits, each keeping every atom at an allowed
valence and the molecule in one piece:

* *substitute* an atom by another element (Cl for F, S for O, N for CH ...),
  hydrogens adjusted to the new valence;
* *remove* a terminal atom (its bond becomes hydrogens on its neighbour) or
  contract a chain atom (its two neighbours bond directly);
* *add* an atom on a hydrogen-bearing atom, or insert a divalent atom into
  a single bond;
* *unsaturate* (close a ring or raise a bond between two hydrogen-bearing
  atoms) or *saturate* (the reverse) until the hydrogen count is right;
* finally move hydrogens (:func:`elucidate.search.moves.move_hydrogen`) until
  the carbons' hydrogen counts fit the DEPT multiplicities.

The result is only a starting point for annealing (:mod:`.anneal`): it is
scored and improved like any other structure and listed only if it and its
descendants fit.  This is the analogue-based reasoning of a chemist ("this
looks like compound X with a different substituent"), never an answer by
lookup; the edits are this project's own.
"""

from __future__ import annotations

import random
from collections import Counter
from typing import Mapping, Sequence

from ..formula import VALENCES, Formula
from .moves import Skeleton, move_hydrogen

__all__ = ["repair_to_formula", "dept_mismatch"]


def _lowest(el: str) -> int:
    return VALENCES[el][0]


def _degree(sk: Skeleton, i: int) -> int:
    return sum(1 for x in sk.bonds[i] if x)


def _allowed(sk: Skeleton, i: int, valences) -> bool:
    el = sk.elements[i]
    v = sk.valence(i)
    if sk.charges[i]:
        return True
    if v not in valences.get(el, VALENCES[el][:1]):
        return False
    return sk.hydrogens[i] == 0 or v == _lowest(el)


def _delete(sk: Skeleton, i: int) -> Skeleton:
    keep = [a for a in range(sk.size) if a != i]
    return Skeleton([sk.elements[a] for a in keep], [sk.hydrogens[a] for a in keep],
                    [sk.charges[a] for a in keep], [[sk.bonds[a][b] for b in keep] for a in keep])


def _substitute(sk: Skeleton, i: int, el: str, valences) -> Skeleton | None:
    bonds = sum(sk.bonds[i])
    out = sk.copy()
    out.elements[i] = el
    for v in valences.get(el, VALENCES[el][:1]):
        h = v - bonds
        if h < 0 or (h > 0 and v != _lowest(el)):
            continue
        out.hydrogens[i] = h
        return out
    return None


def _remove(sk: Skeleton, i: int, valences) -> Skeleton | None:
    nbs = [j for j in range(sk.size) if sk.bonds[i][j]]
    if len(nbs) == 1:
        j = nbs[0]
        o = sk.bonds[i][j]
        out = sk.copy()
        out.bonds[i][j] = out.bonds[j][i] = 0
        out.hydrogens[j] += o
        if not _allowed(out, j, valences):
            out.hydrogens[j] -= o  # a hypervalent neighbour drops to a lower valence instead
            if not _allowed(out, j, valences):
                return None
        return _delete(out, i)
    if len(nbs) == 2:
        j, k = nbs
        if sk.bonds[i][j] != 1 or sk.bonds[i][k] != 1 or sk.bonds[j][k]:
            return None
        out = sk.copy()
        out.bonds[j][k] = out.bonds[k][j] = 1
        return _delete(out, i)
    return None


def _add(sk: Skeleton, el: str, j: int) -> Skeleton | None:
    if sk.hydrogens[j] < 1:
        return None
    n = sk.size
    out = Skeleton(sk.elements + [el], sk.hydrogens + [_lowest(el) - 1], sk.charges + [0],
                   [row + [0] for row in sk.bonds] + [[0] * (n + 1)])
    out.hydrogens[j] -= 1
    out.bonds[j][n] = out.bonds[n][j] = 1
    return out


def _insert(sk: Skeleton, el: str, j: int, k: int) -> Skeleton | None:
    if sk.bonds[j][k] != 1 or _lowest(el) < 2:
        return None
    n = sk.size
    out = Skeleton(sk.elements + [el], sk.hydrogens + [_lowest(el) - 2], sk.charges + [0],
                   [row + [0] for row in sk.bonds] + [[0] * (n + 1)])
    out.bonds[j][k] = out.bonds[k][j] = 0
    out.bonds[j][n] = out.bonds[n][j] = 1
    out.bonds[k][n] = out.bonds[n][k] = 1
    return out


def _distances(sk: Skeleton, src: int) -> list[int]:
    """Graph distances from ``src`` (breadth first; -1 when unreachable)."""
    n = sk.size
    dist = [-1] * n
    dist[src] = 0
    queue = [src]
    for a in queue:
        row = sk.bonds[a]
        for b in range(n):
            if row[b] and dist[b] < 0:
                dist[b] = dist[a] + 1
                queue.append(b)
    return dist


def _in_ring(sk: Skeleton, a: int, b: int) -> bool:
    """Whether the bond a-b lies on a ring (the graph stays connected without it)."""
    out = sk.copy()
    out.bonds[a][b] = out.bonds[b][a] = 0
    return out.connected()


def _unsaturate(sk: Skeleton, rng: random.Random, fresh: list[bool]) -> Skeleton | None:
    """One hydrogen pair fewer: close a 5- or 6-membered ring through an
    added atom, or make a double bond between two bonded hydrogen-bearing
    atoms (added atoms first); the rest of the skeleton stays as it was."""
    h_atoms = [a for a in range(sk.size) if sk.hydrogens[a] > 0 and not sk.charges[a]]
    if len(h_atoms) < 2:
        return None
    rings, doubles = [], []
    for a in h_atoms:
        dist = _distances(sk, a)
        for b in h_atoms:
            if b <= a:
                continue
            weight = (2 if fresh[a] else 0) + (2 if fresh[b] else 0)
            if dist[b] in (4, 5) and not sk.bonds[a][b]:
                rings.append((weight, a, b))
            elif dist[b] == 1 and sk.bonds[a][b] < 3:
                doubles.append((weight, a, b))
    for group in (rings, doubles) if rng.random() < 0.6 else (doubles, rings):
        if not group:
            continue
        top = max(w for w, _a, _b in group)
        _w, a, b = rng.choice([g for g in group if g[0] == top])
        out = sk.copy()
        out.bonds[a][b] += 1
        out.bonds[b][a] += 1
        out.hydrogens[a] -= 1
        out.hydrogens[b] -= 1
        return out
    return None


def _saturate(sk: Skeleton, rng: random.Random, valences, fresh: list[bool]) -> Skeleton | None:
    """One hydrogen pair more: lower a double bond or open a ring bond
    (added atoms first), never disconnecting the molecule."""
    pairs = [(a, b) for a in range(sk.size) for b in range(a + 1, sk.size) if sk.bonds[a][b]]
    rng.shuffle(pairs)
    pairs.sort(key=lambda p: (-(fresh[p[0]] + fresh[p[1]]), -(sk.bonds[p[0]][p[1]] > 1)))
    for a, b in pairs:
        out = sk.copy()
        out.bonds[a][b] -= 1
        out.bonds[b][a] -= 1
        out.hydrogens[a] += 1
        out.hydrogens[b] += 1
        if not (_allowed(out, a, valences) and _allowed(out, b, valences)):
            continue
        if out.bonds[a][b] == 0 and not out.connected():
            continue
        return out
    return None


def _ring_atoms(sk: Skeleton) -> set[int]:
    out = set()
    for a in range(sk.size):
        for b in range(a + 1, sk.size):
            if sk.bonds[a][b] and _in_ring(sk, a, b):
                out.update((a, b))
    return out


def dept_mismatch(sk: Skeleton, line_hydrogens: Sequence[int | None]) -> int:
    """How far the carbons' hydrogen counts are from what the lines require:
    lines of a multiplicity no carbon has, plus carbons with a hydrogen count
    no line has (0 means the DEPT rule can be met, up to line counts)."""
    have = Counter(h for e, h in zip(sk.elements, sk.hydrogens) if e == "C")
    known = Counter(h for h in line_hydrogens if h is not None)
    unknown = sum(1 for h in line_hydrogens if h is None)
    miss = sum(max(0, c - have[h]) for h, c in known.items())
    stray = sum(c for h, c in have.items() if h not in known)
    return miss + max(0, stray - unknown)


def repair_to_formula(sk: Skeleton, formula: Formula, valences: Mapping[str, Sequence[int]],
                      line_hydrogens: Sequence[int | None], accept, rng: random.Random,
                      max_edits: int = 60) -> Skeleton | None:
    """Edit a reference skeleton into one with ``formula`` whose carbons' H
    counts satisfy ``accept`` (the DEPT rule); None when it does not work out.

    The edits keep the reference's ring systems where they can: atoms are
    removed or substituted at chain ends first, added atoms grow from one
    another, and rings are closed or double bonds made among the added atoms
    first.
    """
    target = Counter({el: formula.count(el) for el in formula.elements if el != "H"})
    h_target = formula.hydrogens
    cur = sk
    fresh = [False] * sk.size  # atoms added by the edits
    for _ in range(max_edits):
        have = Counter(cur.elements)
        excess = sorted(el for el in have if have[el] > target.get(el, 0))
        missing = sorted(el for el in target if target[el] > have.get(el, 0))
        dh = h_target - sum(cur.hydrogens)
        if not excess and not missing and dh == 0:
            break
        nxt = None
        ring = _ring_atoms(cur) if (excess or missing) else set()

        def order(atoms):
            # chain ends first, then chain atoms, ring atoms last
            return sorted(atoms, key=lambda a: (a in ring, _degree(cur, a), rng.random()))

        if excess and missing:
            x, y = rng.choice(excess), rng.choice(missing)
            for a in order([a for a in range(cur.size) if cur.elements[a] == x]):
                if a in ring and not ({x, y} <= {"C", "N"} or {x, y} <= {"O", "S"}):
                    continue  # ring atoms only swap like for like (CH/N, O/S)
                nxt = _substitute(cur, a, y, valences)
                if nxt is not None:
                    break
        if nxt is None and excess:
            x = rng.choice(excess)
            for a in order([a for a in range(cur.size) if cur.elements[a] == x]):
                nxt = _remove(cur, a, valences)
                if nxt is not None:
                    fresh = fresh[:a] + fresh[a + 1:]
                    break
        if nxt is None and missing:
            y = rng.choice(missing)
            grown = [a for a in range(cur.size) if fresh[a] and cur.hydrogens[a] > 0]
            hosts = grown or [a for a in range(cur.size) if cur.hydrogens[a] > 0 and a not in ring] \
                or [a for a in range(cur.size) if cur.hydrogens[a] > 0]
            if _lowest(y) >= 2 and rng.random() < 0.3:
                bonds = [(a, b) for a in range(cur.size) for b in range(a + 1, cur.size)
                         if cur.bonds[a][b] == 1 and not (a in ring and b in ring)]
                if bonds:
                    nxt = _insert(cur, y, *rng.choice(bonds))
            if nxt is None and hosts:
                nxt = _add(cur, y, rng.choice(hosts))
            if nxt is not None:
                fresh = fresh + [True]
        if nxt is None and not excess and not missing:
            nxt = _unsaturate(cur, rng, fresh) if dh < 0 else _saturate(cur, rng, valences, fresh)
        if nxt is None:
            return None
        cur = nxt
    have = Counter(cur.elements)
    if have != target or sum(cur.hydrogens) != h_target or not cur.connected():
        return None
    # hydrogen moves, only those that bring the carbons' H counts closer to
    # the lines (added atoms first), until they fit
    miss = dept_mismatch(cur, line_hydrogens)
    n = cur.size
    for attempt in range(600):
        if miss == 0:
            break
        pool = [a for a in range(n) if fresh[a]] if attempt < 300 and any(fresh) else list(range(n))
        i, j = rng.choice(pool), rng.choice(pool)
        nbs = [k for k in range(n) if cur.bonds[j][k]]
        if not nbs:
            continue
        nxt = move_hydrogen(cur, i, j, rng.choice(nbs), valences)
        if nxt is None:
            continue
        m2 = dept_mismatch(nxt, line_hydrogens)
        if m2 < miss:
            cur, miss = nxt, m2
    return cur if miss == 0 and accept(tuple(sorted(cur.types()))) else None
