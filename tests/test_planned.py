"""Plan-by-plan search: structures in increasing approximate cost, with a proven bound.

Peaks: 2-pentanone and butan-2-ol style data in CDCl3, from memory of standard
13C tables (2-pentanone: 209 C, 44 CH2, 30 CH3, 17 CH2, 14 CH3).  The checks
compare the plan search with the plain exhaustive generator under the same
constraints: every structure costing less than the stated bound must be
listed (the bound is a proof), and each listed structure's cost is its true
approximate cost.
"""

import math

import numpy as np
import pytest

import elucidate.search.scheduler as scheduler
from elucidate.formula import parse_formula
from elucidate.generate import enumerate_isomers
from elucidate.generate.atomtypes import AtomType, type_distributions
from elucidate.generate.planned import PlanCosts, PlanStream, assemble_plan, search_plans
from elucidate.pipeline import SolveSettings, _constraints, prepare_peaks, solve
from elucidate.rank.cover import cover_cost

PENTANONE = "209.0 C, 43.7 CH2, 29.8 CH3, 17.4 CH2, 13.7 CH3"
PENTANONE_PLAIN = "209.0, 43.7, 29.8, 17.4, 13.7"


def _setup(formula, peaks):
    f = parse_formula(formula)
    settings = SolveSettings()
    pk = prepare_peaks(f, peaks, None)
    cons = _constraints(f, pk, settings)
    rule = cons.row_check_factory
    costs = PlanCosts(rule.line_costs, rule.atom_rarity, [p.hydrogens for p in pk.peaks])
    dists = list(type_distributions(f, dict(settings.valences), accept=cons.accept))
    return f, settings, cons, rule, costs, dists


def _all_costs(f, settings, cons, rule):
    out = {}
    for s in enumerate_isomers(f, valences=dict(settings.valences), filters=cons.filters,
                               accept_types=cons.accept, row_check_factory=rule):
        out[s.smiles] = rule.structure_cost(s.mol)
    return out


@pytest.mark.parametrize("formula,peaks,keep", [("C5H10O", PENTANONE, 1),
                                                ("C5H10O", PENTANONE_PLAIN, 8),
                                                ("C4H10O", "69.3, 32.1, 22.9, 10.0", 2)])
def test_nothing_below_the_bound_is_missing(formula, peaks, keep):
    f, settings, cons, rule, costs, dists = _setup(formula, peaks)
    out = search_plans(dists, costs, keep=keep, accept_mol=lambda m: all(fl.keep(m) for fl in cons.filters))
    assert len(out.found) >= keep
    assert not out.exhausted and math.isfinite(out.lower)
    truth = _all_costs(f, settings, cons, rule)
    below = [s for s, c in truth.items() if c < out.lower - 1e-6]
    assert below, "the bound should admit some structures"
    missing = [s for s in below if s not in out.found]
    assert not missing, (out.lower, missing)
    for smi, (cost, _mol) in out.found.items():  # listed costs are the structures' own
        assert cost == pytest.approx(truth[smi], abs=1e-6)


def test_run_to_the_end_lists_the_whole_space():
    f, settings, cons, rule, costs, dists = _setup("C5H10O", PENTANONE)
    out = search_plans(dists, costs, keep=10_000, accept_mol=lambda m: all(fl.keep(m) for fl in cons.filters))
    assert out.exhausted and out.lower == math.inf
    assert set(out.found) == set(_all_costs(f, settings, cons, rule))


def test_stream_returns_plans_cheapest_first_and_bounds_the_rest():
    _f, _s, _c, _r, costs, dists = _setup("C5H10O", PENTANONE_PLAIN)
    longest = 0
    for dist in dists:
        stream = PlanStream(dist, costs)
        got = []
        while (plan := stream.next()) is not None:
            assert stream.lower <= plan.cost + 1e-9
            got.append(plan.cost)
        assert got == sorted(got)
        assert stream.exhausted
        longest = max(longest, len(got))
    assert longest >= 2


def test_assembly_gives_exactly_the_planned_environments():
    # propane: the CH2 bonded to two CH3
    ch3, ch2 = AtomType("C", 4, 3), AtomType("C", 4, 2)
    _f, _s, _c, _r, costs, _d = _setup("C3H8", "16.0 CH3, 16.3 CH2")
    stream = PlanStream((ch2, ch3, ch3), costs)
    plan = stream.next()
    mats = [[row[:] for row in m] for _t, m in assemble_plan(plan)]
    assert len(mats) == 1 and sorted(map(sum, mats[0])) == [1, 1, 2]


def test_cover_cost_needs_every_line():
    # two carbons both cheapest under line 0: one must move to line 1
    rows = [np.array([0.0, 2.0]), np.array([0.5, 1.0])]
    assert cover_cost(rows, 2) == pytest.approx(0.0 + 1.0)
    assert cover_cost([np.array([0.0, np.inf])], 2) == math.inf


def test_solve_falls_back_to_plans_and_keeps_its_promise(monkeypatch):
    # no time for the orderly search: the plan search alone must prove the bound
    monkeypatch.setattr(scheduler, "ORDERLY_SHARE", 0.0)
    settings = SolveSettings(pool=4, top=100, keep=100, time_limit=60)
    result = solve("C5H10O", PENTANONE_PLAIN, settings)
    status, bound = result.completeness
    assert status == "complete up to cost", result.completeness
    assert any("environment plans" in row[0] for row in result.constraint_log)
    f, settings2, cons, rule, _costs, _d = _setup("C5H10O", PENTANONE_PLAIN)
    truth = _all_costs(f, settings2, cons, rule)
    listed = {c.smiles for c in result.candidates}
    below = [s for s, c in truth.items() if c < bound - 1e-6]
    assert below and not [s for s in below if s not in listed]
    again = solve("C5H10O", PENTANONE_PLAIN, SolveSettings(pool=4, top=100, keep=100, time_limit=60, workers=1))
    assert [c.smiles for c in again.candidates] == [c.smiles for c in result.candidates]


def test_two_halves_share_a_distribution_exactly():
    _f, _s, _c, _r, costs, dists = _setup("C5H10O", PENTANONE_PLAIN)
    checked = 0
    for dist in dists:
        whole = []
        stream = PlanStream(dist, costs)
        while (plan := stream.next()) is not None:
            whole.append(plan)
        if len(whole) <= 3:
            continue
        halves = []
        for half in (0, 1):
            part = PlanStream(dist, costs)
            got = list(part.split(half, warmup=2))
            while (plan := part.next()) is not None:
                got.append(plan)
            halves.append(got)
        keys = [sorted(p.sort_key() for p in h) for h in halves]
        assert keys[0] and keys[1]
        assert sorted(keys[0] + keys[1]) == sorted(p.sort_key() for p in whole)
        checked += 1
    assert checked


def test_distributions_start_only_when_their_floor_comes_up():
    _f, _s, cons, _r, costs, dists = _setup("C5H10O", PENTANONE_PLAIN)
    assert len(dists) > 3
    out = search_plans(dists, costs, keep=1, accept_mol=lambda m: all(fl.keep(m) for fl in cons.filters))
    assert out.found and out.solves < len(dists)
