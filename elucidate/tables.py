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
   alone with ``--only reference``);
4. the plausibility table of the training constitutions
   (:func:`elucidate.constraints.plausibility.build_plausibility_table`):
   counts of ring systems, rings, ring pairs, cumulated centres and
   second-sphere environments (about 20 s; alone with ``--only plausibility``).

All carry a provenance header: the source (open nmrshiftdb2 data,
Steinbeck, Krause, Kuhn, J. Chem. Inf. Comput. Sci. 2003, 43, 1733), its
open-content terms, the build date, counts and settings.
"""

from __future__ import annotations

from pathlib import Path
from typing import Callable

import datetime as _dt
import gzip
import hashlib
import json

from .constraints.environments import DEFAULT_TABLE_PATH, build_environment_table
from .constraints.plausibility import TABLE_NAME as PLAUSIBILITY_TABLE_NAME
from .constraints.plausibility import build_plausibility_table
from .datafiles import PACKAGE_DATA_DIR
from .errors import InputError
from .predict.build import ATTRIBUTION, BuildSettings, build_table, iter_assigned_training
from .reference.build import build_reference_index

__all__ = ["build_all_tables", "build_plausibility", "BUILD_PARTS"]

#: What ``--only`` may select.
BUILD_PARTS = ("tables", "reference", "plausibility")


def build_all_tables(
    data_path: str | Path,
    shift_table: str | Path | None = None,
    environment_table: str | Path | None = None,
    *,
    reference_index: str | Path | None = None,
    plausibility_table: str | Path | None = None,
    only: str | None = None,
    limit: int | None = None,
    rounds: int | None = None,
    build_date: str | None = None,
    progress: Callable[[str], None] | None = None,
) -> dict:
    """Build the shift and environment tables, the reference index and the
    plausibility table; return their headers.

    Parameters
    ----------
    data_path : path-like
        Training spectra (JSON lines, optionally gzip'd).
    shift_table, environment_table, reference_index, plausibility_table : path-like, optional
        Output files (default: the package's shipped files).
    only : {"tables", "reference", "plausibility"}, optional
        Build only the shift and environment tables, only the reference
        index, or only the plausibility table (default: everything).
    limit, rounds : int, optional
        First ``limit`` spectra only; assignment re-estimation rounds.
    build_date : str, optional
        ISO date written into the reference index header (default: today).
    progress : callable, optional
        Called with one-line progress messages.

    Returns
    -------
    dict
        ``shift_table``, ``environment_table``, ``reference_index`` and
        ``plausibility_table`` headers, for the parts built.
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
    if only in (None, "plausibility"):
        out["plausibility_table"] = build_plausibility(data_path, plausibility_table, limit=limit,
                                                       build_date=build_date, progress=progress)
    return out


def _training_smiles(path: Path, limit: int | None):
    """The ``smiles`` of every record of a JSON-lines file (first ``limit`` records)."""
    opener = gzip.open if path.name.endswith(".gz") else open
    n = 0
    with opener(path, "rt", encoding="utf-8") as fh:
        for line_no, line in enumerate(fh, 1):
            if not line.strip() or line.lstrip().startswith("#"):
                continue
            try:
                smiles = json.loads(line)["smiles"]
            except (ValueError, KeyError, TypeError) as exc:
                raise InputError(f"{path}:{line_no}: expected a JSON object with a 'smiles' field "
                                 f"({exc})") from None
            yield smiles
            n += 1
            if limit is not None and n >= limit:
                return


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def build_plausibility(data_path: str | Path, output: str | Path | None = None, *, limit: int | None = None,
                       build_date: str | None = None, progress: Callable[[str], None] | None = None) -> dict:
    """Build the plausibility table from the training constitutions and write it.

    Parameters
    ----------
    data_path : path-like
        Training spectra (JSON lines, optionally gzip'd); only ``smiles`` is read.
    output : path-like, optional
        Where to write (default: the package's ``elucidate/data/plausibility.json.gz``).
    limit : int, optional
        First ``limit`` records only.
    build_date : str, optional
        ISO date for the header (default: today, UTC).
    progress : callable, optional
        Called with one-line progress messages.

    Returns
    -------
    dict
        The table's provenance header.
    """
    path = Path(data_path)
    if not path.is_file():
        raise InputError(f"training data {path} not found; pass the path of train_spectra.jsonl.gz "
                         "(e.g. ../shared/data/train_spectra.jsonl.gz)")
    if limit is not None and (isinstance(limit, bool) or not isinstance(limit, int) or limit < 1):
        raise InputError(f"limit={limit!r} is invalid; give a positive integer or None")
    if progress:
        progress("plausibility table: counting ring systems, rings, ring pairs and second spheres")
    table = build_plausibility_table(
        _training_smiles(path, limit),
        provenance={
            "source": f"nmrshiftdb2 (open NMR database), training spectra file {path.name}",
            "attribution": ATTRIBUTION,
            "licence_terms": "nmrshiftdb2 data are open content; keep the attribution "
                             "with any redistribution of this derived table.",
            "build_date": build_date or _dt.datetime.now(_dt.timezone.utc).date().isoformat(),
            "data_sha256": _sha256(path),
            "settings": {"limit": limit, "constitution": "RDKit canonical SMILES without stereo"},
        },
    )
    out = Path(output) if output else PACKAGE_DATA_DIR / PLAUSIBILITY_TABLE_NAME
    out.parent.mkdir(parents=True, exist_ok=True)
    table.save(out)
    if progress:
        progress(f"plausibility table: {table.provenance['constitutions']} constitutions -> {out}")
    return table.provenance
