"""Turn a bond matrix over typed atoms into an RDKit molecule and its identity.

The identity of a constitution is RDKit's canonical SMILES of the sanitized
molecule (aromatic form), so the Kekulé structures of one aromatic system
coincide.  Hydrogen counts are set explicitly on every heavy atom, so RDKit
never guesses them.
"""

from __future__ import annotations

from typing import Sequence

from rdkit import Chem, rdBase

from .atomtypes import AtomType

__all__ = ["build_mol", "canonical_smiles"]

_BOND = {1: Chem.BondType.SINGLE, 2: Chem.BondType.DOUBLE, 3: Chem.BondType.TRIPLE}


def build_mol(types: Sequence[AtomType], matrix: Sequence[Sequence[int]]) -> Chem.Mol | None:
    """Build and sanitize the molecule; ``None`` when RDKit rejects it.

    Examples
    --------
    >>> t = [AtomType("C", 4, 3), AtomType("O", 2, 1)]
    >>> Chem.MolToSmiles(build_mol(t, [[0, 1], [1, 0]]))
    'CO'
    """
    rw = Chem.RWMol()
    for t in types:
        atom = Chem.Atom(t.element)
        atom.SetNoImplicit(True)
        atom.SetNumExplicitHs(t.hydrogens)
        if t.charge:
            atom.SetFormalCharge(t.charge)
        rw.AddAtom(atom)
    n = len(types)
    for i in range(n):
        row = matrix[i]
        for j in range(i + 1, n):
            b = row[j]
            if b:
                rw.AddBond(i, j, _BOND[b])
    mol = rw.GetMol()
    # Graphs RDKit rejects are expected here; keep its error log quiet.
    with rdBase.BlockLogs():
        try:
            Chem.SanitizeMol(mol)
        except (ValueError, RuntimeError):  # valence/kekulization problems
            return None
    return mol


def canonical_smiles(mol: Chem.Mol) -> str:
    """RDKit canonical SMILES without stereo (the identity of a constitution)."""
    return Chem.MolToSmiles(mol, isomericSmiles=False)
