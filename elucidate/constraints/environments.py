"""Which first-sphere carbon environments occur at which 13C shifts.

A carbon's *first-sphere environment* is its hydrogen count and the list of
its neighbours (element with charge, the neighbour's hydrogen count, and the
bond order to it).  The environment decides most of the shift: a carbon
double-bonded to O with two carbon neighbours (a ketone) sits near 200 ppm,
a CH2 bonded to O and C near 60-70 ppm.  From the training spectra with
their recovered assignment (:func:`elucidate.predict.build.iter_assigned_training`)
we record, for every environment, the range of shifts observed.

During generation each carbon's environment is known as soon as the carbon
is *closed* (all its bonds fixed), so a structure whose carbon cannot sit
under any line of matching multiplicity is abandoned early
(:func:`environment_row_check`).  Two levels are kept:

* level 2: the full key described above;
* level 1: the same without the neighbours' hydrogen counts.

A carbon is allowed under a line when the deepest level with at least 20
examples has an observed range (minimum to maximum, widened by ``margin``
ppm) that covers the line's shift.  Rarer or unseen environments are always
allowed: the hard rule only removes what the data clearly contradict.  The
finer information (median, quartiles) feeds the soft *approximate cost* of
the fit-steered search instead (:meth:`EnvironmentRule.cost`).

Kekulé structures: the generator builds aromatic rings as alternating
single/double bonds, so the table is filled from *every* Kekulé structure
of each training molecule (RDKit's resonance enumeration), and a carbon's
key is the same whichever Kekulé form the generator happens to build.
"""

from __future__ import annotations

import gzip
import json
import math
from collections import defaultdict
from dataclasses import dataclass
from pathlib import Path
from typing import Iterable, Sequence

import numpy as np
from rdkit import Chem, rdBase

from ..datafiles import data_file
from ..rank.cover import CoverRow, cover_cost, min_offset_cover

__all__ = [
    "EnvironmentTable",
    "environment_keys",
    "mol_environment_keys",
    "build_environment_table",
    "load_environment_table",
    "environment_row_check_factory",
    "EnvironmentRule",
    "kekule_forms",
    "atom_key",
    "mol_atom_keys",
    "rarity",
    "RARITY_SCALE",
    "DEFAULT_TABLE_PATH",
]

DEFAULT_TABLE_PATH = Path(__file__).resolve().parent.parent / "data" / "environments.json.gz"
TABLE_NAME = "environments.json.gz"
#: Quantiles kept per environment: 0.5 %, median, 99.5 %, quartiles, min, max.
_QUANTILES = (0.005, 0.5, 0.995, 0.25, 0.75, 0.0, 1.0)
#: Examples an environment needs before it may exclude anything (below
#: that, the coarser level decides, or nothing is excluded).
_MIN_COUNT = 20
#: Student-t degrees of freedom and spread floor (ppm) of environment costs.
_NU = 3.0
_SPREAD_FLOOR = 1.5
#: An environment seen this often (per Kekulé-averaged constitution count)
#: costs nothing in the rarity prior.
RARITY_SCALE = 1000.0


def _label(element: str, charge: int) -> str:
    return element + ("+" if charge > 0 else "-" if charge < 0 else "")


def environment_keys(h: int, neighbours: Sequence[tuple[str, int, int]]) -> tuple[str, str]:
    """Level-2 and level-1 keys of a carbon.

    ``neighbours`` holds ``(label, neighbour H count, bond order)``.

    >>> environment_keys(2, [("O", 1, 1), ("C", 3, 1)])
    ('2|C3-1,O1-1', '2|C-1,O-1')
    """
    nb = sorted(neighbours)
    k2 = f"{h}|" + ",".join(f"{lab}{nh}-{o}" for lab, nh, o in nb)
    k1 = f"{h}|" + ",".join(f"{lab}-{o}" for lab, o in sorted((lab, o) for lab, _, o in nb))
    return k2, k1


def atom_key(label: str, h: int, neighbours: Sequence[tuple[str, int, int]]) -> str:
    """Environment key of any heavy atom (for the rarity prior).

    >>> atom_key("O", 1, [("C", 2, 1)])
    'O1|C2-1'
    """
    return f"{label}{h}|" + ",".join(f"{lab}{nh}-{o}" for lab, nh, o in sorted(neighbours))


