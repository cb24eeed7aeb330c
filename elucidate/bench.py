"""Benchmark the whole elucidation job on a file of cases.

Case format (JSON lines), as documented with the open reference data::

    {"id": "...", "formula": "C6H3BrF2", "solvent": null,
     "peaks": [{"shift": 98.1, "mult": "C", "count": 1}, ...],
     "answer": "Fc1cc(F)cc(Br)c1"}

Modes: ``mult`` keeps multiplicities and drops counts (the usual lab
situation), ``plain`` drops both (13C only), ``count`` keeps both (an easier
upper bound).  A case is *found* when the answer's constitution is among the
ranked candidates; ranks compare stereo-free canonical SMILES.
"""

from __future__ import annotations

import math
import statistics
from typing import Callable

import numpy as np
from rdkit import Chem

from .cases import BANDS, band_of, read_cases
from .constraints.correlations import link_correlations
from .errors import InputError
from .formula import parse_formula
from .rank.calibration import calibrated_scores, listed_chance, listed_probabilities
from .pipeline import SolveSettings, approximate_cost, explain_constraints, prepare_peaks, solve
from .spectrum.peaks import peaks_from_records
from .synthetic_correlations import synthetic_correlations

__all__ = ["read_cases", "run_bench", "recalibrate_row", "format_bench_table", "calibration_table",
           "unlisted_check", "BANDS", "CORRELATION_MODES"]

#: 2D correlations given to the bench cases: none, or synthetic ones made from the answer.
CORRELATION_MODES = ("none", "synthetic", "synthetic+cosy")

def _canon(smiles: str) -> str | None:
    mol = Chem.MolFromSmiles(smiles)
    return None if mol is None else Chem.MolToSmiles(mol, isomericSmiles=False)


def _records_for_mode(peaks: list[dict], mode: str) -> list[dict]:
    out = []
    for p in peaks:
        r = {"shift": p["shift"]}
        if mode in ("mult", "count"):
            r["mult"] = p.get("mult")
        if mode == "count":
            r["count"] = p.get("count")
        out.append(r)
    return out


def run_bench(
    path: str,
    *,
    mode: str = "mult",
    limit: int | None = None,
    heavy: tuple[int, int] | None = None,
    every: int = 1,
    time_limit: float = 60.0,
    keep: int = 100,
    search: str = "auto",
    correlations: str = "none",
    rerank: str = "table",
    progress: Callable[[str], None] | None = None,
    on_row: Callable[[dict], None] | None = None,
) -> list[dict]:
    """Solve every case; one result row per case (``on_row`` gets each as it is done).

    ``correlations``: ``"none"``, or ``"synthetic"`` (HSQC + HMBC) or
    ``"synthetic+cosy"`` made from each answer
    (:mod:`elucidate.synthetic_correlations`; synthetic data, not measured).
    """
    if mode not in ("mult", "plain", "count"):
        raise InputError(f"mode {mode!r} unknown; use mult, plain or count")
    if correlations not in CORRELATION_MODES:
        raise InputError(f"correlations {correlations!r} unknown; use one of {', '.join(CORRELATION_MODES)}")
    rows = []
    cases = read_cases(path, limit, heavy, every)
    settings = SolveSettings(time_limit=time_limit, top=keep, keep=keep, search=search, rerank=rerank)
    for i, case in enumerate(cases, 1):
        formula = parse_formula(case["formula"])
        answer = _canon(case["answer"])
        peaks = peaks_from_records(_records_for_mode(case["peaks"], mode))
        row = {"id": case["id"], "formula": formula.hill, "heavy_atoms": formula.heavy_atoms, "answer": answer,
               "rerank": rerank}
        answer_mol = Chem.MolFromSmiles(case["answer"])
        if answer_mol is not None:
            verdicts = explain_constraints(answer_mol, formula, peaks, settings)
            row["answer_failed_constraints"] = [name for name, ok in verdicts if not ok]
        table = evidence = None
        if correlations != "none" and answer_mol is not None:
            lines = prepare_peaks(formula, peaks, None).peaks
            table = synthetic_correlations(answer_mol, lines, seed=case["id"], cosy=correlations == "synthetic+cosy")
            row["correlation_rows"] = len(table) if table is not None else 0
        try:
            if table is not None:  # tied to the lines once, for the solve and the answer's own score
                evidence = link_correlations(table, lines, h_tolerance=settings.match_1h,
                                             c_tolerance=settings.match_13c)
            result = solve(formula, peaks, settings, correlations=evidence)
        except InputError as exc:
            row.update(error=str(exc), rank=None, complete=False, elapsed_s=None,
                       candidates=0, top_probability=None)
        else:
            # near alternatives (which set a stated assumption aside) are listed after the
            # constrained candidates; the rank counts the constrained list only
            constrained = [c for c in result.candidates if not c.set_aside]
            ranks = [c.smiles for c in constrained]
            rank = ranks.index(answer) + 1 if answer in ranks else None
            near = [c.smiles for c in result.candidates if c.set_aside]
            status, bound = result.completeness
            cost = approximate_cost(answer_mol, formula, peaks, settings) if answer_mol is not None else None
            row.update(
                rank=rank,
                complete=result.complete,
                status=status,
                cost_bound=bound,
                answer_cost=None if cost is None or math.isinf(cost) else round(cost, 3),
                elapsed_s=round(result.elapsed_s, 3),
                candidates=result.candidates_generated,
                listed=len(result.candidates),
                near_alternatives=len(near),
                answer_near_alternative=answer in near,
                top_probability=round(result.candidates[0].probability, 4) if result.candidates else None,
                unlisted_probability=round(result.unlisted_probability, 4),
                # per listed candidate: (assignment cost, rarity prior,
                # plausibility), for refitting the probability calibration
                # (rank/calibration.py)
                fit_terms=[[c.fit_cost, c.prior, c.plausibility] for c in constrained],
                # the constrained candidates in the same order, for motif checks (listing_check)
                listed_smiles=ranks,
                top_cost=_top_cost(result, formula, peaks, settings),
                # sampling rounds (see SolveResult.search_trace), for the early-stop model
                trace=[list(t) for t in result.search_trace],
                ended=result.search_ended,
                answer_energy=_answer_energy(answer_mol, formula, peaks, settings, evidence),
            )
        rows.append(row)
        if on_row is not None:
            on_row(row)
        if progress:
            progress(f"[{i}/{len(cases)}] {row['id']} {row['formula']}: rank {row['rank']} "
                     f"({row['elapsed_s']} s)")
    return rows


