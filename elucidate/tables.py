"""Build every shipped table from the training spectra, deterministically.

``elucidate build-table --data ../shared/data/train_spectra.jsonl.gz``
rebuilds, in order:

1. the 13C shift table (:func:`elucidate.predict.build.build_table`), whose
   assignment recovery also writes the assigned training shifts to a cache;
2. the environment shift-range table
   (:func:`elucidate.constraints.environments.build_environment_table`) from
   those assigned shifts;
3. the reference index of the training spectra
   (:func:`elucidate.reference.build.build_reference_index`), used to show
   the reference compounds with the most similar spectra (seconds; rebuild it
   alone with ``--only reference``).

All carry a provenance header: the source (open nmrshiftdb2 data,
Steinbeck, Krause, Kuhn, J. Chem. Inf. Comput. Sci. 2003, 43, 1733), its
open-content terms, the build date, counts and settings.
"""

from __future__ import annotations

from pathlib import Path
from typing import Callable

from .constraints.environments import DEFAULT_TABLE_PATH, build_environment_table
from .errors import InputError
from .predict.build import BuildSettings, build_table, iter_assigned_training
from .reference.build import build_reference_index

__all__ = ["build_all_tables", "BUILD_PARTS"]

#: What ``--only`` may select.
BUILD_PARTS = ("tables", "reference")


def build_all_tables(
    data_path: str | Path,
    shift_table: str | Path | None = None,
    environment_table: str | Path | None = None,
    *,
    reference_index: str | Path | None = None,
    only: str | None = None,
    limit: int | None = None,
    rounds: int | None = None,
    build_date: str | None = None,
    progress: Callable[[str], None] | None = None,
) -> dict:
    """Build the shift and environment tables and the reference index; return their headers.

    Parameters
    ----------
    data_path : path-like
        Training spectra (JSON lines, optionally gzip'd).
    shift_table, environment_table, reference_index : path-like, optional
        Output files (default: the package's shipped files).
    only : {"tables", "reference"}, optional
        Build only the shift and environment tables, or only the reference
        index (default: everything).
    limit, rounds : int, optional
        First ``limit`` spectra only; assignment re-estimation rounds.
    build_date : str, optional
        ISO date written into the reference index header (default: today).
    progress : callable, optional
        Called with one-line progress messages.

    Returns
    -------
    dict
        ``shift_table``, ``environment_table`` and ``reference_index``
        headers, for the parts built.
    """
    if only is not None and only not in BUILD_PARTS:
        raise InputError(f"only={only!r}: choose one of {', '.join(BUILD_PARTS)} (or nothing for all)")
    if not Path(data_path).is_file():
        raise InputError(f"training data {data_path} not found; pass the path of train_spectra.jsonl.gz "
                         "(e.g. ../shared/data/train_spectra.jsonl.gz)")
    out: dict = {}
    if only in (None, "tables"):
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
        env_out = Path(environment_table) if environment_table else DEFAULT_TABLE_PATH
        env_out.parent.mkdir(parents=True, exist_ok=True)
        env.save(env_out)
        out["shift_table"] = header
        out["environment_table"] = env.provenance
    if only in (None, "reference"):
        if progress:
            progress("reference index: reading the training spectra")
        out["reference_index"] = build_reference_index(data_path, reference_index, limit=limit,
                                                       build_date=build_date, progress=progress)
    return out