def _neighbours(atom) -> list[tuple[str, int, int]]:
    """``(label, H count, bond order)`` of an RDKit atom's heavy neighbours."""
    out = []
    for bond in atom.GetBonds():
        other = bond.GetOtherAtom(atom)
        out.append((_label(other.GetSymbol(), other.GetFormalCharge()), other.GetTotalNumHs(),
                    int(round(bond.GetBondTypeAsDouble()))))
    return out


def mol_atom_keys(mol: Chem.Mol) -> list[str]:
    """:func:`atom_key` of every heavy atom, by atom index."""
    return [atom_key(_label(a.GetSymbol(), a.GetFormalCharge()), a.GetTotalNumHs(), _neighbours(a))
            for a in mol.GetAtoms()]


def rarity(count: float) -> float:
    """Prior cost of an environment seen ``count`` times in the training
    constitutions: ``max(0, ln(RARITY_SCALE / (count + 1)))`` -- zero for
    common environments, about 6.9 for one never seen.

    >>> rarity(5000), round(rarity(0), 2)
    (0.0, 6.91)
    """
    return max(0.0, math.log(RARITY_SCALE / (count + 1.0)))


def mol_environment_keys(mol: Chem.Mol) -> dict[int, tuple[str, str]]:
    """Keys of every carbon of a Kekulé-form (or any) molecule, by atom index."""
    out = {}
    for atom in mol.GetAtoms():
        if atom.GetAtomicNum() != 6:
            continue
        out[atom.GetIdx()] = environment_keys(atom.GetTotalNumHs(), _neighbours(atom))
    return out


def _has_aromatic_atom(mol: Chem.Mol) -> bool:
    return len(mol.GetAromaticAtoms()) > 0


def _formal_charges(mol: Chem.Mol) -> list[int]:
    get = mol.GetAtomWithIdx
    return [get(i).GetFormalCharge() for i in range(mol.GetNumAtoms())]


#: Any atom with a formal charge.
_CHARGED = Chem.MolFromSmarts("[!+0]")


def kekule_forms(mol: Chem.Mol, limit: int = 32) -> list[Chem.Mol]:
    """Kekulé structures of a molecule (the molecule itself when it has no
    aromatic atom).

    RDKit's resonance enumeration (``ResonanceMolSupplier`` with
    ``KEKULE_ALL``) in its own order, keeping the forms whose formal charges
    equal the molecule's atom by atom; the enumeration stops after the first
    form kept at or beyond position ``limit``.  When no form is kept, a single
    kekulized copy (or the molecule itself, if kekulization fails).
    """
    if not _has_aromatic_atom(mol):
        return [mol]
    forms = []
    # resonance enumeration logs the forms it rejects; keep that quiet
    with rdBase.BlockLogs():
        try:
            supplier = Chem.ResonanceMolSupplier(mol, Chem.ResonanceFlags.KEKULE_ALL)
            # a neutral molecule keeps exactly its neutral forms (one substructure
            # query per form instead of reading every atom's charge)
            charges = _formal_charges(mol) if mol.HasSubstructMatch(_CHARGED) else None
            # len() once and direct indexing: the supplier's iterator re-checks
            # its end (and the Python-level atom iterators are slow)
            for i in range(len(supplier)):
                form = supplier[i]
                if form is None:
                    continue
                if charges is None:
                    if form.HasSubstructMatch(_CHARGED):
                        continue
                else:
                    get = form.GetAtomWithIdx
                    if any(get(j).GetFormalCharge() != c
                           for j, c in zip(range(form.GetNumAtoms()), charges)):
                        continue
                forms.append(form)
                if i + 1 >= limit:
                    break
        except (RuntimeError, ValueError):
            forms = []
    if not forms:
        kek = Chem.Mol(mol)
        try:
            Chem.Kekulize(kek, clearAromaticFlags=True)
            forms = [kek]
        except (RuntimeError, ValueError):
            forms = [mol]
    return forms