def row_scores(row: dict, calibration) -> np.ndarray:
    """Calibrated scores of a bench row's listed candidates from their
    ``fit_terms`` (rows written before the plausibility term count it as 0)."""
    terms = row["fit_terms"]
    return calibrated_scores([t[0] for t in terms], [t[1] for t in terms], calibration,
                             [t[2] if len(t) > 2 else 0.0 for t in terms])


def recalibrate_row(row: dict, calibration) -> dict:
    """A bench row as another calibration would have ranked it.

    The search does not depend on the calibration, only the final order and
    the probabilities do; they are recomputed from the row's ``fit_terms``
    (assignment cost, prior and plausibility of every listed candidate;
    rows written before the plausibility term carry two terms and count it
    as 0), ``status``, ``cost_bound`` and ``top_cost``.  The answer's new rank counts the
    candidates with a strictly lower calibrated score (ties go to the answer).
    """
    if not row.get("fit_terms"):
        return dict(row)
    scores = row_scores(row, calibration)
    probs = listed_probabilities(scores)
    best = int(np.argmin(scores))
    out = dict(row)
    if row.get("rank") is not None:
        k = row["rank"] - 1
        out["rank"] = 1 + int(np.sum(scores < scores[k]))
    margin = None
    if row.get("cost_bound") is not None and row.get("top_cost") is not None:
        # top_cost belongs to the row's own best; recomputing it for a new best needs the solve
        margin = row["cost_bound"] - row["top_cost"]
    trace = row.get("trace") or []
    sampling = (trace[-1][3], trace[-1][5]) if trace and len(trace[-1]) > 5 else None
    listed = listed_chance(row.get("status", ""), margin, row["heavy_atoms"], calibration, sampling)
    out["top_probability"] = round(listed * float(probs[best]), 4)
    out["unlisted_probability"] = round(1.0 - listed, 4)
    return out


def _answer_energy(answer_mol, formula, peaks, settings, evidence=None) -> list | None:
    """The answer's own (assignment cost, prior): where it would rank, and
    whether a miss was the search's fault (a better-scoring answer unfound)
    or the ranking's."""
    if answer_mol is None:
        return None
    from .pipeline import _constraints, _structure_prior
    from .rank.scoring import score_structure

    prepared = prepare_peaks(formula, peaks, settings.solvent)
    rule = _constraints(formula, prepared, settings).rule
    smiles = Chem.MolToSmiles(answer_mol, isomericSmiles=False)
    scored = score_structure(smiles, answer_mol, prepared.peaks, _structure_prior(rule, settings),
                             evidence=evidence)
    if scored is None:
        return None
    return [round(scored.fit_cost, 4), round(scored.prior, 4), round(scored.plausibility, 4)]


