"""13C chemical-shift prediction from atom environments.

Predictions come from a table of HOSE-style environment codes (Bremser,
*Anal. Chim. Acta* 1978, 103, 355 — from memory) learned from the open
nmrshiftdb2 data (Steinbeck, Krause, Kuhn, *J. Chem. Inf. Comput. Sci.* 2003,
43, 1733 — from memory), blended with an additive ridge-regression fallback
(see `elucidate.predict.model`), and corrected by gradient-boosted trees
learned on leave-one-constitution-out table statistics
(`elucidate.predict.learned`) when the package ships them.  Predicted shifts are hypotheses with an
uncertainty, not measurements.

Public API: `AtomShift`, `predict_mol`, `predict_smiles`.
"""

from __future__ import annotations

from rdkit import Chem

from ..errors import InputError
from .atomshift import AtomShift
from .model import load_default_model

__all__ = ["AtomShift", "predict_mol", "predict_smiles"]


def predict_mol(mol, model=None) -> tuple[AtomShift, ...]:
    """Predict the 13C shift of every carbon of a molecule.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        A sanitized molecule (implicit or explicit hydrogens; RDKit default
        aromaticity).
    model : ShiftModel, optional
        Default: the best shipped predictor (`load_default_model`: the
        table corrected by the learned trees when they are shipped).

    Returns
    -------
    tuple of AtomShift
        One entry per carbon, ascending RDKit atom index.
    """
    if mol is None or not isinstance(mol, Chem.Mol):
        raise InputError(
            f"predict_mol needs an RDKit Mol, got {type(mol).__name__}; "
            "parse SMILES with predict_smiles or Chem.MolFromSmiles first")
    model = model or load_default_model()
    return tuple(
        AtomShift(index=idx, element="C", hydrogens=h, shift=round(sh, 2),
                  sigma=round(sg, 2), sphere=s, predictor=src)
        for idx, h, sh, sg, s, src in sorted(model.predict_mol(mol, with_source=True))
    )


def predict_smiles(smiles: str) -> tuple[AtomShift, ...]:
    """Predict 13C shifts for a molecule given as SMILES.

    Raises
    ------
    InputError
        If the SMILES cannot be parsed.
    """
    if not isinstance(smiles, str) or not smiles.strip():
        raise InputError(
            f"expected a SMILES string, got {smiles!r}; give e.g. 'CCO' for ethanol")
    from rdkit import rdBase

    with rdBase.BlockLogs():  # our one-line error replaces RDKit's parser log
        mol = Chem.MolFromSmiles(smiles.strip())
    if mol is None:
        raise InputError(
            f"could not parse SMILES {smiles!r}; check brackets, ring-closure "
            "digits and atom valences (e.g. 'c1ccccc1C' for toluene)")
    return predict_mol(mol)