class _FormEnvironments:
    """Environment keys of one Kekulé form, computed once per molecule and
    shared by :meth:`EnvironmentTable.mol_rarity` and
    :meth:`EnvironmentRule.structure_cost` (both take the same forms).

    ``atom_keys``: :func:`atom_key` of every atom, by atom index;
    ``carbon_keys``: ``(H count, environment_keys)`` of every neutral carbon
    (label ``C``), by atom index.
    """

    __slots__ = ("atom_keys", "carbon_keys")

    def __init__(self, atom_keys, carbon_keys):
        self.atom_keys = atom_keys
        self.carbon_keys = carbon_keys


#: (label, H count, sorted neighbours) -> (atom_key, (H, environment_keys) or
#: None): both are pure functions of the triple, so the strings are built once
#: per distinct first-sphere environment.
_ATOM_ENV: dict[tuple, tuple] = {}
_ATOM_ENV_SIZE = 50_000


def _atom_environment(label: str, h: int, nbs: tuple) -> tuple:
    ak = f"{label}{h}|" + ",".join([f"{nl}{nh}-{o}" for nl, nh, o in nbs])
    return ak, ((h, environment_keys(h, nbs)) if label == "C" else None)


def _form_environments(form: Chem.Mol, labels: list[str], ends: list) -> _FormEnvironments:
    """Keys of a form's atoms as :func:`mol_atom_keys` and
    :func:`environment_keys` build them from :func:`_neighbours`.

    ``ends``: ``(begin, end)`` atoms of every bond by index, the same in every
    form of a molecule (RDKit builds each resonance form as a copy of the
    molecule, so atom and bond indices are kept); filled from the first form.
    """
    n = form.GetNumAtoms()
    get_atom = form.GetAtomWithIdx
    hs = [get_atom(i).GetTotalNumHs() for i in range(n)]
    nbs: list[list] = [[] for _ in range(n)]
    get_bond = form.GetBondWithIdx
    m = form.GetNumBonds()
    if len(ends) != m:
        ends[:] = [(b.GetBeginAtomIdx(), b.GetEndAtomIdx()) for b in map(get_bond, range(m))]
    for (a, b), bond in zip(ends, map(get_bond, range(m))):
        o = int(round(bond.GetBondTypeAsDouble()))
        nbs[a].append((labels[b], hs[b], o))
        nbs[b].append((labels[a], hs[a], o))
    memo = _ATOM_ENV
    if len(memo) > _ATOM_ENV_SIZE:
        memo.clear()
    atom_keys = []
    carbon_keys = []
    for lab, h, nb in zip(labels, hs, nbs):
        nb.sort()
        k = (lab, h, tuple(nb))
        env = memo.get(k)
        if env is None:
            env = memo[k] = _atom_environment(*k)
        atom_keys.append(env[0])
        if env[1] is not None:
            carbon_keys.append(env[1])
    return _FormEnvironments(tuple(atom_keys), tuple(carbon_keys))


#: Environments of the Kekulé forms of the last few molecules, keyed by the
#: molecule's binary pickle (its whole content, so an edited molecule never
#: reuses a stale entry).  Small on purpose: it only lets the prior and the
#: approximate cost of one structure share one resonance enumeration.
_FORMS_CACHE: dict[bytes, tuple[_FormEnvironments, ...]] = {}
_FORMS_CACHE_SIZE = 8


def _mol_forms(mol: Chem.Mol) -> tuple[_FormEnvironments, ...]:
    """:func:`kekule_forms` of ``mol`` as environment data, cached briefly."""
    key = mol.ToBinary()
    hit = _FORMS_CACHE.get(key)
    if hit is not None:
        return hit
    get = mol.GetAtomWithIdx
    n = mol.GetNumAtoms()
    if mol.HasSubstructMatch(_CHARGED):
        labels = []
        for i in range(n):
            atom = get(i)
            labels.append(_label(atom.GetSymbol(), atom.GetFormalCharge()))
    else:
        labels = [get(i).GetSymbol() for i in range(n)]
    # every form kept has the molecule's atoms and formal charges (the
    # kekulized fallback and the molecule itself trivially), so the labels
    # are the molecule's; hydrogen counts and bond orders are the form's own
    ends: list = []
    hit = tuple(_form_environments(form, labels, ends) for form in kekule_forms(mol))
    if len(_FORMS_CACHE) >= _FORMS_CACHE_SIZE:
        del _FORMS_CACHE[next(iter(_FORMS_CACHE))]
    _FORMS_CACHE[key] = hit
    return hit


