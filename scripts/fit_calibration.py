"""Fit the probability calibration (elucidate/rank/calibration.py) on held-out runs.

Steps (DEVELOPERS.md, "Refit the probability calibration"):

1. ``python scripts/calibration_split.py ../shared/data/train_spectra.jsonl.gz OUT``
   holds out one constitution in 20 and writes held-out cases;
2. rebuild the tables without them in a scratch copy of the package and run
   ``elucidate bench OUT/heldout_run.jsonl --time-limit 60 -o OUT/heldout_rows.jsonl``
   with that copy first on PYTHONPATH (the predictor must not have seen the
   held-out compounds, or the fit is over-confident);
3. ``python scripts/fit_calibration.py fit OUT/heldout_rows.jsonl`` writes
   elucidate/data/calibration.json;
4. ``python scripts/fit_calibration.py apply ROWS.jsonl ...`` shows how bench
   rows rank under the shipped calibration (measurement only; never fit on
   bench rows).
"""

import datetime
import json
import sys
from collections import Counter
from pathlib import Path

import click
import numpy as np

from elucidate.bench import format_bench_table, recalibrate_row
from elucidate.rank.calibration import (
    DEFAULT_CALIBRATION_PATH,
    PROVISIONAL_PLAUSIBILITY_WEIGHT,
    Calibration,
    better_chance,
    fit_listed_model,
    fit_logistic,
    fit_score_weights,
    sampling_features,
    stop_features,
    load_calibration,
)
from elucidate.search.sampling import STOP_BELOW


def _rows(paths):
    rows = []
    for p in paths:
        with open(p, encoding="utf-8") as fh:
            rows.extend(json.loads(line) for line in fh if line.strip())
    return rows


def _margin(row):
    if row.get("cost_bound") is None or row.get("top_cost") is None:
        return 0.0
    return row["cost_bound"] - row["top_cost"]


def _stop_data(data):
    """Per sampling round of runs that went to the time limit: the state's
    features and whether a better structure was found later in the run."""
    xs, ys = [], []
    for r in data:
        trace = r.get("trace") or []
        if not trace or r.get("ended") not in (None, "time limit"):
            continue
        final = trace[-1][1]
        for k, t in enumerate(trace[:-1]):
            xs.append(stop_features(t[3], t[5], r["heavy_atoms"], k + 1))
            ys.append(final < t[1] - 1e-6)
    return xs, ys


