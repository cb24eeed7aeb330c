"""Every constraint of one solve, gathered in one object.

The search strategies (:mod:`elucidate.search`) all honour the same
constraints: the DEPT hydrogen counts on atom-type distributions, the
structure filters (plausibility, SMARTS, scaffold, rings, symmetry
allowance) and the first-sphere shift environments with their approximate
cost.  :func:`build_constraints` makes them once from the user's options.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Sequence

from rdkit import Chem

from ..generate import StructureFilter
from .environments import (
    EnvironmentRule,
    environment_row_check_factory,
    kekule_forms,
    load_environment_table,
    mol_environment_keys,
)
from .spectral import SymmetryAllowance, carbon_hydrogen_rule, symmetry_filter
from .structural import implausible_motif_filters, ring_filters, smarts_filters

__all__ = ["ConstraintSet", "build_constraints"]


@dataclass
class ConstraintSet:
    """What a structure must satisfy to be listed.

    accept : callable(types) -> bool
        DEPT hydrogen counts on a sorted atom-type distribution.
    filters : list of StructureFilter
        Yes/no tests on finished molecules, each named (and counted).
    rule : EnvironmentRule or None
        First-sphere shift environments: the generator hook, the hard
        environment check and the approximate cost (None when the table is
        switched off or absent).
    env_check : callable(mol) -> bool or None
        The environment rule on a finished molecule (some Kekulé form passes).
    """

    accept: Callable
    filters: list[StructureFilter]
    rule: EnvironmentRule | None
    env_check: Callable | None

    # name used by the orderly generator for the hook
    @property
    def row_check_factory(self) -> EnvironmentRule | None:
        return self.rule

    def keep(self, mol: Chem.Mol) -> bool:
        """Whether a finished molecule passes every filter and the environment rule."""
        if not all(f.keep(mol) for f in self.filters):
            return False
        return self.env_check is None or self.env_check(mol)


def build_constraints(formula, peaks: Sequence, *, allow_all: bool = False, require: Sequence[str] = (),
                      forbid: Sequence[str] = (), scaffold: str | None = None, max_rings: int | None = None,
                      min_ring_size: int | None = None, max_ring_size: int | None = None,
                      symmetry: SymmetryAllowance = SymmetryAllowance(),
                      environment_margin: float | None = 4.0) -> ConstraintSet:
    """The constraints of a solve from the formula, the lines and the options.

    Parameters mirror :class:`elucidate.pipeline.SolveSettings`; see
    ``docs/constraints.md`` for what each constraint does and why.
    """
    accept = carbon_hydrogen_rule(peaks, formula.carbons)
    filters: list[StructureFilter] = []
    if not allow_all:
        filters += implausible_motif_filters(only_default=True)
    filters += smarts_filters(require, forbid)
    if scaffold:
        from .scaffold import scaffold_filter

        filters.append(scaffold_filter(scaffold, formula))
    filters += ring_filters(max_rings, min_ring_size, max_ring_size)
    filters.append(symmetry_filter(peaks, symmetry))
    rule = env_check = None
    table = load_environment_table() if environment_margin is not None else None
    if table is not None:
        rule = environment_row_check_factory(peaks, table, environment_margin)

        def env_check(mol, _rule=rule):
            for form in kekule_forms(mol):
                keys = mol_environment_keys(form)
                if all(_rule.allowed(form.GetAtomWithIdx(i).GetTotalNumHs(), k) for i, k in keys.items()):
                    return True
            return False

    return ConstraintSet(accept, filters, rule, env_check)
