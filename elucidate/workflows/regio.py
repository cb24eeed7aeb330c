"""Positional isomers of a structure: move substituents around its skeleton.

The commonest mix-up behind a wrong expected structure is a regioisomer: the
same pieces, one group attached elsewhere.  :func:`positional_isomers` lists
the structures reached from a molecule by one or more *moves*; a move cuts a
non-ring single bond, takes the smaller side (the substituent) and attaches
it by a single bond to another atom of the remaining skeleton that carries
a hydrogen, moving that hydrogen to the old attachment atom.  An exocyclic
double-bonded terminal atom (a ring C=O, C=S or C=N-) may likewise move to
another ring carbon that carries two hydrogens.  Every product keeps the
molecular formula.

Breadth-first over moves, each constitution once (stereo-free canonical
SMILES), deterministic order; the input itself is not listed.  A plain
graph-edit enumeration (no published method is claimed).
"""

from __future__ import annotations

import time
from typing import Callable, Iterator

from rdkit import Chem, rdBase

from ..errors import InputError

__all__ = ["positional_isomers", "single_moves"]


def _canon(mol: Chem.Mol) -> str | None:
    try:
        Chem.SanitizeMol(mol)
    except Exception:  # RDKit raises several exception types for impossible valences
        return None
    smi = Chem.MolToSmiles(mol, isomericSmiles=False)
    return smi if Chem.MolFromSmiles(smi) is not None else None


def _edit(mol: Chem.Mol, cut: tuple[int, int], new: tuple[int, int], order, h_from: int, h_to: int, nh: int):
    rw = Chem.RWMol(Chem.Mol(mol))
    Chem.Kekulize(rw, clearAromaticFlags=True)
    rw.RemoveBond(*cut)
    rw.AddBond(new[0], new[1], order)
    for idx in (h_from, h_to):
        at = rw.GetAtomWithIdx(idx)
        at.SetNoImplicit(False)
        at.SetNumExplicitHs(0)
        at.SetIsAromatic(False)
    for idx in cut + new:
        rw.GetAtomWithIdx(idx).SetNoImplicit(False)
    return _canon(rw.GetMol())


def single_moves(smiles: str) -> list[str]:
    """Canonical SMILES of every structure one move away (sorted).

    Examples
    --------
    Moving the chlorine of 2-chlorotoluene gives the 3- and 4-isomers and
    benzyl chloride:

    >>> single_moves("Cc1ccccc1Cl")
    ['Cc1ccc(Cl)cc1', 'Cc1cccc(Cl)c1', 'ClCc1ccccc1']
    """
    # Most edits give impossible valences; RDKit's complaints about them
    # (and about unreadable input, replaced by our error) are not news to
    # the caller.  The block ends with this call.
    with rdBase.BlockLogs():
        return _single_moves(smiles)


def _single_moves(smiles: str) -> list[str]:
    mol = Chem.MolFromSmiles(smiles) if isinstance(smiles, str) else None
    if mol is None:
        raise InputError(f"cannot parse {smiles!r} as SMILES; check brackets, ring-closure digits "
                         "and atom valences")
    own = Chem.MolToSmiles(mol, isomericSmiles=False)
    out: set[str] = set()
    n = mol.GetNumAtoms()
    for b in mol.GetBonds():
        if b.IsInRing():
            continue
        order = b.GetBondType()
        for a, x in ((b.GetBeginAtom(), b.GetEndAtom()), (b.GetEndAtom(), b.GetBeginAtom())):
            ai, xi = a.GetIdx(), x.GetIdx()
            em = Chem.RWMol(mol)
            em.RemoveBond(ai, xi)
            frags = Chem.GetMolFrags(em)
            side = next(f for f in frags if xi in f)
            if len(side) * 2 > n or (len(side) * 2 == n and xi < ai):
                continue
            rest = next(f for f in frags if ai in f)
            if order == Chem.BondType.SINGLE:
                need = 1
                targets = [t for t in rest if t != ai and mol.GetAtomWithIdx(t).GetTotalNumHs() >= need]
            elif order == Chem.BondType.DOUBLE and x.GetDegree() == 1 and a.IsInRing():
                need = 2
                targets = [t for t in rest if t != ai and mol.GetAtomWithIdx(t).IsInRing()
                           and mol.GetAtomWithIdx(t).GetSymbol() == "C"
                           and mol.GetAtomWithIdx(t).GetTotalNumHs() >= need]
            else:
                continue
            for t in sorted(targets):
                smi = _edit(mol, (ai, xi), (t, xi), order, ai, t, need)
                if smi and smi != own:
                    out.add(smi)
    return sorted(out)


def positional_isomers(
    smiles: str,
    *,
    depth: int = 2,
    time_limit: float | None = None,
    keep: Callable[[Chem.Mol], bool] | None = None,
) -> Iterator[str]:
    """Structures up to ``depth`` moves away, nearest first.

    Parameters
    ----------
    smiles : str
    depth : int
        Largest number of moves.
    time_limit : float, optional
        Stop after this many seconds.
    keep : callable(Mol) -> bool, optional
        Only structures passing it are yielded (all are still expanded).

    Yields
    ------
    str
        Canonical SMILES, each constitution once.
    """
    if depth < 1:
        return
    start = time.monotonic()
    with rdBase.BlockLogs():  # our one-line error replaces RDKit's parser log
        mol = Chem.MolFromSmiles(smiles) if isinstance(smiles, str) else None
    if mol is None:
        raise InputError(f"cannot parse {smiles!r} as SMILES; check brackets, ring-closure digits "
                         "and atom valences")
    own = Chem.MolToSmiles(mol, isomericSmiles=False)
    seen = {own}
    frontier = [own]
    for _ in range(depth):
        nxt = []
        for smi in frontier:
            for new in single_moves(smi):
                if new in seen:
                    continue
                seen.add(new)
                nxt.append(new)
                if keep is None or keep(Chem.MolFromSmiles(new)):
                    yield new
                if time_limit is not None and time.monotonic() - start > time_limit:
                    return
        frontier = nxt