def _fit(data, time_limit, plausibility_weight=None, mode="mult"):
    """Calibration fitted on bench rows that carry fit_terms.

    Rows of this version carry three terms per candidate (assignment cost,
    rarity prior, plausibility) and all three weights are fitted; rows
    written before the plausibility term carry two, and then the
    plausibility weight keeps its provisional value (said in the provenance).
    """
    n_terms = min(len(t) for r in data for t in r["fit_terms"])
    k = 3 if n_terms >= 3 else 2
    found = [tuple(np.array([t[i] for t in r["fit_terms"]]) for i in range(k)) + (r["rank"] - 1,)
             for r in data if r.get("rank") is not None]
    fixed = {2: plausibility_weight} if plausibility_weight is not None and k == 3 else None
    weights = fit_score_weights(found, fixed=fixed)
    a, b = weights[:2]
    c = weights[2] if k == 3 else PROVISIONAL_PLAUSIBILITY_WEIGHT
    complete = [r for r in data if r.get("status") == "complete"]
    n_found_complete = sum(r.get("rank") is not None for r in complete)
    listed_complete = (n_found_complete + 1) / (len(complete) + 2)
    rest = [r for r in data if r.get("status") not in ("complete", "sampled")]
    logit = None
    if len(rest) >= 10:
        logit = fit_listed_model([(_margin(r), r["heavy_atoms"]) for r in rest],
                                 [r.get("rank") is not None for r in rest])
    sampled = [r for r in data if r.get("status") == "sampled" and r.get("trace")]
    sampled_logit = None
    if len(sampled) >= 10:
        sampled_logit = fit_logistic(
            [sampling_features(r["heavy_atoms"], r["trace"][-1][3], r["trace"][-1][5]) for r in sampled],
            [r.get("rank") is not None for r in sampled])
    stop_x, stop_y = _stop_data(data)
    stop_logit = fit_logistic(stop_x, stop_y) if len(stop_x) >= 20 and 0 < sum(stop_y) < len(stop_y) else None
    bands = Counter(f"{r['heavy_atoms']}" for r in data)
    cal = Calibration(
        fit_weight=round(a, 4), prior_weight=round(b, 4), plausibility_weight=round(c, 4),
        listed_when_complete=round(listed_complete, 4),
        listed_logit=tuple(round(x, 4) for x in logit) if logit else None,
        sampled_logit=tuple(round(x, 4) for x in sampled_logit) if sampled_logit else None,
        stop_logit=tuple(round(x, 4) for x in stop_logit) if stop_logit else None,
        provenance={
            "fitted": datetime.date.today().isoformat(),
            "method": "conditional logit weights + logistic listed-answer model (rank/calibration.py)",
            "plausibility_weight": ("fitted" if fixed is None else f"held at {plausibility_weight} (given)")
            if k == 3 else "provisional (rows carry no plausibility term)",
            "data": f"elucidation runs ({mode} mode) over training constitutions held out from a rebuilt "
                    "shift table (one in 20 by hash of the canonical SMILES); open nmrshiftdb2 data "
                    "(Steinbeck, Krause, Kuhn, J. Chem. Inf. Comput. Sci. 2003, 43, 1733)",
            "time_limit_s": time_limit,
            "cases": len(data),
            "answer_listed": len(found),
            "complete_searches": len(complete),
            "complete_with_answer": n_found_complete,
            "incomplete_searches": len(rest),
            "incomplete_with_answer": sum(r.get("rank") is not None for r in rest),
            "sampled_searches": len(sampled),
            "sampled_with_answer": sum(r.get("rank") is not None for r in sampled),
            "sampling_rounds": len(stop_x),
            "rounds_improved_later": int(sum(stop_y)),
            "heavy_atoms": dict(sorted(bands.items(), key=lambda kv: int(kv[0]))),
        },
    )
    return cal


@click.group()
def main():
    """Fit or apply the probability calibration."""


@main.command()
@click.argument("rows", nargs=-1, required=True, type=click.Path(exists=True, dir_okay=False))
@click.option("--out", default=str(DEFAULT_CALIBRATION_PATH), show_default=True)
@click.option("--time-limit", default=60.0, show_default=True, help="Time limit the rows were run with.")
@click.option("--sampling-only", is_flag=True,
              help="Keep the score weights and the cost-bounded listed-answer model of the shipped calibration "
                   "(the ones the runs were made with) and fit only listed_when_complete, the sampled "
                   "listed-answer model and the early-stop model (how the 2026-12-03 file was made; DEVELOPERS.md).")
@click.option("--keep-weights", is_flag=True,
              help="Keep the three score weights of the shipped calibration (the runs were ranked with them) and "
                   "fit every listed-answer model and the early-stop model on these runs (runs made after "
                   "`heldout-start`, which turns both early stops off).")
@click.option("--plausibility-weight", type=float, default=None,
              help="Hold the plausibility weight at this value and fit the other two score weights with it "
                   "(the list's plausible company is a product choice: DEVELOPERS.md).")
@click.option("--mode", type=click.Choice(["mult", "plain"]), default="mult", show_default=True,
              help="Mode the held-out runs were made in, recorded in the provenance (a fit on 13C-only "
                   "runs is a measurement: no plain-mode calibration ships; docs/benchmark.md).")
