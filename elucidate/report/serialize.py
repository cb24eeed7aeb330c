"""Plain-data (JSON) form of a solve result.

The dictionary is the contract other tools rely on: ``formula``, ``dbe``,
``complete``, ``candidates_generated``, ``elapsed_s``, ``warnings``,
``constraint_log`` and ``candidates`` (best first), each candidate with
``smiles``, ``score``, ``probability``, ``mae_ppm``, ``max_error_ppm`` and
``assignment`` (``peak_index``, ``observed``, ``predicted``, ``atoms``).
Renderers only read it; nothing here recomputes science.

Report metadata travel with it: the ``run`` block (date and time, tool and
shift-table versions, sample ID, analyst, reviewer; :mod:`.runinfo`) and,
when the lines were picked from a spectrum file, ``spectrum_trace`` (the
decimated 13C spectrum, :mod:`elucidate.spectrum.trace`), so that a saved
result can be re-rendered with its spectrum.
"""

from __future__ import annotations

import math

from ..errors import InputError
from ..pipeline import CAUTION, SolveResult
from ..rank.ambiguity import ambiguity_notes, multiplicity_notes
from ..rank.next_measurement import next_measurement_sentence, next_measurements
from ..spectrum.trace import SpectrumTrace
from ..search.statement import fit_equivalent
from .runinfo import RunInfo

__all__ = ["result_to_dict"]


def _num(x: float, nd: int = 2):
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return None
    return round(float(x), nd)


def _completeness(result: SolveResult) -> dict:
    """Status and bound (numbers kept for tools) plus the statements a chemist reads."""
    status, bound = result.completeness
    out = {"status": status, "cost_bound": bound, "statement": result.completeness_note,
           "how": result.search_how, "assumptions": list(result.assumptions)}
    if bound is not None:
        one, each = fit_equivalent(bound, result.formula.carbons)
        out["bound_as_misfit"] = {"one_carbon_ppm": _num(one, 1), "every_carbon_ppm": _num(each, 2)}
    return out


def _check_record(k: int, check) -> dict:
    """One cross peak's check for one candidate (atoms in the SMILES order)."""
    return {"row": k + 1, "experiment": check.row.experiment, "h_shift": check.row.h_shift,
            "other_shift": check.row.other, "status": check.status, "bonds": check.bonds,
            "cost": _num(check.cost, 2), "atoms": list(check.atoms) if check.atoms is not None else None}


