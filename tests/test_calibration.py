"""Probability calibration: estimators, shipped parameters, use in solve.

The estimator checks simulate data from the model itself and ask for the
parameters back (consistency of maximum likelihood; common practice, no
source).  The shipped-parameter checks ask that the fitted file says where it
came from and lies in a sane range (common practice, no source).
"""

import json
import math

import numpy as np
import pytest

from elucidate.bench import recalibrate_row
from elucidate.pipeline import SolveSettings, solve
from elucidate.rank.calibration import (
    DEFAULT_CALIBRATION_PATH,
    Calibration,
    better_chance,
    calibrated_scores,
    fit_listed_model,
    fit_score_weights,
    listed_chance,
    listed_probabilities,
    load_calibration,
)


def _simulate_lists(a, b, n_cases, rng):
    cases = []
    for _ in range(n_cases):
        m = int(rng.integers(3, 30))
        f = rng.gamma(2.0, 3.0, size=m)
        r = rng.gamma(1.5, 2.0, size=m)
        u = -(a * f + b * r)
        p = np.exp(u - u.max())
        p /= p.sum()
        cases.append((f, r, int(rng.choice(m, p=p))))
    return cases


def test_score_weights_recovered_from_simulated_lists():
    rng = np.random.default_rng(7)
    a, b = fit_score_weights(_simulate_lists(0.45, 1.3, 1500, rng))
    assert a == pytest.approx(0.45, rel=0.12)
    assert b == pytest.approx(1.3, rel=0.15)


def test_three_score_weights_recovered_from_simulated_lists():
    # the plausibility term as a third feature: fit_score_weights generalises to k parts
    rng = np.random.default_rng(11)
    cases = []
    for _ in range(2000):
        m = int(rng.integers(3, 30))
        f = rng.gamma(2.0, 3.0, size=m)
        r = rng.gamma(1.5, 2.0, size=m)
        q = rng.gamma(1.0, 3.0, size=m) * (rng.random(m) < 0.6)
        u = -(0.5 * f + 0.8 * r + 0.3 * q)
        p = np.exp(u - u.max())
        p /= p.sum()
        cases.append((f, r, q, int(rng.choice(m, p=p))))
    a, b, c = fit_score_weights(cases)
    assert a == pytest.approx(0.5, rel=0.12)
    assert b == pytest.approx(0.8, rel=0.15)
    assert c == pytest.approx(0.3, rel=0.2)
    with pytest.raises(ValueError, match="mix"):
        fit_score_weights(cases[:5] + _simulate_lists(0.4, 1.0, 5, rng))


def test_two_term_bench_rows_stay_readable():
    # rows written before the plausibility term: it counts as 0
    old = {"rank": 2, "heavy_atoms": 8, "status": "complete", "cost_bound": None, "top_cost": None,
           "fit_terms": [[5.0, 1.0], [3.0, 4.0], [9.0, 0.0]]}
    new = dict(old, fit_terms=[t + [0.0] for t in old["fit_terms"]])
    cal = Calibration(fit_weight=1.0, prior_weight=0.1, plausibility_weight=2.0)
    assert recalibrate_row(old, cal) == {**recalibrate_row(new, cal), "fit_terms": old["fit_terms"]}
    assert recalibrate_row(old, cal)["rank"] == 1  # 3.4 < 5.1 < 9.0


def test_score_weights_need_data():
    with pytest.raises(ValueError, match="held-out"):
        fit_score_weights([(np.array([1.0]), np.array([0.0]), 0)])


def test_listed_model_recovered_from_simulated_outcomes():
    rng = np.random.default_rng(3)
    c = np.array([-1.0, 0.8, -0.6])
    feats, ys = [], []
    for _ in range(4000):
        m = float(rng.exponential(3.0))
        h = int(rng.integers(8, 23))
        z = c[0] + c[1] * m + c[2] * h / 10
        feats.append((m, h))
        ys.append(rng.random() < 1 / (1 + math.exp(-z)))
    got = fit_listed_model(feats, ys)
    assert np.allclose(got, c, atol=0.25)