def _top_cost(result, formula, peaks, settings) -> float | None:
    """Approximate cost of the best listed candidate (None without one)."""
    if not result.candidates:
        return None
    mol = Chem.MolFromSmiles(result.candidates[0].smiles)
    cost = approximate_cost(mol, formula, peaks, settings) if mol is not None else None
    return None if cost is None or math.isinf(cost) else round(cost, 3)


def _band(n: int) -> str:
    band = band_of(n)
    return f"{band[0]}-{band[1]}" if band else f"{n}"


def format_bench_table(rows: list[dict], *, mode: str) -> str:
    """Top-k rates, completeness and times per heavy-atom band."""
    groups: dict[str, list[dict]] = {}
    for r in rows:
        groups.setdefault(_band(r["heavy_atoms"]), []).append(r)
    order = sorted(groups, key=lambda b: int(b.split("-")[0]))
    lines = [f"mode {mode}: {len(rows)} cases",
             f"{'band':>6} {'n':>4} {'top1':>6} {'top3':>6} {'top5':>6} {'top10':>6} {'found':>6} "
             f"{'compl':>6} {'proof':>6} {'cover':>6} {'surv':>6} {'t_med':>7} {'t_p90':>7}"]

    def stats(rs):
        n = len(rs)
        def rate(k):
            return 100.0 * sum(1 for r in rs if r["rank"] is not None and r["rank"] <= k) / n
        found = 100.0 * sum(1 for r in rs if r["rank"] is not None) / n
        comp = 100.0 * sum(1 for r in rs if r["complete"]) / n
        surv = 100.0 * sum(1 for r in rs if not r.get("answer_failed_constraints")) / n
        # ended with a proof (complete, or complete up to a cost) and the answer listed
        proof = 100.0 * sum(1 for r in rs if r.get("status", "complete" if r["complete"] else "")
                            in ("complete", "complete up to cost") and r["rank"] is not None) / n
        # where a bound was stated: the answer's approximate cost lies within it
        bounded = [r for r in rs if r.get("status") == "complete up to cost" and r.get("answer_cost") is not None]
        cover = (f"{100.0 * sum(1 for r in bounded if r['answer_cost'] <= r['cost_bound']) / len(bounded):>5.1f}%"
                 if bounded else f"{'-':>6}")
        times = sorted(r["elapsed_s"] for r in rs if r["elapsed_s"] is not None) or [float("nan")]
        med = statistics.median(times)
        p90 = times[min(len(times) - 1, int(round(0.9 * (len(times) - 1))))]
        return (f"{n:>4} {rate(1):>5.1f}% {rate(3):>5.1f}% {rate(5):>5.1f}% {rate(10):>5.1f}% "
                f"{found:>5.1f}% {comp:>5.1f}% {proof:>5.1f}% {cover} {surv:>5.1f}% {med:>6.1f}s {p90:>6.1f}s")

    for b in order:
        lines.append(f"{b:>6} " + stats(groups[b]))
    lines.append(f"{'all':>6} " + stats(rows))
    lines.append("proof = ended complete or complete up to a cost, with the answer listed")
    lines.append("cover = where a bound was stated, the answer's approximate cost is within it")
    lines.append("surv = the answer passes every default constraint (checked on the answer itself)")
    lines.extend(calibration_table(rows))
    lines.extend(unlisted_check(rows))
    lines.extend(listing_check(rows))
    lines.extend(motif_check(rows))
    killers: dict[str, int] = {}
    for r in rows:
        for name in r.get("answer_failed_constraints", []):
            killers[name] = killers.get(name, 0) + 1
    for name, k in sorted(killers.items(), key=lambda kv: (-kv[1], kv[0])):
        lines.append(f"  answer excluded by {name}: {k} case(s)")
    errors = [r for r in rows if r.get("error")]
    if errors:
        lines.append(f"{len(errors)} case(s) rejected as input errors, e.g. {errors[0]['id']}: {errors[0]['error']}")
    return "\n".join(lines)


