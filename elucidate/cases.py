"""Case files: JSON lines of unknowns with their answers, for measuring.

Format (as documented with the open reference data)::

    {"id": "...", "formula": "C6H3BrF2", "solvent": null,
     "peaks": [{"shift": 98.1, "mult": "C", "count": 1}, ...],
     "answer": "Fc1cc(F)cc(Br)c1"}

Shared by the elucidation benchmark (:mod:`elucidate.bench`) and the shift
predictor's evaluation (:mod:`elucidate.predict.evaluate`).
"""

from __future__ import annotations

import json
from pathlib import Path

from .errors import InputError
from .formula import parse_formula

__all__ = ["read_cases", "band_of", "BANDS"]

BANDS = ((4, 8), (9, 12), (13, 16), (17, 22))


def band_of(heavy_atoms: int) -> tuple[int, int] | None:
    """The band of :data:`BANDS` holding ``heavy_atoms``; None outside them."""
    return next((b for b in BANDS if b[0] <= heavy_atoms <= b[1]), None)


def read_cases(path: str, limit: int | None = None, heavy: tuple[int, int] | None = None,
               every: int = 1, required: tuple[str, ...] = ("formula", "peaks", "answer")) -> list[dict]:
    """Read and validate a JSON-lines case file.

    Every case must carry the ``required`` keys.

    ``heavy`` keeps cases whose formula has that many heavy atoms (inclusive
    range); ``every`` keeps every n-th remaining case *within each heavy-atom
    band* (:data:`BANDS`), so that a sample is stratified: every 5th of a
    file with 150 cases per band gives 30 per band, whatever the order of
    the file; ``limit`` stops after that many cases.
    """
    p = Path(path)
    if not p.is_file():
        raise InputError(f"case file {path!r} not found; give a JSON-lines file of cases")
    cases = []
    kept: dict = {}  # cases seen so far in each band
    with p.open(encoding="utf-8") as fh:
        for lineno, line in enumerate(fh, 1):
            if not line.strip():
                continue
            try:
                case = json.loads(line)
            except json.JSONDecodeError as exc:
                raise InputError(f"{path}: line {lineno} is not valid JSON ({exc.msg})") from None
            missing = [k for k in required if k not in case]
            if missing:
                raise InputError(f"{path}: line {lineno} lacks {', '.join(missing)}; "
                                 f"each case needs {', '.join(required)}")
            case.setdefault("id", f"line-{lineno}")
            band = None  # the stratum of a case without a formula
            if "formula" in case:
                n_heavy = parse_formula(case["formula"]).heavy_atoms
                if heavy is not None and not heavy[0] <= n_heavy <= heavy[1]:
                    continue
                band = band_of(n_heavy)
            kept[band] = kept.get(band, 0) + 1
            if (kept[band] - 1) % every:
                continue
            cases.append(case)
            if limit is not None and len(cases) >= limit:
                break
    if not cases:
        raise InputError(f"case file {path!r} holds no cases")
    return cases
