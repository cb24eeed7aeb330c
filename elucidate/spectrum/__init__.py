"""Observed spectra: 13C peak lists, solvent lines and JCAMP-DX input."""

from .peaks import (
    Peak,
    PeakList,
    check_against_formula,
    parse_peaks,
    peaks_from_records,
    read_peaks,
)
from .solvents import SOLVENT_LINES, remove_solvent_lines, resolve_solvent, solvent_from_label

__all__ = [
    "Peak",
    "PeakList",
    "parse_peaks",
    "read_peaks",
    "check_against_formula",
    "peaks_from_records",
    "SOLVENT_LINES",
    "resolve_solvent",
    "solvent_from_label",
    "remove_solvent_lines",
]