def fit(rows, out, time_limit, sampling_only, keep_weights, plausibility_weight, mode):
    """Fit weights and the listed-answer model on held-out bench rows."""
    import dataclasses

    if sampling_only and keep_weights:
        raise click.UsageError("--sampling-only and --keep-weights exclude each other; give one")
    data = [r for r in _rows(rows) if r.get("fit_terms")]
    if not data:
        raise click.UsageError("no row carries fit_terms; run `elucidate bench ... -o ROWS` with this version")
    cal = _fit(data, time_limit, plausibility_weight, mode)
    if keep_weights:
        kept = load_calibration()
        provenance = dict(cal.provenance)
        provenance["method"] = (
            f"score weights kept from the fit of {kept.provenance.get('weights_fitted') or kept.provenance.get('fitted')} "
            "(the held-out runs were ranked with them; refit gave "
            f"{cal.fit_weight} / {cal.prior_weight} / plausibility {cal.plausibility_weight}); "
            "listed_when_complete, the cost-bounded and the sampled listed-answer models and the early-stop model "
            "fitted on these runs, made with both early stops off (logistic models, rank/calibration.py)")
        provenance["plausibility_weight"] = f"kept ({kept.plausibility_weight}; refit gave {cal.plausibility_weight})"
        provenance["weights_fitted"] = kept.provenance.get("weights_fitted") or kept.provenance.get("fitted")
        cal = dataclasses.replace(cal, fit_weight=kept.fit_weight, prior_weight=kept.prior_weight,
                                  plausibility_weight=kept.plausibility_weight, provenance=provenance,
                                  stop_logit_2d=kept.stop_logit_2d)
    if sampling_only:
        kept = load_calibration()
        provenance = dict(cal.provenance)
        provenance["method"] = (
            "score weights and the cost-bounded listed-answer model (listed_logit) kept from the fit of "
            f"{kept.provenance.get('fitted', 'unknown date')} (the held-out runs were made with them); "
            "listed_when_complete, the sampled listed-answer model and the early-stop model fitted on these "
            "runs (logistic models, rank/calibration.py)")
        provenance["plausibility_weight"] = f"kept ({kept.plausibility_weight}; refit gave {cal.plausibility_weight})"
        provenance["weights_fitted"] = kept.provenance.get("fitted")
        cal = dataclasses.replace(kept, listed_when_complete=cal.listed_when_complete,
                                  sampled_logit=cal.sampled_logit, stop_logit=cal.stop_logit, provenance=provenance)
    Path(out).write_text(json.dumps(cal.to_dict(), indent=1) + "\n", encoding="utf-8")
    click.echo(json.dumps(cal.to_dict(), indent=1))


@main.command("heldout-start")
@click.argument("out", type=click.Path(dir_okay=False))
def heldout_start(out):
    """Write the shipped calibration without its early-stop models to OUT (for held-out runs that
    must go to the time limit).

    Both early stops go: the annealing's (``stop_logit``) and the cost-bounded search's confident
    stop, which rests on the listed-answer model (``listed_logit``). Runs cut short by the model
    being refitted leave it nothing to learn from: after the 2026-12-03 fit, made on runs that the
    old model had stopped at its own margin, the margin slope fell from 0.85 to 0.03. The score
    weights stay (they decide the ranking the runs record)."""
    import dataclasses

    cal = dataclasses.replace(load_calibration(), stop_logit=None, listed_logit=None, stop_logit_2d=None)
    Path(out).write_text(json.dumps(cal.to_dict(), indent=1) + "\n", encoding="utf-8")
    click.echo(f"wrote {out}")


def _simulate_stop(rows, model, below):
    """Replay each run's rounds under an early-stop model: (stopped at
    round k or never, a better structure came later, seconds at the stop)."""
    out = []
    for r in rows:
        trace = r.get("trace") or []
        if not trace:
            continue
        final = trace[-1][1]
        stop = None
        for k, t in enumerate(trace):
            if better_chance(t[3], t[5], k + 1, r["heavy_atoms"], Calibration(stop_logit=model)) < below:
                stop = k
                break
        if stop is None:
            out.append((None, False, r["elapsed_s"]))
        else:
            out.append((stop, final < trace[stop][1] - 1e-6, trace[stop][0]))
    return out


@main.command("fit-stop-2d")
@click.argument("rows", nargs=-1, required=True, type=click.Path(exists=True, dir_okay=False))
@click.option("--out", default=str(DEFAULT_CALIBRATION_PATH), show_default=True,
              help="Calibration file to write; its other parameters are kept from the shipped one.")
