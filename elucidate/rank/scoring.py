"""Full score of one structure: predicted shifts, line assignment and prior.

A structure's *raw score* is the cost of its optimal line assignment
(Student-t shift likelihood with overlap, split and unfilled-line penalties,
:mod:`elucidate.rank.assignment`) plus optional prior costs: the environment
rarity of :mod:`elucidate.constraints.environments` (``prior``) and the
plausibility of its ring systems, small-ring bond patterns and second-sphere
environments (:mod:`elucidate.constraints.plausibility`, ``plausibility``).
Every search strategy scores structures with :func:`score_structure`, so
their results can be merged and ranked together; the calibrated weights of
the parts are applied later (:mod:`elucidate.rank.calibration`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable, Sequence

from rdkit import Chem

from ..constraints.spectral import carbon_classes
from ..predict import predict_mol
from ..predict.model import load_search_model
from .assignment import SPLIT_COST, Assignment, CarbonClass, assign_lines
from .rotamers import rotamer_split_costs

__all__ = ["ScoredStructure", "StructurePrior", "rank_structure", "score_structure", "smiles_order"]


@dataclass(frozen=True)
class ScoredStructure:
    """A structure with its raw score and everything a report needs.

    ``order`` maps the scored molecule's atom indices to the positions of
    the atoms in ``smiles``; ``predicted`` holds ``(atom, H, shift, sigma)``
    in the scored molecule's atom indices.  ``score`` is the assignment cost
    plus ``prior`` (environment rarity) plus ``plausibility``.
    """

    score: float
    smiles: str
    assignment: Assignment
    prior: float
    predicted: tuple
    order: tuple[int, ...]
    plausibility: float = 0.0
    #: 2D-correlation part of the raw score (counted in the fit, as data misfit)
    correlation: float = 0.0
    #: one :class:`~elucidate.constraints.correlations.CorrelationCheck` per cross peak
    checks: tuple = ()

    @property
    def fit_cost(self) -> float:
        """The data-misfit part of the raw score: line assignment plus 2D correlations."""
        return self.score - self.prior - self.plausibility


@dataclass(frozen=True)
class StructurePrior:
    """The two prior costs of a structure, kept apart.

    ``rarity`` and ``plausibility`` map a molecule to a (weighted) cost, or
    are None.  Called, the object returns their sum, so code that treats a
    prior as one callable keeps working; :func:`score_structure` stores the
    two parts separately.
    """

    rarity: Callable[[Chem.Mol], float] | None = None
    plausibility: Callable[[Chem.Mol], float] | None = None

    def terms(self, mol: Chem.Mol) -> tuple[float, float]:
        """``(rarity, plausibility)`` of a molecule (0 for a part that is None)."""
        r = self.rarity(mol) if self.rarity is not None else 0.0
        q = self.plausibility(mol) if self.plausibility is not None else 0.0
        return r, q

    def __call__(self, mol: Chem.Mol) -> float:
        r, q = self.terms(mol)
        return r + q


def rank_structure(mol: Chem.Mol, peaks: Sequence, model=None) -> tuple[Assignment, tuple]:
    """Predict a structure's shifts and assign the lines to its carbons.

    Carbons are grouped into symmetry classes (:func:`carbon_classes`); a
    class that slow rotation about an amide-type bond can split pays its own
    measured split cost (:mod:`elucidate.rank.rotamers`).  ``model``: the
    shift predictor (default: the fast search predictor, the environment
    table alone, `elucidate.predict.model.load_search_model`).
    """
    shifts = {a.index: a for a in predict_mol(mol, model or load_search_model())}
    split_costs = rotamer_split_costs(mol)
    classes = []
    for h, groups in carbon_classes(mol).items():
        for atoms in groups:
            preds = [shifts[i] for i in atoms]
            shift = sum(p.shift for p in preds) / len(preds)
            sigma = max(p.sigma for p in preds)
            classes.append(CarbonClass(h, tuple(atoms), shift, sigma, split_costs.get(atoms[0], SPLIT_COST)))
    predicted = tuple((a.index, a.hydrogens, a.shift, a.sigma) for a in shifts.values())
    return assign_lines(peaks, classes), predicted


def smiles_order(mol: Chem.Mol, smiles_written: bool) -> tuple[int, ...]:
    """Map each atom index of ``mol`` to its position in its canonical SMILES.

    ``smiles_written`` says that ``Chem.MolToSmiles(mol, isomericSmiles=False)``
    was already called on this molecule (RDKit keeps the output order).
    """
    if not smiles_written:
        Chem.MolToSmiles(mol, isomericSmiles=False)
    order = list(mol.GetPropsAsDict(True, True)["_smilesAtomOutputOrder"])
    pos = [0] * mol.GetNumAtoms()
    for p, a in enumerate(order):
        pos[a] = p
    return tuple(pos)


def score_structure(smiles: str, mol: Chem.Mol, peaks: Sequence,
                    prior: Callable[[Chem.Mol], float] | None,
                    smiles_written: bool = True, evidence=None, model=None) -> ScoredStructure | None:
    """Raw score of one structure, or None when its carbons cannot be placed
    under the lines at all (e.g. no line of a carbon's multiplicity).

    Parameters
    ----------
    smiles : str
        Canonical SMILES of ``mol`` (its identity).
    mol : rdkit.Chem.Mol
    peaks : sequence of Peak
    prior : StructurePrior or callable(mol) -> float, optional
        Prior cost added to the assignment cost; a :class:`StructurePrior`
        has its rarity and plausibility parts stored apart, any other
        callable counts as rarity.
    smiles_written : bool
        See :func:`smiles_order`.
    evidence : CorrelationEvidence, optional
        2D cross peaks (:mod:`elucidate.constraints.correlations`), checked
        under the line assignment; their cost is added to the fit.
    model : ShiftModel, optional
        Shift predictor (default: the search predictor, see `rank_structure`).
    """
    assignment, predicted = rank_structure(mol, peaks, model)
    if math.isinf(assignment.cost):
        return None
    if isinstance(prior, StructurePrior):
        p, q = prior.terms(mol)
    else:
        p, q = (prior(mol) if prior is not None else 0.0), 0.0
    c, checks = 0.0, ()
    if evidence is not None and len(evidence):
        # the line assignment improved jointly with the 2D evidence (swaps of close lines)
        assignment, c, checks = evidence.assign(mol, assignment, peaks)
    return ScoredStructure(assignment.cost + c + p + q, smiles, assignment, p, predicted,
                           smiles_order(mol, smiles_written), q, c, checks)
