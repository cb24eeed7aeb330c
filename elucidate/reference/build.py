"""Build the shipped reference index from the nmrshiftdb2 training spectra.

``elucidate build-table --data ../shared/data/train_spectra.jsonl.gz --only reference``
reads every record with the JSON-lines library reader (the same checks as a
lab's file), keeps every spectrum (repeat measurements and stereoisomers of
one constitution stay separate spectra of one constitution), merges identical
(shift, multiplicity) lines within a spectrum into one line with its carbon
count, and writes ``elucidate/data/reference_spectra.npz``: shifts as int16
hundredths of a ppm, hydrogens as int8, counts as int16, SMILES, formulas and
source ids as newline-joined UTF-8, in a zip with fixed dates, so the same
input and build date give the same bytes.

The header records the provenance: the source file name and its SHA-256, the
build date, counts, and the attribution and terms of the open nmrshiftdb2
database (Steinbeck, Krause, Kuhn, *J. Chem. Inf. Comput. Sci.* 2003, 43,
1733 — citation from memory).
"""

from __future__ import annotations

import datetime as _dt
import hashlib
from pathlib import Path
from typing import Callable

import numpy as np

from ..errors import InputError
from .index import INDEX_FORMAT, ReferenceIndex, default_index_path
from .library import read_jsonl_entries

__all__ = ["build_reference_index", "ATTRIBUTION", "LICENCE_TERMS", "DATABASE_URL"]

ATTRIBUTION = (
    "Reference spectra from the open nmrshiftdb2 database of assigned NMR spectra "
    "(Steinbeck, Krause, Kuhn, J. Chem. Inf. Comput. Sci. 2003, 43, 1733 - citation from "
    "memory - and later releases), rounded to 0.01 ppm, with stereo-free structures."
)

LICENCE_TERMS = (
    "nmrshiftdb2 data are published as open content (from memory: under a Creative Commons "
    "attribution/share-alike licence); this derived index is redistributed under those terms, "
    "not under the MIT licence of the elucidate code: keep the attribution and pass the terms on "
    "with any copy. The database's own site states the authoritative terms."
)

#: Home of the database (from memory).
DATABASE_URL = "https://nmrshiftdb.nmr.uni-koeln.de/"


def _file_digest(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def _count_records(path: Path, limit: int | None) -> int:
    import gzip

    opener = gzip.open if path.name.endswith(".gz") else open
    n = 0
    with opener(path, "rt", encoding="utf-8") as fh:
        for line in fh:
            if line.strip() and not line.lstrip().startswith("#"):
                n += 1
                if limit is not None and n >= limit:
                    break
    return n


def build_reference_index(data_path, output_path=None, *, limit: int | None = None,
                          build_date: str | None = None,
                          progress: Callable[[str], None] | None = None) -> dict:
    """Build the reference index from training spectra and write it.

    Parameters
    ----------
    data_path : path-like
        JSON-lines spectra (``train_spectra.jsonl.gz``): ``smiles``,
        ``formula``, ``source_id``, ``solvent``, ``shifts`` per record.
    output_path : path-like, optional
        Where to write the ``.npz`` (default: the package's shipped index).
    limit : int, optional
        Read only the first ``limit`` records (for tests).
    build_date : str, optional
        ISO date for the header (default: today, UTC).
    progress : callable, optional
        Called with one-line progress messages.

    Returns
    -------
    dict
        The header written into the index.
    """
    data_path = Path(data_path)
    if not data_path.is_file():
        raise InputError(f"training data {data_path} not found; pass the path of train_spectra.jsonl.gz "
                         "(e.g. ../shared/data/train_spectra.jsonl.gz)")
    if limit is not None and (isinstance(limit, bool) or not isinstance(limit, int) or limit < 1):
        raise InputError(f"limit={limit!r} is invalid; give a positive integer or None")
    entries = []
    for e in read_jsonl_entries(data_path, origin="nmrshiftdb2", limit=limit, skip_empty=True):
        entries.append(e)
        if progress and len(entries) % 5000 == 0:
            progress(f"reference index: read {len(entries)} spectra")
    if not entries:
        raise InputError(f"no spectra in {data_path}; expected JSON lines with smiles and shifts")
    index = ReferenceIndex.from_entries(entries)
    lengths = np.diff(index.offsets)
    per_const = np.bincount(index.spec_const, minlength=index.n_constitutions)
    seen = set()
    duplicates = 0
    for i in range(index.n_spectra):
        a, b = int(index.offsets[i]), int(index.offsets[i + 1])
        key = (int(index.spec_const[i]), index.line_key[a:b].tobytes(), index.line_chan[a:b].tobytes(),
               index.line_count[a:b].tobytes())
        duplicates += key in seen
        seen.add(key)
    index.header = {
        "format": INDEX_FORMAT,
        "source": f"nmrshiftdb2 (open NMR database), training spectra file {data_path.name}",
        "attribution": ATTRIBUTION,
        "licence_terms": LICENCE_TERMS,
        "database_url": DATABASE_URL,
        "build_date": build_date or _dt.datetime.now(_dt.timezone.utc).date().isoformat(),
        "data_sha256": _file_digest(data_path),
        "counts": {
            "records_read": _count_records(data_path, limit),
            "spectra": index.n_spectra,
            "constitutions": index.n_constitutions,
            "constitutions_with_several_spectra": int(np.sum(per_const > 1)),
            "identical_repeat_spectra": duplicates,
            "lines": int(len(index.line_key)),
            "carbons": int(index.line_count.astype(np.int64).sum()),
            "max_lines_per_spectrum": int(lengths.max()),
        },
        "settings": {"limit": limit, "shift_resolution_ppm": 0.01,
                     "constitution": "RDKit canonical SMILES without stereo"},
    }
    out = Path(output_path) if output_path else default_index_path()
    index.save(out)
    if progress:
        c = index.header["counts"]
        progress(f"reference index: {c['spectra']} spectra of {c['constitutions']} constitutions -> {out}")
    return index.header
