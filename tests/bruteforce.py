"""Brute-force constitutional isomer enumerator, written only as a test oracle.

This module is deliberately independent of ``elucidate.generate`` (it imports
nothing from the package at all) and uses a method unrelated to a fast
generator: it *grows* molecular graphs one elementary step at a time and keeps
a global set of every partial graph already seen, identified by a canonical
form computed here from first principles.  It is slow but short enough to be
checked by reading.

Conventions (shared with the real generator)
--------------------------------------------
* A structure is a connected multigraph on the formula's heavy (non-H) atoms
  with bond orders 1, 2 or 3 and no self-loops.
* Hydrogens are implicit.  A heavy atom whose bond-order sum is ``b`` takes a
  valence ``v`` from its allowed set and carries ``h = v - b >= 0`` hydrogens;
  a valence above the element's lowest carries no hydrogens (``h = 0``).  So
  ``h`` is a function of ``b``: ``h = low - b`` when ``b <= low``; otherwise
  ``b`` itself must be an allowed valence and ``h = 0``.
* The total of ``h`` must equal the formula's H count.  Neutral atoms only.
* The molecule is built as an RDKit ``RWMol`` with explicit H counts and no
  implicit H, sanitized (a structure whose sanitization raises is dropped),
  and identified by ``Chem.MolToSmiles`` (canonical, aromatic form, so Kekulé
  forms of one aromatic structure coincide).

Optionally (``charged_nitrogen=True``) charge-separated N+/O- pairs as in
nitro groups and N-oxides are built too, under the generator's documented
rules (see :func:`brute_force_isomers`).

Method
------
Search space.  A *state* is a connected multigraph on a sub-multiset of the
formula's heavy atoms.  Its successors are obtained by one elementary step:

(a) attach one not-yet-placed heavy atom by a single bond to a placed atom;
(b) raise the order of one pair of placed atoms by one (0 -> 1 closes a ring,
    1 -> 2, 2 -> 3) -- only once every atom is placed.

The search starts from every one-atom graph and de-duplicates (see below).

Completeness.  Let ``G`` be any valid final structure.  Build a spanning tree
of ``G`` by steps (a) in breadth-first order from any atom (the tree uses
every atom, so steps (b) become available exactly when it is complete), then
add the remaining bonds and bond orders of ``G`` by steps (b).  Every intermediate graph is a subgraph of
``G`` (each pair's order is at most its order in ``G``), so it passes both
pruning rules below, which are *monotone*: a state that violates them has
no valid completion.  Hence ``G`` is reached.  Every state reached is a
connected graph on formula atoms, so nothing invalid is produced (the final
H and sanitization checks are applied to complete states).

Pruning rules (both sound for every completion ``G`` of a state ``S``):

1. the bond-order sum ``b_i`` of each atom never exceeds the element's
   largest allowed valence (it can only grow);
2. an upper bound on the final H count is at least the formula's H count:
   ``UB(S) = sum_placed max(0, low_i - b_i) + sum_unplaced (low_j - 1)``.
   A placed atom's ``b_i`` only grows, so its final ``h_i <= max(0, low_i -
   b_i(S))``; an unplaced atom ends with at least one bond (the graph is
   connected and has >= 2 atoms), so its ``h_j <= low_j - 1``.  (Charged
   atoms, which carry no H, contribute 0.)

De-duplication.  Each state is stored once, by a canonical form of the
element-labelled multigraph.  The canonical form is the lexicographically
smallest certificate (element labels in order + the upper triangle of the
bond-order matrix) over the leaves of an individualisation-refinement search
tree (McKay, Congressus Numerantium 1981, 30, 45, "Practical graph
isomorphism"; from memory): colour refinement (1-dimensional Weisfeiler-Leman,
Weisfeiler & Leman 1968; from memory) starting from the element symbols;
while some colour class has more than one atom, branch on every atom of the
first such class, give it a colour of its own, refine again.  Every step
depends only on colours and bond orders, never on the atoms' input indices,
so relabelling the input permutes the search tree without changing the set
of leaf certificates; the minimum is therefore an isomorphism invariant, and
since a certificate spells out the whole labelled graph, two graphs with the
same canonical form are isomorphic.  No automorphism pruning is done (it is
not needed for <= 10 atoms and would add code that needs checking).

Because the step relation is defined on isomorphism classes (the successors
of isomorphic graphs are isomorphic), keeping one representative per class
loses nothing.

Limits
------
Intended for <= 7 heavy atoms in general and ~10 for saturated or
nearly saturated formulas.  Pure Python; no attempt at speed.
"""