@dataclass(frozen=True)
class EnvironmentTable:
    """Shift statistics per environment key.

    ``stats[key] = [count, q0.5%, median, q99.5%, q25%, q75%, min, max]``.
    """

    stats: dict
    provenance: dict
    atom_counts: dict = None  # atom_key -> constitutions-weighted count

    def atom_rarity(self, key: str) -> float:
        """:func:`rarity` of a heavy-atom environment key."""
        return rarity((self.atom_counts or {}).get(key, 0.0))

    def mol_rarity(self, mol: Chem.Mol) -> float:
        """Summed rarity of a molecule's atoms (smallest over its Kekulé forms)."""
        return min(sum(map(self.atom_rarity, f.atom_keys)) for f in _mol_forms(mol))

    def lookup(self, keys: tuple[str, str]):
        """Statistics at the deepest level with enough examples, or None."""
        for k in keys:
            s = self.stats.get(k)
            if s is not None and s[0] >= _MIN_COUNT:
                return s
        return None

    def save(self, path: Path | str) -> None:
        with gzip.open(path, "wt", encoding="utf-8") as fh:
            json.dump({"provenance": self.provenance, "stats": self.stats,
                       "atom_counts": self.atom_counts or {}}, fh, sort_keys=True, separators=(",", ":"))


def build_environment_table(
    records: Iterable[tuple[str, dict[int, float]]], provenance: dict | None = None
) -> EnvironmentTable:
    """Collect shift statistics per environment from assigned training data.

    Parameters
    ----------
    records : iterable of (SMILES, {carbon atom index: shift})
        Atom indices refer to ``Chem.MolFromSmiles(SMILES)``.
    provenance : dict, optional
        Stored with the table.
    """
    values: dict[str, list[float]] = defaultdict(list)
    counts: dict[str, float] = defaultdict(float)
    seen: set[str] = set()
    n_mols = 0
    for smiles, shifts in records:
        mol = Chem.MolFromSmiles(smiles)
        if mol is None or not shifts:
            continue
        n_mols += 1
        forms = kekule_forms(mol)
        if smiles not in seen:  # atom-environment frequencies, once per constitution
            seen.add(smiles)
            for form in forms:
                for k in mol_atom_keys(form):
                    counts[k] += 1.0 / len(forms)
        for form in forms:
            for idx, keys in mol_environment_keys(form).items():
                if idx in shifts:
                    for k in set(keys):
                        values[k].append(shifts[idx])
    stats = {}
    for k in sorted(values):
        v = np.asarray(values[k])
        qs = np.quantile(v, _QUANTILES)
        stats[k] = [int(len(v))] + [round(float(q), 2) for q in qs]
    prov = dict(provenance or {})
    prov.update({"molecules": n_mols, "constitutions": len(seen), "environments": len(stats),
                 "atom_environments": len(counts), "quantiles": list(_QUANTILES)})
    atom_counts = {k: round(v, 3) for k, v in sorted(counts.items())}
    return EnvironmentTable(stats, prov, atom_counts)


_CACHE: dict[str, EnvironmentTable] = {}


def load_environment_table(path: Path | str | None = None) -> EnvironmentTable | None:
    """The shipped table (or one at ``path``); None when it is absent."""
    p = Path(path) if path else data_file(TABLE_NAME)
    key = str(p)
    if key not in _CACHE:
        if not p.exists():
            return None
        with gzip.open(p, "rt", encoding="utf-8") as fh:
            obj = json.load(fh)
        _CACHE[key] = EnvironmentTable(obj["stats"], obj.get("provenance", {}), obj.get("atom_counts", {}))
    return _CACHE[key]


