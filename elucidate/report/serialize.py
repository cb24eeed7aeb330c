"""Plain-data (JSON) form of a solve result.

The dictionary is the contract other tools rely on: ``formula``, ``dbe``,
``complete``, ``candidates_generated``, ``elapsed_s``, ``warnings``,
``constraint_log`` and ``candidates`` (best first), each candidate with
``smiles``, ``score``, ``probability``, ``mae_ppm``, ``max_error_ppm`` and
``assignment`` (``peak_index``, ``observed``, ``predicted``, ``atoms``).
Renderers only read it; nothing here recomputes science.
"""

from __future__ import annotations

import math

from ..pipeline import CAUTION, SolveResult
from ..rank.ambiguity import ambiguity_notes

__all__ = ["result_to_dict"]


def _num(x: float, nd: int = 2):
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return None
    return round(float(x), nd)


def result_to_dict(result: SolveResult) -> dict:
    """Serialise a :class:`~elucidate.pipeline.SolveResult` to plain data."""
    s = result.settings
    return {
        "formula": result.formula.hill,
        "dbe": result.dbe,
        "complete": result.complete,
        "completeness": {"status": result.completeness[0], "cost_bound": result.completeness[1]},
        "unlisted_probability": _num(result.unlisted_probability, 4),
        "candidates_generated": result.candidates_generated,
        "elapsed_s": _num(result.elapsed_s, 3),
        "warnings": list(result.warnings),
        "peaks": result.peaks.to_records(),
        "settings": {
            "solvent": s.solvent,
            "time_limit": s.time_limit,
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
        },
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
                "probability": _num(c.probability, 4),
                "mae_ppm": _num(c.mae_ppm),
                "max_error_ppm": _num(c.max_error_ppm),
                "overlapped_lines": c.overlaps,
                "split_classes": c.splits,
                "unfilled_lines": list(c.unfilled),
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
        "caution": CAUTION,
    }