from __future__ import annotations

import re
from itertools import combinations

from rdkit import Chem, RDLogger

__all__ = [
    "STANDARD_VALENCES",
    "SearchBudgetExceeded",
    "brute_force_isomers",
    "canonical_form",
    "parse_counts",
]

#: The "standard" neutral valence set (lowest valence of each element).
STANDARD_VALENCES: dict[str, tuple[int, ...]] = {
    "C": (4,),
    "N": (3,),
    "O": (2,),
    "S": (2,),
    "P": (3,),
    "Si": (4,),
    "B": (3,),
    "Se": (2,),
    "F": (1,),
    "Cl": (1,),
    "Br": (1,),
    "I": (1,),
}


class SearchBudgetExceeded(RuntimeError):
    """Raised when more than ``max_states`` partial graphs would be stored."""


_BOND = {1: Chem.BondType.SINGLE, 2: Chem.BondType.DOUBLE, 3: Chem.BondType.TRIPLE}
_TOKEN = re.compile(r"([A-Z][a-z]?)(\d*)")


def parse_counts(formula: str) -> dict[str, int]:
    """Parse ``"C3H6O"`` into ``{"C": 3, "H": 6, "O": 1}`` (symbols may repeat)."""
    text = formula.replace(" ", "")
    counts: dict[str, int] = {}
    pos = 0
    for m in _TOKEN.finditer(text):
        if m.start() != pos:
            break
        pos = m.end()
        n = int(m.group(2)) if m.group(2) else 1
        counts[m.group(1)] = counts.get(m.group(1), 0) + n
    if pos != len(text) or not counts:
        raise ValueError(f"cannot parse formula {formula!r}")
    return {el: n for el, n in counts.items() if n > 0}


# ---------------------------------------------------------------------------
# canonical form of an element-labelled multigraph
# ---------------------------------------------------------------------------


def _refine(colours: list[int], nbrs: list[list[tuple[int, int]]]) -> list[int]:
    """Colour refinement to a stable partition; colours stay ordered.

    The new colour of atom ``v`` is the rank of the signature
    ``(colour[v], sorted((colour[u], order(u, v)) for neighbours u))`` among
    all distinct signatures, so the cell order is preserved and depends on
    nothing but colours and bond orders.  ``nbrs[v]`` lists ``(u, order)``.
    """
    n_cells = len(set(colours))
    while True:
        sigs = [
            (colours[v], tuple(sorted([(colours[u], o) for u, o in nbrs[v]])))
            for v in range(len(colours))
        ]
        ranks = {s: r for r, s in enumerate(sorted(set(sigs)))}
        if len(ranks) == n_cells:
            return [ranks[s] for s in sigs]
        colours = [ranks[s] for s in sigs]
        n_cells = len(ranks)


def _certificate(order: list[int], elems: list[str], adj: list[list[int]]):
    n = len(order)
    labels = tuple(elems[v] for v in order)
    bonds = tuple(adj[order[i]][order[j]] for i in range(n) for j in range(i + 1, n))
    return labels, bonds


def canonical_form(elems: list[str], adj: list[list[int]]):
    """Canonical certificate of an element-labelled multigraph.

    Parameters
    ----------
    elems : list of str
        Element symbol of each atom.
    adj : list of list of int
        Symmetric bond-order matrix (0 = no bond).

    Returns
    -------
    tuple
        ``(labels, upper_triangle)``; equal for two inputs exactly when the
        labelled multigraphs are isomorphic (see the module docstring).
    """
    n = len(elems)
    nbrs = [[(u, adj[v][u]) for u in range(n) if adj[v][u]] for v in range(n)]
    el_rank = {e: r for r, e in enumerate(sorted(set(elems)))}
    start = _refine([el_rank[e] for e in elems], nbrs)
    best = None
    stack = [start]
    while stack:
        colours = stack.pop()
        n_cells = len(set(colours))
        if n_cells == len(colours):
            order = sorted(range(len(colours)), key=lambda v: colours[v])
            cert = _certificate(order, elems, adj)
            if best is None or cert < best:
                best = cert
            continue
        sizes: dict[int, int] = {}
        for c in colours:
            sizes[c] = sizes.get(c, 0) + 1
        target = min(c for c, k in sizes.items() if k > 1)
        for v in range(len(colours)):
            if colours[v] == target:
                # individualise v: it goes just before the rest of its cell
                indiv = [2 * c + (0 if u == v else 1) if c == target else 2 * c + 1
                         for u, c in enumerate(colours)]
                # 2*c+1 for other cells keeps their relative order; the
                # individualised atom gets 2*target, strictly before 2*target+1
                stack.append(_refine(indiv, nbrs))
    return best


