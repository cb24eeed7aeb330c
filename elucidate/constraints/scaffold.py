"""Scaffold constraint: every candidate must contain a given ring system.

A *scaffold* is a molecule given as SMILES (for example the starting
material's ring system) that must occur as a substructure of every
candidate.  Matching compares elements, bond orders, aromaticity and ring
closures of the scaffold, and ignores its hydrogen counts, so ``c1ccccc1``
matches any benzene ring whatever its substituents.

:func:`murcko_scaffold` gives the ring systems plus linkers of a structure
(the Murcko framework: Bemis & Murcko, J. Med. Chem. 1996, 39, 2887 — from
memory), used by ``elucidate check`` to search the expected structure's own
scaffold first.
"""

from __future__ import annotations

from rdkit import Chem, rdBase
from rdkit.Chem.Scaffolds import MurckoScaffold

from ..errors import InputError
from ..generate import StructureFilter

__all__ = ["parse_scaffold", "scaffold_filter", "murcko_scaffold", "fits_formula"]


def parse_scaffold(smiles: str) -> Chem.Mol:
    """Parse a scaffold SMILES into a query molecule.

    Aromatic fragments that cannot stand alone (e.g. ``c1ccnc1`` without its
    N-H) are accepted as substructure patterns.

    Raises
    ------
    InputError
        If the text is neither valid SMILES nor a valid pattern.

    Examples
    --------
    >>> parse_scaffold("c1ccccc1").GetNumAtoms()
    6
    """
    if not isinstance(smiles, str) or not smiles.strip():
        raise InputError(
            f"--scaffold needs a SMILES string, got {smiles!r}; give e.g. 'c1ccccc1' for a benzene ring")
    text = smiles.strip()
    with rdBase.BlockLogs():  # our one-line error replaces RDKit's parser log
        mol = _parse_scaffold_text(text)
    if mol is None or mol.GetNumAtoms() == 0:
        raise InputError(
            f"--scaffold {smiles!r} is not a valid SMILES; check brackets and ring-closure digits "
            "(e.g. 'c1ccc2ccccc2c1' for naphthalene) and quote it in the shell")
    return mol


def _parse_scaffold_text(text: str) -> Chem.Mol | None:
    mol = Chem.MolFromSmiles(text)
    if mol is None:  # e.g. an aromatic ring cut out of a larger system: keep it as written
        mol = Chem.MolFromSmiles(text, sanitize=False)
        if mol is not None:
            try:
                mol.UpdatePropertyCache(strict=False)
                Chem.FastFindRings(mol)
            except Exception:  # RDKit raises assorted errors on malformed input
                mol = None
    if mol is None:
        mol = Chem.MolFromSmarts(text)
        if mol is not None:
            mol.UpdatePropertyCache(strict=False)
    return mol


def fits_formula(scaffold: Chem.Mol, formula) -> str | None:
    """Say why a scaffold cannot fit the formula, or return None when it can."""
    need: dict[str, int] = {}
    for atom in scaffold.GetAtoms():
        sym = atom.GetSymbol()
        if sym == "H":
            continue
        need[sym] = need.get(sym, 0) + 1
    for sym, n in sorted(need.items()):
        have = formula.count(sym)
        if n > have:
            return f"the scaffold has {n} {sym} but the formula {formula.hill} only {have}"
    return None


def scaffold_filter(smiles: str, formula=None) -> StructureFilter:
    """A generator filter keeping structures that contain the scaffold.

    Parameters
    ----------
    smiles : str
        The scaffold.
    formula : Formula, optional
        When given, a scaffold that cannot fit is rejected up front.

    Examples
    --------
    >>> f = scaffold_filter("C1CCCCC1")
    >>> f.keep(Chem.MolFromSmiles("CC1CCCCC1")), f.keep(Chem.MolFromSmiles("CC1CCCC1"))
    (True, False)
    """
    query = parse_scaffold(smiles)
    if formula is not None:
        why = fits_formula(query, formula)
        if why:
            raise InputError(f"--scaffold {smiles!r} cannot occur in the answer: {why}; "
                             "check the scaffold or the formula")
    return StructureFilter(f"scaffold {smiles}", lambda m, q=query: m.HasSubstructMatch(q))


def murcko_scaffold(mol: Chem.Mol) -> str | None:
    """SMILES of the ring systems and linkers of ``mol`` (None for acyclic molecules).

    The Murcko framework without its exocyclic double-bonded atoms, so that
    moving a carbonyl or a substituent around a ring keeps the scaffold.
    Aromatic fragments are written as they occur in ``mol`` (they may not
    stand alone as molecules; :func:`parse_scaffold` accepts them).

    Examples
    --------
    >>> murcko_scaffold(Chem.MolFromSmiles("CC(=O)Nc1ccc(O)cc1"))
    'c1ccccc1'
    >>> murcko_scaffold(Chem.MolFromSmiles("O=C1CCCCC1C"))
    'C1CCCCC1'
    >>> murcko_scaffold(Chem.MolFromSmiles("CCCO")) is None
    True
    """
    if mol.GetRingInfo().NumRings() == 0:
        return None
    core = MurckoScaffold.GetScaffoldForMol(mol)
    keep = [a.GetIdx() for a in core.GetAtoms() if a.IsInRing() or a.GetDegree() > 1]
    if not keep:
        return None
    text = Chem.MolFragmentToSmiles(core, atomsToUse=keep, canonical=True)
    return text or None
