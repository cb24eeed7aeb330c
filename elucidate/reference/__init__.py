"""Reference neighbours: library spectra most similar to an observed 13C spectrum.

A chemist sees, next to the proposed structures, the few reference
compounds whose 13C spectra resemble the sample's (similarity, formula,
structure); the structure search may start from the structures of the
nearest reference spectra.  Neighbours are context and seeds, never answers
by lookup: a new compound is not in any library.

Modules: :mod:`.similarity` (the line-matching score, pure functions),
:mod:`.index` (entries, hits, the compact index and its query),
:mod:`.library` (a lab's SD file or JSON lines), :mod:`.build` (the shipped
nmrshiftdb2 index).  Formats and terms: docs/reference-library.md.

Entry point: :func:`nearest_spectra` (the shipped index unless ``library=`` is
given); a lab library: :func:`load_reference_library`.
"""

from .index import (
    DEFAULT_FORMULA_BONUS,
    INDEX_FORMAT,
    ReferenceEntry,
    ReferenceHit,
    ReferenceIndex,
    default_index,
    default_index_path,
    nearest_spectra,
)
from .library import (
    load_reference_libraries,
    load_reference_library,
    read_reference_entries,
)
from .similarity import DEFAULT_TOLERANCE, LineMatch, line_weight, match_lines

__all__ = [
    "DEFAULT_FORMULA_BONUS",
    "DEFAULT_TOLERANCE",
    "INDEX_FORMAT",
    "LineMatch",
    "ReferenceEntry",
    "ReferenceHit",
    "ReferenceIndex",
    "default_index",
    "default_index_path",
    "line_weight",
    "load_reference_libraries",
    "load_reference_library",
    "match_lines",
    "nearest_spectra",
    "read_reference_entries",
]
