"""The fit-steered search keeps its promise: nothing below the stated bound is missing.

Peaks: 2-pentanone in CDCl3 (209 C, 44 CH2, 30 CH3, 17 CH2, 14 CH3; from
memory of standard 13C tables).  The pool is made tiny so that the bound, not
exhaustion, ends the search; then every structure the plain exhaustive
generator finds with approximate cost below the bound must be listed.
"""

import pytest

from elucidate.formula import parse_formula
from elucidate.generate import enumerate_isomers
from elucidate.pipeline import SolveSettings, _constraints, prepare_peaks, solve

PEAKS = "209.0 C, 43.7 CH2, 29.8 CH3, 17.4 CH2, 13.7 CH3"


@pytest.mark.parametrize("formula,peaks,pool", [("C5H10O", PEAKS, 2),
                                                ("C5H10O", "209.0, 43.7, 29.8, 17.4, 13.7", 6)])
def test_every_structure_below_the_bound_is_listed(formula, peaks, pool):
    settings = SolveSettings(pool=pool, top=100, keep=100, time_limit=60)
    result = solve(formula, peaks, settings)
    status, bound = result.completeness
    assert status == "complete up to cost", result.completeness
    listed = {c.smiles for c in result.candidates}

    f = parse_formula(formula)
    pk = prepare_peaks(f, peaks, None)
    cons = _constraints(f, pk, settings)
    rule = cons.row_check_factory
    below = []
    for s in enumerate_isomers(f, valences=dict(settings.valences), filters=cons.filters,
                               accept_types=cons.accept, row_check_factory=rule):
        if rule.structure_cost(s.mol) < bound - 1e-6:
            below.append(s.smiles)
    assert below, "the bound should admit some structures"
    missing = [s for s in below if s not in listed]
    assert not missing, (bound, missing)


def test_two_runs_give_identical_rankings():
    settings = SolveSettings(pool=50, time_limit=60)
    a = solve("C5H10O", PEAKS, settings)
    b = solve("C5H10O", PEAKS, settings)
    assert [(c.smiles, c.score) for c in a.candidates] == [(c.smiles, c.score) for c in b.candidates]
    assert a.completeness == b.completeness


def test_worker_count_does_not_change_results():
    peaks = "209.0, 43.7, 29.8, 17.4, 13.7"  # 2-pentanone without DEPT (from memory)
    one = solve("C5H10O", peaks, SolveSettings(pool=20, workers=1))
    two = solve("C5H10O", peaks, SolveSettings(pool=20, workers=2))
    assert [(c.smiles, c.score) for c in one.candidates] == [(c.smiles, c.score) for c in two.candidates]
    assert one.completeness == two.completeness
    assert one.candidates_generated == two.candidates_generated