def test_probabilities_sum_to_one_and_follow_scores():
    cal = Calibration(fit_weight=0.5, prior_weight=2.0)
    f, r = [3.0, 1.0, 2.0], [0.0, 2.0, 0.5]
    s = calibrated_scores(f, r, cal)
    p = listed_probabilities(s)
    assert p.sum() == pytest.approx(1.0)
    assert list(np.argsort(-p)) == list(np.argsort(s))
    assert listed_chance("complete", None, 12, Calibration(listed_when_complete=0.97)) == 0.97
    # no listed-answer model: incomplete lists keep q = 1 (plain DP4-style normalisation)
    assert listed_chance("stopped at the time limit", None, 12, cal) == 1.0
    with pytest.raises(ValueError, match="positive"):
        Calibration(fit_weight=0.0)


def test_listed_chance_grows_with_margin():
    cal = Calibration(listed_logit=(-1.0, 0.5, -0.3))
    lo = listed_chance("complete up to cost", 0.0, 15, cal)
    hi = listed_chance("complete up to cost", 6.0, 15, cal)
    assert 0 < lo < hi < 1


def test_missing_file_gives_the_uncalibrated_model(tmp_path):
    cal = load_calibration(tmp_path / "none.json")
    assert (cal.fit_weight, cal.prior_weight, cal.listed_when_complete, cal.listed_logit) == (1.0, 1.0, 1.0, None)


@pytest.mark.skipif(not DEFAULT_CALIBRATION_PATH.is_file(), reason="no shipped calibration file")
def test_shipped_calibration_is_fitted_on_held_out_runs():
    d = json.loads(DEFAULT_CALIBRATION_PATH.read_text())
    assert d["format"] == "elucidate-calibration/1"
    prov = d["provenance"]
    assert "held out" in prov["data"] and prov["cases"] >= 100
    cal = load_calibration()
    # the raw t-likelihood over-states certainty for correlated errors: a < 1 (common practice, no source)
    assert 0.05 < cal.fit_weight <= 1.5 and 0 <= cal.prior_weight < 5
    assert 0.8 < cal.listed_when_complete <= 1


def test_early_stop_with_correlations_uses_its_own_model(tmp_path):
    # the model fitted on runs with 2D correlations is used only when the
    # energy includes them, and falls back to the plain model when absent
    # (definition of the two fields; common practice, no source)
    plain = (0.0, 0.0, 0.0, 0.0, 0.0)  # chance 0.5 whatever the state
    sharp = (-10.0, 0.0, 0.0, 0.0, 0.0)  # chance ~ 0
    cal = Calibration(stop_logit=plain, stop_logit_2d=sharp)
    assert better_chance(1, 2, 2, 15, cal) == pytest.approx(0.5)
    assert better_chance(1, 2, 2, 15, cal, correlations=True) < 1e-4
    alone = Calibration(stop_logit=plain)
    assert better_chance(1, 2, 2, 15, alone, correlations=True) == pytest.approx(0.5)
    assert better_chance(1, 2, 2, 15, Calibration(), correlations=True) is None
    path = tmp_path / "cal.json"
    path.write_text(json.dumps(cal.to_dict()))
    back = load_calibration(path)
    assert back.stop_logit_2d == sharp and back.stop_logit == plain


def test_recalibrated_row_reorders_by_new_weights():
    row = {"rank": 2, "heavy_atoms": 9, "status": "complete", "cost_bound": None, "top_cost": 3.0,
           "fit_terms": [[1.0, 0.5], [2.0, 0.0], [5.0, 0.0]]}
    same = recalibrate_row(row, Calibration())
    assert same["rank"] == 2
    assert same["top_probability"] == pytest.approx(1 / (1 + math.exp(-0.5) + math.exp(-3.5)), abs=1e-4)
    no_prior = recalibrate_row(row, Calibration(prior_weight=0.0))
    assert no_prior["rank"] == 2  # (1, 0) < (2, 0)
    heavy_prior = recalibrate_row(row, Calibration(prior_weight=2.5))  # 2.25 > 2.0
    assert heavy_prior["rank"] == 1


