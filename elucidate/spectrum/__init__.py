"""Observed spectra: 13C peak lists, solvent lines and JCAMP-DX input.

Modules: :mod:`.peaks` (typed/filed peak lists and their checks against a
formula), :mod:`.solvents` (solvent lines and their removal),
:mod:`.jcamp` (JCAMP-DX reading), :mod:`.picking` (peak picking),
:mod:`.dept` (multiplicities from DEPT), :mod:`.trace` (a decimated copy
of a spectrum for reports), :mod:`.jcamp_write` and
:mod:`.synthetic` (writing demonstration/test spectra).

Results built on these inputs are hypotheses; picked and DEPT-edited peak
lists should be checked against the spectra by the analyst.
"""

from .dept import classify_multiplicities
from .jcamp import JcampSpectrum, peaks_from_jcamp, read_jcamp, read_jcamp_blocks
from .peaks import (
    Peak,
    PeakList,
    check_against_formula,
    parse_peaks,
    peaks_from_records,
    read_peaks,
)
from .picking import PickedPeaks, PickSettings, pick_peaks
from .solvents import (
    SOLVENT_LINES,
    multiplet_lines,
    remove_solvent_lines,
    resolve_solvent,
    solvent_from_label,
)

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
    "multiplet_lines",
    "JcampSpectrum",
    "read_jcamp",
    "read_jcamp_blocks",
    "peaks_from_jcamp",
    "PickSettings",
    "PickedPeaks",
    "pick_peaks",
    "classify_multiplicities",
]