# ---------------------------------------------------------------------------
# growth search
# ---------------------------------------------------------------------------


def _h_of(b: int, allowed: tuple[int, ...]) -> int | None:
    """Hydrogens on an atom with bond-order sum ``b``; None if impossible."""
    low = allowed[0]
    if b <= low:
        return low - b
    if b in allowed:
        return 0
    return None


#: Charge-separated nitrogen (optional): labels used inside the search.
_N_PLUS, _O_MINUS = "N+", "O-"
_LABEL_ATOM = {_N_PLUS: ("N", 1), _O_MINUS: ("O", -1)}


def _to_smiles(labels: list[str], adj: list[list[int]], hs: list[int]) -> str | None:
    mol = Chem.RWMol()
    for label, h in zip(labels, hs):
        element, charge = _LABEL_ATOM.get(label, (label, 0))
        atom = Chem.Atom(element)
        atom.SetFormalCharge(charge)
        atom.SetNoImplicit(True)
        atom.SetNumExplicitHs(h)
        mol.AddAtom(atom)
    n = len(labels)
    for i in range(n):
        for j in range(i + 1, n):
            if adj[i][j]:
                mol.AddBond(i, j, _BOND[adj[i][j]])
    try:
        Chem.SanitizeMol(mol)
    except Exception:  # noqa: BLE001 - any sanitization failure excludes it
        return None
    return Chem.MolToSmiles(mol)


def _bond_allowed(a: str, b: str) -> bool:
    """O- binds only to N+; two N+ never bind (charge-separated pairs)."""
    if a == _O_MINUS or b == _O_MINUS:
        return {a, b} == {_N_PLUS, _O_MINUS}
    return not (a == _N_PLUS and b == _N_PLUS)


def _final_ok(labels: list[str], adj: list[list[int]]) -> bool:
    """Every N+ has an O- neighbour."""
    n = len(labels)
    return all(
        any(labels[u] == _O_MINUS and adj[v][u] for u in range(n))
        for v in range(n)
        if labels[v] == _N_PLUS
    )


def _grow(
    counts: dict[str, int],
    n_h: int,
    table: dict[str, tuple[int, ...]],
    max_states: int | None,
    formula: str,
) -> set[str]:
    """The growth search of the module docstring for one multiset of labels.

    ``counts`` maps atom labels (element symbols, or ``"N+"``/``"O-"`` for
    charge-separated atoms, which carry no H) to how many there are.
    """
    pool = sorted(counts)  # labels, fixed order for determinism
    total = sum(counts.values())
    low = {e: table[e][0] for e in pool}
    high = {e: table[e][-1] for e in pool}
    # the most H an atom of each label can carry (charged atoms carry none)
    hcap = {e: 0 if e in _LABEL_ATOM else low[e] for e in pool}
    results: set[str] = set()
    if total == 0:
        return results

    def viable(el: list[str], bs: list[int], rem: dict[str, int]) -> bool:
        if any(b > high[e] for e, b in zip(el, bs)):
            return False
        ub = sum(min(hcap[e], max(0, low[e] - b)) for e, b in zip(el, bs))
        ub += sum(k * min(hcap[e], low[e] - 1) for e, k in rem.items())
        return ub >= n_h

    seen: set = set()
    stack: list[tuple[list[str], list[list[int]]]] = []
    for e in pool:
        elems0, adj0 = [e], [[0]]
        seen.add(canonical_form(elems0, adj0))
        stack.append((elems0, adj0))

    while stack:
        elems, adj = stack.pop()
        n = len(elems)
        bsum = [sum(row) for row in adj]

        if n == total:
            hs = [_h_of(b, table[e]) for e, b in zip(elems, bsum)]
            if (
                None not in hs
                and sum(hs) == n_h
                and all(h == 0 for e, h in zip(elems, hs) if e in _LABEL_ATOM)
                and _final_ok(elems, adj)
            ):
                smi = _to_smiles(elems, adj, hs)
                if smi is not None:
                    results.add(smi)

        remaining = dict(counts)
        for e in elems:
            remaining[e] -= 1

        children = []
        # (a) attach a new atom with a single bond
        for e in pool:
            if remaining[e] == 0:
                continue
            rem2 = dict(remaining)
            rem2[e] -= 1
            for i in range(n):
                if not _bond_allowed(elems[i], e):
                    continue
                new_adj = [row + [0] for row in adj] + [[0] * (n + 1)]
                new_adj[i][n] = new_adj[n][i] = 1
                new_el = elems + [e]
                new_b = bsum + [1]
                new_b[i] += 1
                if viable(new_el, new_b, rem2):
                    children.append((new_el, new_adj))
        # (b) raise one bond order by one (0 -> 1 closes a ring); only
        # once every atom is placed (see "Search space" in the docstring)
        for i, j in combinations(range(n) if n == total else (), 2):
            if adj[i][j] >= 3 or not _bond_allowed(elems[i], elems[j]):
                continue
            new_adj = [row[:] for row in adj]
            new_adj[i][j] += 1
            new_adj[j][i] += 1
            new_b = bsum[:]
            new_b[i] += 1
            new_b[j] += 1
            if viable(elems, new_b, remaining):
                children.append((elems, new_adj))

        for child in children:
            key = canonical_form(*child)
            if key not in seen:
                seen.add(key)
                stack.append(child)
        if max_states is not None and len(seen) > max_states:
            raise SearchBudgetExceeded(f"{formula}: more than {max_states} partial graphs")
    return results