def listing_check(rows: list[dict], least: int = 5) -> list[str]:
    """How many candidates each case listed (rows written before the
    ``listed`` field carry none and are skipped).

    >>> listing_check([{"listed": 10, "near_alternatives": 0}, {"listed": 5, "near_alternatives": 4},
    ...                {"listed": 0, "near_alternatives": 0}])
    ['listed candidates: fewest 0; cases under 5: 1 of 3; cases filled with near alternatives: 1']
    """
    sel = [r for r in rows if r.get("listed") is not None]
    if not sel:
        return []
    under = sum(1 for r in sel if r["listed"] < least)
    filled = sum(1 for r in sel if r.get("near_alternatives"))
    return [f"listed candidates: fewest {min(r['listed'] for r in sel)}; cases under {least}: {under} of "
            f"{len(sel)}; cases filled with near alternatives: {filled}"]


def motif_check(rows: list[dict], table=None, calibration=None, top: int = 5) -> list[str]:
    """Share of listed top-``top`` candidates with a ring or small-ring bond
    pattern absent from the training constitutions
    (:func:`~elucidate.constraints.plausibility.absent_motifs`), over the
    cases whose answer has none. With ``calibration``, the candidates are
    re-ranked from their ``fit_terms`` first (e.g. with the plausibility
    weight set to 0, to see what the term changes on the same lists).
    """
    from .constraints.plausibility import absent_motifs, load_plausibility_table

    sel = [r for r in rows if r.get("listed_smiles") and r.get("answer")]
    table = table if table is not None else load_plausibility_table()
    if not sel or table is None:
        return []
    memo: dict[str, bool] = {}

    def exotic(smiles: str) -> bool:
        if smiles not in memo:
            mol = Chem.MolFromSmiles(smiles)
            memo[smiles] = bool(mol is not None and absent_motifs(mol, table))
        return memo[smiles]

    shown = flagged = cases = 0
    for r in sel:
        if exotic(r["answer"]):
            continue
        cases += 1
        names = list(r["listed_smiles"])
        if calibration is not None and r.get("fit_terms"):
            scores = row_scores(r, calibration)
            names = [names[i] for i in sorted(range(len(names)), key=lambda i: (float(scores[i]), names[i]))]
        for s in names[:top]:
            shown += 1
            flagged += exotic(s)
    if not shown:
        return []
    return [f"top-{top} candidates with a ring/small-ring pattern absent from the training constitutions: "
            f"{100.0 * flagged / shown:.1f} % of {shown} (over {cases} cases whose answer has none)"]


def unlisted_check(rows: list[dict]) -> list[str]:
    """Stated chance that the answer is not listed vs how often it was not.

    >>> unlisted_check([{"unlisted_probability": 0.3, "rank": None}, {"unlisted_probability": 0.1, "rank": 4}])
    ['answer not listed: predicted 20.0 % (mean over 2 cases), observed 50.0 %']
    """
    sel = [r for r in rows if r.get("unlisted_probability") is not None]
    if not sel:
        return []
    pred = 100.0 * sum(r["unlisted_probability"] for r in sel) / len(sel)
    obs = 100.0 * sum(1 for r in sel if r["rank"] is None) / len(sel)
    return [f"answer not listed: predicted {pred:.1f} % (mean over {len(sel)} cases), observed {obs:.1f} %"]


def calibration_table(rows: list[dict], edges=(0.0, 0.2, 0.4, 0.6, 0.8, 0.95, 1.0001)) -> list[str]:
    """Predicted probability of the top candidate (binned) vs how often it was right.

    >>> rows = [{"top_probability": 0.9, "rank": 1}, {"top_probability": 0.85, "rank": 2}]
    >>> for line in calibration_table(rows):
    ...     print(line)
    calibration (top candidate): probability bin, cases, mean probability, observed top-1
       0.80-0.95     2    0.875    0.500
    """
    out = ["calibration (top candidate): probability bin, cases, mean probability, observed top-1"]
    for lo, hi in zip(edges, edges[1:]):
        sel = [r for r in rows if r.get("top_probability") is not None and lo <= r["top_probability"] < hi]
        if not sel:
            continue
        mean_p = sum(r["top_probability"] for r in sel) / len(sel)
        hit = sum(1 for r in sel if r["rank"] == 1) / len(sel)
        out.append(f"  {lo:5.2f}-{min(hi, 1.0):4.2f} {len(sel):5d}    {mean_p:.3f}    {hit:.3f}")
    return out
