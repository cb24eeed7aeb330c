"""The per-carbon prediction record returned by `elucidate.predict`."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["AtomShift"]


@dataclass(frozen=True)
class AtomShift:
    """Predicted 13C shift of one carbon (a hypothesis, not a measurement).

    Attributes
    ----------
    index : int
        RDKit atom index in the molecule given.
    element : str
        Element symbol (``"C"``).
    hydrogens : int
        Total hydrogen count on the atom.
    shift : float
        Predicted chemical shift, ppm.
    sigma : float
        Predicted uncertainty, ppm (about one standard deviation), > 0.
    sphere : int
        Deepest environment sphere matched in the table (0 = fallback only).
    predictor : str
        Which predictor produced the value: ``"table"`` (environment table)
        or ``"table+trees"`` (table corrected by the learned trees).
    """

    index: int
    element: str
    hydrogens: int
    shift: float
    sigma: float
    sphere: int
    predictor: str = "table"