def _excess(stats, shift: float) -> float:
    """Student-t negative log-likelihood excess of ``shift`` under an
    environment's statistics (0 at the median; 0 when the environment has
    too few examples): ``(nu + 1) / 2 * log(1 + z**2 / nu)`` with ``z`` the
    distance from the median over the interquartile spread (floored)."""
    if stats is None or len(stats) < 6:
        return 0.0
    spread = max((stats[5] - stats[4]) / 1.349, _SPREAD_FLOOR)
    z = (shift - stats[2]) / spread
    return 0.5 * (_NU + 1.0) * float(np.log1p(z * z / _NU))


class EnvironmentRule:
    """Generator hook rejecting carbons that no line of their multiplicity explains.

    Call the rule with an atom-type distribution to get the per-atom check
    for :func:`elucidate.generate.assembly.bond_matrices`.  ``checked`` and
    ``rejected`` count the closed carbons examined and refused.

    Fit-steered search: with ``steer`` set, each closed carbon adds its
    :meth:`cost` to a running sum along the search path; a partial structure
    whose sum exceeds ``bound`` is abandoned.  Costs are non-negative, so the
    sum of a partial structure is a lower bound of every completion's
    *approximate cost* (the sum over all carbons), and pruning at ``bound``
    never loses a structure whose approximate cost is at most ``bound``.
    """

    def __init__(self, peaks: Sequence, table: EnvironmentTable, margin: float = 4.0):
        self.table = table
        self.margin = margin
        self._by_h: dict[int | None, list[float]] = defaultdict(list)
        for p in peaks:
            self._by_h[p.hydrogens].append(p.shift)
        self._unknown = self._by_h.get(None, [])
        self._verdicts: dict[tuple[int, tuple[str, str]], bool] = {}
        self._costs: dict[tuple[int, tuple[str, str]], float] = {}
        self.checked = 0
        self.rejected = 0
        #: With ``steer`` on, partial structures whose summed carbon costs
        #: exceed ``bound`` are abandoned (branch and bound); the pipeline
        #: lowers the bound as better structures are found.
        self.steer = False
        self.bound = float("inf")
        self.bound_pruned = 0
        #: Summed cost of the last complete structure accepted.
        self.last_total = 0.0
        #: Weight of the environment-rarity prior in the approximate cost.
        self.rarity_weight = 1.0
        self._rarity_cache: dict[str, float] = {}
        self._lines = [(p.hydrogens, p.shift) for p in peaks]
        self._line_costs: dict = {}
        self._cover_rows: dict = {}

    def _rarity(self, key: str) -> float:
        r = self._rarity_cache.get(key)
        if r is None:
            r = self.table.atom_rarity(key)
            self._rarity_cache[key] = r
        return r

    def allowed(self, h: int, keys: tuple[str, str]) -> bool:
        """Whether a carbon with ``h`` H and these keys fits some line."""
        v = self._verdicts.get((h, keys))
        if v is None:
            s = self.table.lookup(keys)
            if s is None:
                v = True
            else:
                # the whole observed range: a hard rule must be conservative
                lo, hi = s[6] - self.margin, s[7] + self.margin
                v = any(lo <= x <= hi for x in self._by_h.get(h, []) + self._unknown)
            self._verdicts[(h, keys)] = v
        return v

    def cost(self, h: int, keys: tuple[str, str]) -> float:
        """Approximate cost of a carbon: the smallest negative log-likelihood
        excess over the lines it may sit under (0 for unseen environments).

        The environment's shift distribution is a Student-t around its
        median with the interquartile spread (floored at 1.5 ppm); the cost
        is ``(nu + 1) / 2 * log(1 + z**2 / nu)`` (0 at the median), so sums
        over carbons only grow as a structure is completed.
        """
        c = self._costs.get((h, keys))
        if c is None:
            s = self.table.lookup(keys)
            shifts = self._by_h.get(h, []) + self._unknown
            c = min((_excess(s, x) for x in shifts), default=0.0)
            self._costs[(h, keys)] = c
        return c

    def line_costs(self, h: int, neighbours: Sequence[tuple[str, int, int]]):
        """Cost of a carbon under each line (same Student-t excess as
        :meth:`cost`; ``inf`` where the line's multiplicity does not match),
        or None when :meth:`allowed` excludes the environment."""
        return self._line_costs_for(h, environment_keys(h, neighbours))

    def _line_costs_for(self, h: int, keys: tuple[str, str]):
        """:meth:`line_costs` of a carbon whose :func:`environment_keys` are known."""
        ck = (h, keys)
        hit = self._line_costs.get(ck)
        if hit is None:
            if not self.allowed(h, keys):
                hit = False
            else:
                s = self.table.lookup(keys)
                hit = np.array([_excess(s, x) if lh is None or lh == h else np.inf for lh, x in self._lines])
            self._line_costs[ck] = hit
        return None if hit is False else hit

    @property
    def line_hydrogens(self) -> list[int | None]:
        """Hydrogen count (multiplicity) of each line, None where unknown."""
        return [h for h, _x in self._lines]

    def atom_rarity(self, label: str, h: int, neighbours) -> float:
        """Weighted rarity prior of any heavy atom's environment."""
        return self.rarity_weight * self._rarity(atom_key(label, h, neighbours))

    def structure_cost(self, mol: Chem.Mol) -> float:
        """Approximate cost of a finished structure: the smallest, over its
        Kekulé forms, of the weighted rarity of every atom's environment plus
        the cheapest placement of its carbons under the lines with every
        line covered (:func:`elucidate.rank.cover.cover_cost`).

        The running sum of the orderly search (each closed carbon under its
        own cheapest line) never exceeds this, so a bound proven by that
        search is also a bound on this cost.
        """
        n_lines = len(self._lines)
        weight = self.rarity_weight
        rarity_of = self._rarity
        problems = []
        best = math.inf
        for form in _mol_forms(mol):
            total = 0.0
            for key in form.atom_keys:
                total += weight * rarity_of(key)
            rows = [self._cover_row(h, keys) for h, keys in form.carbon_keys]
            if any(r is None for r, _ in rows):  # a NaN among the costs: numpy's semantics
                best = min(best, total + cover_cost([np.array(v) for _, v in rows], n_lines))
            else:
                problems.append((total, [r for r, _ in rows]))
        # the smallest total + cover over the forms; covers that cannot win are skipped
        return min(best, min_offset_cover(problems, n_lines))

    def _cover_row(self, h: int, keys: tuple[str, str]):
        """``(CoverRow or None if a cost is NaN, costs as a tuple)`` of
        :meth:`_line_costs_for`, with ``inf`` everywhere for an excluded
        environment; cached per environment."""
        ck = (h, keys)
        hit = self._cover_rows.get(ck)
        if hit is None:
            vec = self._line_costs_for(h, keys)
            row = tuple(vec.tolist()) if vec is not None else (math.inf,) * len(self._lines)
            hit = self._cover_rows[ck] = (None if any(x != x for x in row) else CoverRow(row), row)
        return hit

    def __call__(self, dist):
        labels = [t.label for t in dist]
        hs = [t.hydrogens for t in dist]
        carbons = [t.element == "C" for t in dist]
        n = len(dist)
        partial = [0.0] * n

        def check(i: int, m) -> bool:
            before = partial[i - 1] if i else 0.0
            row = m[i]
            nbs = [(labels[j], hs[j], row[j]) for j in range(n) if row[j]]
            add = 0.0
            if carbons[i]:
                keys = environment_keys(hs[i], nbs)
                self.checked += 1
                if not self.allowed(hs[i], keys):
                    self.rejected += 1
                    return False
                if self.steer:
                    add = self.cost(hs[i], keys)
            if self.steer:
                add += self.rarity_weight * self._rarity(atom_key(labels[i], hs[i], nbs))
                partial[i] = before + add
                if partial[i] > self.bound:
                    self.bound_pruned += 1
                    return False
            if i == n - 1:
                self.last_total = partial[i]
            return True

        return check


def environment_row_check_factory(peaks: Sequence, table: EnvironmentTable, margin: float = 4.0) -> EnvironmentRule:
    """Make the generator hook that rejects carbons no line can explain.

    Parameters
    ----------
    peaks : sequence of Peak
    table : EnvironmentTable
    margin : float
        ppm added on both sides of each environment's observed range.

    Returns
    -------
    EnvironmentRule
        Callable on an atom-type distribution, returning the per-atom check.
    """
    return EnvironmentRule(peaks, table, margin)
