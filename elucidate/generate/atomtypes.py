"""Stage 1 of generation: distribute hydrogens and valences over the heavy atoms.

A constitution is built in two stages.  This module does the first: it lists
every multiset of *atom types* (element, valence, hydrogen count) that can
realise a formula.  Each type fixes how many bond orders the atom spends on
other heavy atoms (its *degree* ``valence - hydrogens``); stage 2
(:mod:`elucidate.generate.assembly`) then builds every connected graph with
exactly those degrees.

Splitting the search like this is the classical two-level approach of
constitutional generators (see e.g. Faulon, J. Chem. Inf. Comput. Sci. 1994,
34, 1204, on degree-sequence based enumeration; from memory): the type
multisets are few and cheap to list, and within one multiset atoms of the same
type are interchangeable, which stage 2 exploits for symmetry breaking.

Examples
--------
>>> from elucidate.formula import parse_formula
>>> dists = list(type_distributions(parse_formula("C2H6O")))
>>> sorted(tuple((t.element, t.hydrogens) for t in d) for d in dists)
[(('C', 2), ('C', 3), ('O', 1)), (('C', 3), ('C', 3), ('O', 0))]
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Iterator, Mapping

from ..formula import VALENCES, Formula

__all__ = ["AtomType", "type_distributions", "max_bond_order", "STANDARD_VALENCES", "WIDE_VALENCES"]

#: Lowest neutral valence of each element: what ``isomers`` uses by default.
STANDARD_VALENCES: dict[str, tuple[int, ...]] = {el: (v[0],) for el, v in VALENCES.items()}
#: S 2/4/6 and P 3/5 as well (sulfoxides, sulfones, phosphates ...).
WIDE_VALENCES: dict[str, tuple[int, ...]] = dict(VALENCES)


@dataclass(frozen=True, order=True)
class AtomType:
    """One heavy atom's element, valence, hydrogen count and formal charge.

    ``degree`` is the sum of bond orders the atom makes to other heavy atoms.
    ``charge`` is +1 for the N of a charge-separated nitro group / N-oxide
    (valence 4) and -1 for its O (valence 1); 0 otherwise.
    """

    element: str
    valence: int
    hydrogens: int
    charge: int = 0

    @property
    def degree(self) -> int:
        return self.valence - self.hydrogens

    @property
    def label(self) -> str:
        """Element with its charge sign (``N+``, ``O-``), as environment keys write it."""
        return self.element + ("+" if self.charge > 0 else "-" if self.charge < 0 else "")

    @property
    def hypervalent(self) -> bool:
        return self.valence > VALENCES[self.element][0] and self.charge == 0


def max_bond_order(a: AtomType, b: AtomType) -> int:
    """Largest bond order allowed between two atom types: charge-separated
    O- binds only to N+ (single bond); two N+ never bind; otherwise 3.

    >>> max_bond_order(AtomType("N", 4, 0, 1), AtomType("O", 1, 0, -1))
    1
    """
    if a.charge == -1 or b.charge == -1:
        return 1 if {a.charge, b.charge} == {-1, 1} else 0
    if a.charge == 1 and b.charge == 1:
        return 0
    return 3


def _element_options(
    element: str, valences: tuple[int, ...], n_heavy: int
) -> list[AtomType]:
    """Atom types an element may take (degree >= 1 unless the atom is alone)."""
    lowest = VALENCES[element][0]
    out = []
    for v in valences:
        if v == lowest:
            hs = range(v + 1)
        else:  # a hypervalent atom carries no hydrogen (documented rule)
            hs = range(1)
        for h in hs:
            d = v - h
            if n_heavy == 1 and d != 0:
                continue
            if n_heavy > 1 and (d < 1 or d > 3 * (n_heavy - 1)):
                continue
            out.append(AtomType(element, v, h))
    return out


def type_distributions(
    formula: Formula,
    valences: Mapping[str, tuple[int, ...]] | None = None,
    *,
    charged_nitrogen: bool = False,
    accept: Callable[[tuple[AtomType, ...]], bool] | None = None,
) -> Iterator[tuple[AtomType, ...]]:
    """Yield every multiset of atom types that realises ``formula``.

    Parameters
    ----------
    formula : Formula
    valences : mapping element -> allowed valences, optional
        Defaults to :data:`STANDARD_VALENCES`.  Elements missing from the
        mapping take their lowest valence.
    charged_nitrogen : bool
        Also allow N+ (valence 4, no H) paired with O- (valence 1): the
        charge-separated form of nitro groups and N-oxides.  Each N+ needs
        at least one O-; the number of N+ equals the number of O-.
    accept : callable, optional
        Extra predicate on the sorted type tuple (e.g. DEPT constraints on
        carbon hydrogen counts).

    Yields
    ------
    tuple of AtomType, sorted.  Distributions are yielded in a fixed order.

    Notes
    -----
    A distribution is kept only if its degree sum is even, at least
    ``2 (n - 1)`` (a connected graph needs ``n - 1`` bonds), and no atom's
    degree exceeds the sum of the others' (handshake condition for loop-free
    multigraphs).
    """
    valences = dict(valences or STANDARD_VALENCES)
    n_heavy = formula.heavy_atoms
    h_total = formula.hydrogens
    elements = [el for el in formula.elements if el != "H"]
    per_element = [
        (_element_options(el, tuple(valences.get(el, VALENCES[el][:1])), n_heavy), formula.count(el))
        for el in elements
    ]

    # Charge-separated N+/O- pairs: replace k neutral N and k neutral O.
    pair_counts = [0]
    if charged_nitrogen and n_heavy > 2:
        pair_counts = list(range(min(formula.count("N"), formula.count("O")) + 1))

    seen: set[tuple[AtomType, ...]] = set()
    for k in pair_counts:
        for dist in _combine(per_element, elements, h_total, k):
            dist = tuple(sorted(dist))
            if dist in seen:
                continue
            seen.add(dist)
            if not _degree_feasible(dist):
                continue
            if accept is not None and not accept(dist):
                continue
            yield dist


def _combine(per_element, elements, h_total, k):
    """Combine per-element choices whose hydrogens add up to ``h_total``;
    with k charged pairs, k N and k O atoms become N+ / O-.

    Choices are produced lazily and only where the hydrogen total can still
    be met, so large formulas (hundreds of atoms of one element) cost time
    in proportion to the distributions found, not to every multiset.
    """
    if k:
        per_element = [
            (opts, n_el - k) if el in ("N", "O") else (opts, n_el)
            for (opts, n_el), el in zip(per_element, elements)
        ]
        extra = (AtomType("N", 4, 0, 1),) * k + (AtomType("O", 1, 0, -1),) * k
    else:
        extra = ()
    # Hydrogens the elements after idx can carry at least / at most.
    n = len(per_element)
    min_rest = [0] * (n + 1)
    max_rest = [0] * (n + 1)
    for idx in range(n - 1, -1, -1):
        opts, n_el = per_element[idx]
        hs = [t.hydrogens for t in opts] or [0]
        min_rest[idx] = min_rest[idx + 1] + n_el * min(hs)
        max_rest[idx] = max_rest[idx + 1] + n_el * max(hs)

    def rec(idx: int, h_left: int, acc: tuple):
        if idx == n:
            if h_left == 0:
                yield acc + extra
            return
        opts, n_el = per_element[idx]
        lo = max(0, h_left - max_rest[idx + 1])
        hi = h_left - min_rest[idx + 1]
        for h, combo in _multisets(opts, n_el, lo, hi):
            yield from rec(idx + 1, h_left - h, acc + combo)

    yield from rec(0, h_total, ())


def _multisets(opts: list[AtomType], size: int, lo: int, hi: int):
    """``(hydrogens, combo)`` for the size-``size`` multisets of ``opts`` whose
    hydrogen sum lies in ``[lo, hi]``, in the order of
    ``itertools.combinations_with_replacement(opts, size)``.

    That order takes as many of ``opts[0]`` as possible first, then of
    ``opts[1]``, and so on; a branch is skipped when the hydrogens still
    reachable with the remaining options miss ``[lo, hi]``.
    """
    m = len(opts)
    if size == 0:
        if lo <= 0 <= hi:
            yield 0, ()
        return
    if m == 0:
        return
    hs = [t.hydrogens for t in opts]
    tail_min = [0] * (m + 1)
    tail_max = [0] * (m + 1)
    tail_min[m] = tail_max[m] = 0
    for j in range(m - 1, -1, -1):
        tail_min[j] = min(hs[j:])
        tail_max[j] = max(hs[j:])
    counts = [0] * m

    def rec(j: int, left: int, h: int):
        # ``left`` atoms still to place among opts[j:], hydrogens so far ``h``.
        if h + left * tail_min[j] > hi or h + left * tail_max[j] < lo:
            return
        if j == m - 1:
            counts[j] = left
            yield h + left * hs[j], tuple(t for t, c in zip(opts, counts) for _ in range(c))
            counts[j] = 0
            return
        for c in range(left, -1, -1):
            counts[j] = c
            yield from rec(j + 1, left - c, h + c * hs[j])
        counts[j] = 0

    yield from rec(0, size, 0)


def _degree_feasible(dist: tuple[AtomType, ...]) -> bool:
    n = len(dist)
    if n == 1:
        return dist[0].degree == 0
    degrees = [t.degree for t in dist]
    total = sum(degrees)
    if total % 2 or total < 2 * (n - 1):
        return False
    if max(degrees) > total - max(degrees):
        return False
    # Bond order <= 3: an atom can spend at most 3 on each other atom.
    for d in degrees:
        if d > 3 * (n - 1):
            return False
    return True
