"""Observed spectra: 13C peak lists, solvent lines and JCAMP-DX input.

Results built on these inputs are hypotheses; the picked and edited peak
lists should be checked against the spectra by the analyst.
"""

from .jcamp import (
    JcampSpectrum,
    PickedPeaks,
    PickSettings,
    peaks_from_jcamp,
    pick_peaks,
    read_jcamp,
    read_jcamp_blocks,
)
from .peaks import (
    Peak,
    PeakList,
    check_against_formula,
    parse_peaks,
    peaks_from_records,
    read_peaks,
)
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
    "PickSettings",
    "PickedPeaks",
    "read_jcamp",
    "read_jcamp_blocks",
    "pick_peaks",
    "peaks_from_jcamp",
]