def test_solve_reports_the_unlisted_share():
    # ethyl acetate lines (CDCl3, Fulmer et al., Organometallics 2010, 29, 2176; from memory)
    res = solve("C4H8O2", "171.1 C, 60.5 CH2, 21.0 CH3, 14.2 CH3", SolveSettings(time_limit=20, top=100, keep=100))
    assert res.complete
    total = sum(c.probability for c in res.candidates) + res.unlisted_probability
    assert total == pytest.approx(1.0, abs=1e-6)
    assert res.unlisted_probability == pytest.approx(1 - load_calibration().listed_when_complete, abs=1e-9)
    assert res.candidates[0].smiles == "CCOC(C)=O"
    # constrained candidates best first; near alternatives (if any) follow them, unrated
    constrained = [c for c in res.candidates if not c.set_aside]
    scores = [c.score for c in constrained]
    assert scores == sorted(scores)
    assert res.candidates[:len(constrained)] == tuple(constrained)
    assert all(c.probability == 0.0 for c in res.candidates[len(constrained):])


def test_bench_recalibration_matches_a_native_solve(monkeypatch):
    # 2-pentanone lines without multiplicities (typical CDCl3 values, from
    # memory); the search is complete, so only the calibration differs
    # between the two solves
    import elucidate.pipeline as pipeline

    peaks = "209.0, 45.7, 29.9, 17.4, 13.8"
    settings = SolveSettings(time_limit=20, top=200, keep=200)
    monkeypatch.setattr(pipeline, "load_calibration", lambda: Calibration())
    plain = solve("C5H10O", peaks, settings)
    other = Calibration(fit_weight=0.4, prior_weight=3.0)
    monkeypatch.setattr(pipeline, "load_calibration", lambda: other)
    native = solve("C5H10O", peaks, settings)
    assert plain.complete and native.complete
    terms = [[c.fit_cost, c.prior, c.plausibility] for c in plain.candidates]
    w = Calibration().plausibility_weight
    assert all(c.score == pytest.approx(c.fit_cost + c.prior + w * c.plausibility, abs=2e-4)
               for c in plain.candidates)
    assert any(c.plausibility > 0 for c in plain.candidates)
    native_rank = {c.smiles: i + 1 for i, c in enumerate(native.candidates)}
    # the weights matter here: the two orders differ within the first 15
    assert [c.smiles for c in plain.candidates[:15]] != [c.smiles for c in native.candidates[:15]]
    for k, c in enumerate(plain.candidates[:15]):
        row = {"rank": k + 1, "heavy_atoms": 6, "status": "complete", "cost_bound": None,
               "top_cost": None, "fit_terms": terms}
        again = recalibrate_row(row, other)
        assert again["rank"] == native_rank[c.smiles]
        assert again["top_probability"] == pytest.approx(native.candidates[0].probability, abs=1e-4)


def test_sampled_results_without_a_sampled_model_are_not_called_calibrated():
    # common practice, no source: a number may only be called calibrated when
    # a model fitted for that kind of result produced it
    from elucidate.rank.calibration import Calibration, listed_basis
    from elucidate.report.text import unlisted_sentence

    bare = Calibration(fit_weight=1.0, prior_weight=1.0, listed_when_complete=0.97,
                       listed_logit=(3.5, 0.8, -3.5))
    assert "not yet calibrated" in listed_basis("sampled", bare)
    assert listed_basis("complete up to cost", bare).startswith("calibrated")
    fitted = Calibration(fit_weight=1.0, prior_weight=1.0, listed_when_complete=0.97,
                         listed_logit=(3.5, 0.8, -3.5), sampled_logit=(1.0, 0.0, 0.0, 0.0))
    assert listed_basis("sampled", fitted).startswith("calibrated")
    assert "not yet calibrated" in unlisted_sentence(0.9, listed_basis("sampled", bare))