def result_to_dict(result: SolveResult, *, run: RunInfo | None = None,
                   spectrum: SpectrumTrace | None = None) -> dict:
    """Serialise a :class:`~elucidate.pipeline.SolveResult` to plain data.

    Parameters
    ----------
    result : SolveResult
    run : RunInfo, optional
        Time of the run, sample ID and sign-off names (``run`` block); by
        default the current time and no names.
    spectrum : SpectrumTrace, optional
        The measured spectrum the lines were picked from (``spectrum_trace``).

    Returns
    -------
    dict
        JSON-ready; identical for identical input apart from the time in
        ``run.timestamp_utc``.
    """
    if run is None:
        run = RunInfo.now()
    if not isinstance(run, RunInfo):
        raise InputError(f"run must be a RunInfo, got {type(run).__name__}")
    if spectrum is not None and not isinstance(spectrum, SpectrumTrace):
        raise InputError(f"spectrum must be a SpectrumTrace, got {type(spectrum).__name__}")
    s = result.settings
    run_block = run.to_dict()
    # what ordered the kept structures (docs/prediction.md)
    if s.rerank == "trees":
        from ..predict.model import default_predictor_label

        run_block["shift_predictor"] = default_predictor_label()
    else:
        run_block["shift_predictor"] = "table"
    data = {
        "run": run_block,
        "formula": result.formula.hill,
        "dbe": result.dbe,
        "complete": result.complete,
        "completeness": _completeness(result),
        "search": {"ended": result.search_ended,
                   "rounds": [list(t) for t in result.search_trace],
                   "strategies": [{"name": n, "structures": k, "seconds": sec, "note": note}
                                  for n, k, sec, note in result.search_steps]},
        "unlisted_probability": _num(result.unlisted_probability, 4),
        "unlisted_basis": result.unlisted_basis,
        "candidates_generated": result.candidates_generated,
        "elapsed_s": _num(result.elapsed_s, 3),
        "warnings": list(result.warnings),
        "peaks": result.peaks.to_records(),
        "settings": {
            "solvent": s.solvent,
            "time_limit": s.time_limit,
            "rerank": s.rerank,
            "top": s.top,
            "valences": {el: list(v) for el, v in s.valences},
            "charged_nitrogen": s.charged_nitrogen,
            "allow_all": s.allow_all,
            "require": list(s.require),
            "scaffold": s.scaffold,
            "forbid": list(s.forbid),
            "max_rings": s.max_rings,
            "min_ring_size": s.min_ring_size,
            "max_ring_size": s.max_ring_size,
            "symmetry_overlap": s.symmetry.overlap,
            "symmetry_split": s.symmetry.split,
            "match_1h": s.match_1h,
            "match_13c": s.match_13c,
        },
        "correlations": [
            {"row": k + 1, "line": link.row.line, "experiment": link.row.experiment,
             "h_shift": link.row.h_shift, "other_shift": link.row.other,
             "h_lines": [i + 1 for i in link.h_lines], "c_lines": [i + 1 for i in link.c_lines]}
            for k, link in enumerate(result.correlations)
        ],
        "constraint_log": [
            {"constraint": name, "before": before, "after": after}
            for name, before, after in result.constraint_log
        ],
        "candidates": [
            {
                "rank": i + 1,
                "smiles": c.smiles,
                "score": _num(c.score, 4),
                "prior_cost": _num(c.prior, 4),
                "plausibility_cost": _num(c.plausibility, 4),
                "probability": _num(c.probability, 4),
                "mae_ppm": _num(c.mae_ppm),
                "max_error_ppm": _num(c.max_error_ppm),
                "overlapped_lines": c.overlaps,
                "split_classes": c.splits,
                "unfilled_lines": list(c.unfilled),
                "found_by": c.found_by,
                "set_aside": c.set_aside,
                "correlation_cost": _num(c.correlation_cost, 4),
                "correlations": [_check_record(k, ch) for k, ch in enumerate(c.correlations)],
                "assignment": [
                    {
                        "peak_index": e.peak_index,
                        "observed": _num(e.observed),
                        "predicted": _num(e.predicted),
                        "atoms": list(e.atoms),
                        "kind": e.kind,
                    }
                    for e in c.assignment
                ],
                "predicted_shifts": [
                    {"atom": a, "hydrogens": h, "shift": _num(sh), "sigma": _num(sg)}
                    for a, h, sh, sg in c.predicted
                ],
            }
            for i, c in enumerate(result.candidates)
        ],
        "ambiguity": ambiguity_notes(result.candidates),
        # without multiplicities: the lines whose multiplicity differs among the top 5 (null with them)
        "multiplicities": multiplicity_notes(result.peaks.peaks, result.candidates),
        # measurements whose expected outcome differs among the top candidates, best first
        "next_measurements": next_measurements(result.peaks.peaks, result.candidates,
                                               given=result.correlations),
        "reference_neighbours": [dict(n) for n in result.reference_neighbours],
        "caution": CAUTION,
        "peaks_provenance": list(result.peaks.provenance),
    }
    data["next_measurement_statement"] = next_measurement_sentence(data["next_measurements"])
    if result.peaks.observe_mhz:
        data["observe_mhz"] = result.peaks.observe_mhz
    if spectrum is not None:
        data["spectrum_trace"] = spectrum.to_dict()
    return data