@click.option("--folds", default=5, show_default=True, help="Folds (by run) of the out-of-fold replay.")
def fit_stop_2d(rows, out, folds):
    """Fit the early-stop model used with 2D correlations (stop_logit_2d) on held-out runs made with
    correlations and both early stops off (`heldout-start`, then `elucidate bench ... --correlations
    synthetic`), keep everything else of the shipped calibration, and replay the runs out of fold:
    how often the stop would have come before a better structure, and the median time at the stop."""
    import dataclasses
    import statistics

    data = [r for r in _rows(rows) if r.get("correlation_rows") and r.get("trace")]
    if not data:
        raise click.UsageError("no row was run with correlations and has a sampling trace; run "
                               "`elucidate bench ... --correlations synthetic -o ROWS` after `heldout-start`")
    if any(r.get("ended") not in (None, "time limit") for r in data):
        raise click.UsageError("some runs stopped early; make them after `heldout-start` (both early stops off)")
    x, y = _stop_data(data)
    if len(x) < 20 or not 0 < sum(y) < len(y):
        raise click.UsageError(f"{len(x)} rounds, {sum(y)} followed by a better structure: too few to fit; run more cases")
    replay = []
    for k in range(folds):
        train = [r for i, r in enumerate(data) if i % folds != k]
        test = [r for i, r in enumerate(data) if i % folds == k]
        tx, ty = _stop_data(train)
        replay += _simulate_stop(test, fit_logistic(tx, ty), STOP_BELOW)
    model = tuple(round(float(v), 4) for v in fit_logistic(x, y))
    lost = sum(1 for _k, worse, _t in replay if worse)
    stopped = sum(1 for k, _w, _t in replay if k is not None)
    click.echo(f"{len(data)} runs, {len(x)} rounds ({sum(y)} followed by a better structure); out of fold: "
               f"{stopped} runs stopped early, {lost} of them before a better structure; median time at the stop "
               f"or end {statistics.median(t for _k, _w, t in replay):.1f} s (runs to the limit: "
               f"{statistics.median(r['elapsed_s'] for r in data):.1f} s)")
    kept = load_calibration()
    provenance = dict(kept.provenance)
    provenance["stop_logit_2d"] = (
        f"fitted {datetime.date.today().isoformat()} on {len(data)} held-out runs with synthetic 2D correlations "
        f"(HSQC + HMBC), both early stops off; out-of-fold replay: {stopped} stopped early, {lost} before a "
        "better structure")
    cal = dataclasses.replace(kept, stop_logit_2d=model, provenance=provenance)
    Path(out).write_text(json.dumps(cal.to_dict(), indent=1) + "\n", encoding="utf-8")
    click.echo(f"stop_logit_2d = {list(model)} written to {out}")


@main.command()
@click.argument("rows", nargs=-1, required=True, type=click.Path(exists=True, dir_okay=False))
@click.option("--calibration", "path", default=None, help="Calibration file (default: the shipped one).")
@click.option("--mode", default="mult", show_default=True)
def apply(rows, path, mode):
    """Per-band table and calibration table of rows under a calibration."""
    cal = load_calibration(path)
    data = [recalibrate_row(r, cal) for r in _rows(rows)]
    click.echo(format_bench_table(data, mode=mode))


@main.command()
@click.argument("rows", nargs=-1, required=True, type=click.Path(exists=True, dir_okay=False))
@click.option("--folds", default=5, show_default=True)
@click.option("--plausibility-weight", type=float, default=None,
              help="Hold the plausibility weight at this value in every fold (as `fit` does).")
def crossval(rows, folds, plausibility_weight):
    """Out-of-fold check: fit on all folds but one, apply to that one."""
    data = [r for r in _rows(rows) if r.get("fit_terms")]
    out = []
    for k in range(folds):
        train = [r for i, r in enumerate(data) if i % folds != k]
        test = [r for i, r in enumerate(data) if i % folds == k]
        out += [recalibrate_row(r, _fit(train, 0.0, plausibility_weight)) for r in test]
    click.echo(format_bench_table(out, mode="mult"))


if __name__ == "__main__":
    sys.exit(main())
