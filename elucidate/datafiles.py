"""Where the shipped data files are read from.

The package ships its derived tables in ``elucidate/data/`` (shift table,
environment table, reference index, calibration).  Setting the environment
variable ``ELUCIDATE_DATA_DIR`` makes every one of them come from that
folder instead: a lab can run a rebuilt set of tables (``elucidate
build-table --output ...``), and the project's calibration runs use tables
rebuilt without the held-out compounds.  With the variable set, a missing
file is an error rather than a silent fall-back to the shipped one.
"""

from __future__ import annotations

import os
from pathlib import Path

__all__ = ["DATA_DIR_VARIABLE", "PACKAGE_DATA_DIR", "data_file"]

DATA_DIR_VARIABLE = "ELUCIDATE_DATA_DIR"
PACKAGE_DATA_DIR = Path(__file__).resolve().parent / "data"


def data_file(name: str) -> Path:
    """Path of the data file ``name`` (``ELUCIDATE_DATA_DIR`` first, when set)."""
    folder = os.environ.get(DATA_DIR_VARIABLE)
    if folder:
        return Path(folder) / name
    return PACKAGE_DATA_DIR / name