def brute_force_isomers(
    formula: str,
    valences: dict[str, tuple[int, ...]] | None = None,
    max_states: int | None = None,
    charged_nitrogen: bool = False,
) -> set[str]:
    """All constitutional isomers of ``formula`` as RDKit canonical SMILES.

    Parameters
    ----------
    formula : str
        Molecular formula, e.g. ``"C3H6O"``.
    valences : dict, optional
        Allowed valences per element, overriding :data:`STANDARD_VALENCES`
        for the elements given (e.g. ``{"S": (2, 4, 6)}``).  Each tuple is
        sorted; its smallest value is the only one that may carry H.
    max_states : int, optional
        Give up (raise :class:`SearchBudgetExceeded`) once more than this
        many distinct partial graphs have been stored (per charge pattern).
        The count is deterministic, so a budget selects the same formulas on
        every run.
    charged_nitrogen : bool
        Also allow charge-separated pairs as in nitro groups and N-oxides:
        for k = 1 .. min(#N, #O), k atoms N+ (valence 4) and k atoms O-
        (valence 1), neither carrying H, where O- binds only to N+, two N+
        never bind, and every N+ has an O- neighbour (the generator's
        documented convention).

    Returns
    -------
    set of str
        Canonical SMILES (``Chem.MolToSmiles``), one per structure.

    Notes
    -----
    Method and correctness argument: see the module docstring.  The charge
    rules are all monotone under the growth steps (bonds are never removed)
    except "every N+ has an O- neighbour", which is checked on complete
    structures only, so completeness is unaffected.
    """
    counts = parse_counts(formula)
    n_h = counts.pop("H", 0)
    table = dict(STANDARD_VALENCES)
    if valences:
        table.update({e: tuple(sorted(v)) for e, v in valences.items()})
    for e in counts:
        if e not in table:
            raise ValueError(f"no valence known for element {e!r}")
    table[_N_PLUS], table[_O_MINUS] = (4,), (1,)

    pairs = min(counts.get("N", 0), counts.get("O", 0)) if charged_nitrogen else 0
    rd_log = RDLogger.logger()
    rd_log.setLevel(RDLogger.CRITICAL)
    results: set[str] = set()
    try:
        for k in range(pairs + 1):
            labelled = dict(counts)
            if k:
                labelled["N"] -= k
                labelled["O"] -= k
                labelled[_N_PLUS] = k
                labelled[_O_MINUS] = k
            labelled = {e: c for e, c in labelled.items() if c > 0}
            results |= _grow(labelled, n_h, table, max_states, formula)
    finally:
        rd_log.setLevel(RDLogger.WARNING)
    return results
