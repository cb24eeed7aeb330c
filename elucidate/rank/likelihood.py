"""Error model for observed-minus-predicted 13C shifts.

Prediction errors have heavy tails (a few carbons in a molecule are off by
5-15 ppm while most are within 2 ppm), so a Gaussian would let one bad carbon
dominate a candidate's score.  We use a Student-t density with ``NU`` degrees
of freedom scaled by the predictor's per-carbon uncertainty, the error model
used in DP4-style probabilities (Smith & Goodman, J. Am. Chem. Soc. 2010,
132, 12946; from memory).

>>> round(shift_cost(100.0, 100.0, 1.0), 3)
0.0
>>> shift_cost(100.0, 110.0, 2.0) > shift_cost(100.0, 102.0, 2.0)
True
"""

from __future__ import annotations

import math

__all__ = ["shift_cost", "shift_cost_matrix", "NU"]

#: Degrees of freedom of the Student-t error model.
NU = 3.0
_SIGMA_FLOOR = 0.5


def shift_cost(observed: float, predicted: float, sigma: float) -> float:
    """Negative log-likelihood of ``observed`` (up to a constant).

    ``log(sigma) + (nu + 1) / 2 * log(1 + z**2 / nu)`` with
    ``z = (observed - predicted) / sigma``; sigma is floored at 0.5 ppm.
    """
    s = max(float(sigma), _SIGMA_FLOOR)
    z = (observed - predicted) / s
    return math.log(s) + 0.5 * (NU + 1.0) * math.log1p(z * z / NU)


def shift_cost_matrix(observed, predicted, sigma):
    """:func:`shift_cost` for every (predicted, observed) pair at once.

    Returns an array of shape ``(len(predicted), len(observed))``.

    >>> import numpy as np
    >>> m = shift_cost_matrix(np.array([100.0, 50.0]), np.array([100.0]), np.array([1.0]))
    >>> m.shape, round(float(m[0, 0]), 3)
    ((1, 2), 0.0)
    """
    import numpy as np

    s = np.maximum(np.asarray(sigma, dtype=float), _SIGMA_FLOOR)[:, None]
    z = (np.asarray(observed, dtype=float)[None, :] - np.asarray(predicted, dtype=float)[:, None]) / s
    return np.log(s) + 0.5 * (NU + 1.0) * np.log1p(z * z / NU)
