"""Build every shipped table from the training spectra, deterministically.

``elucidate build-table --data ../shared/data/train_spectra.jsonl.gz``
rebuilds, in order:

1. the 13C shift table (:func:`elucidate.predict.build.build_table`), whose
   assignment recovery also writes the assigned training shifts to a cache;
2. the environment shift-range table
   (:func:`elucidate.constraints.environments.build_environment_table`) from
   those assigned shifts.

Both carry a provenance header: the source (open nmrshiftdb2 data,
Steinbeck, Krause, Kuhn, J. Chem. Inf. Comput. Sci. 2003, 43, 1733), its
open-content terms, the build date, counts and settings.
"""

from __future__ import annotations

from pathlib import Path
from typing import Callable

from .constraints.environments import DEFAULT_TABLE_PATH, build_environment_table
from .predict.build import BuildSettings, build_table, iter_assigned_training

__all__ = ["build_all_tables"]


def build_all_tables(
    data_path: str | Path,
    shift_table: str | Path | None = None,
    environment_table: str | Path | None = None,
    *,
    limit: int | None = None,
    rounds: int | None = None,
    progress: Callable[[str], None] | None = None,
) -> dict:
    """Build the shift table and the environment table; return both headers."""
    settings = BuildSettings() if rounds is None else BuildSettings(rounds=rounds)
    header = build_table(data_path, shift_table, limit=limit, settings=settings, progress=progress)
    if progress:
        progress("environment table: collecting shift ranges per first-sphere environment")
    env = build_environment_table(
        iter_assigned_training(data_path, limit=limit),
        provenance={
            "format": "elucidate-environment-table/1",
            "source": header.get("source"),
            "attribution": header.get("attribution"),
            "licence_terms": header.get("licence_terms"),
            "build_date": header.get("build_date"),
            "data_sha256": header.get("data_sha256"),
            "settings": {"limit": limit, "assignment": "from the shift-table build (EM)"},
        },
    )
    out = Path(environment_table) if environment_table else DEFAULT_TABLE_PATH
    out.parent.mkdir(parents=True, exist_ok=True)
    env.save(out)
    return {"shift_table": header, "environment_table": env.provenance}
