"""Calibrated candidate probabilities: fitted score weights and the chance
that the answer is not listed at all.

Method
------
A candidate's raw score has three parts, the assignment cost ``f`` (Student-t
shift likelihood with overlap/split penalties, :mod:`elucidate.rank.likelihood`),
the environment-rarity prior ``r`` and the plausibility cost ``v``
(:mod:`elucidate.constraints.plausibility`).  Probabilities over the listed
candidates follow a conditional logit model (McFadden, in *Frontiers in
Econometrics*, 1974; from memory)::

    P(candidate i | answer listed) = exp(-s_i) / sum_j exp(-s_j),   s = a f + b r + c v

which is the DP4 idea (Smith & Goodman, J. Am. Chem. Soc. 2010, 132, 12946;
from memory) with fitted weights: ``a`` acts as an inverse temperature on
the shift evidence (predicted-shift errors of one structure are correlated,
so the raw likelihood is over-confident), ``b`` and ``c`` set how much the
two priors count against it.  The weights maximise the likelihood of the
true constitution among the listed candidates.

A list is not always exhaustive.  The chance that the answer is listed at
all, ``q``, is the observed rate for complete searches, and for incomplete
ones a logistic model (Platt scaling; Platt, in *Advances in Large Margin
Classifiers*, 1999; from memory) of the search's state::

    logit q = c0 + c1 * margin + c2 * heavy_atoms / 10

where ``margin`` is the proven cost bound minus the approximate cost of the
best listed candidate (0 when no bound was proven).  The listed probabilities
are multiplied by ``q``; ``1 - q`` is reported as the probability that the
answer is not among the listed structures.

All parameters are fitted by ``scripts/fit_calibration.py`` on elucidation
runs over training constitutions held out from a rebuilt shift table
(``scripts/calibration_split.py``), never on the bench; the fitted values
ship in ``elucidate/data/calibration.json`` with their provenance.  Without
that file the weights are 1 (``c``: :data:`PROVISIONAL_PLAUSIBILITY_WEIGHT`)
and ``q`` is 1 (plain DP4-style normalisation).
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Sequence

import numpy as np

__all__ = [
    "Calibration",
    "DEFAULT_CALIBRATION_PATH",
    "PROVISIONAL_PLAUSIBILITY_WEIGHT",
    "load_calibration",
    "calibrated_scores",
    "listed_probabilities",
    "listed_chance",
    "better_chance",
    "listed_basis",
    "listed_is_calibrated",
    "CALIBRATED_BASIS",
    "confident_margin",
    "fit_score_weights",
    "fit_listed_model",
    "fit_logistic",
    "sampling_features",
    "stop_features",
]

DEFAULT_CALIBRATION_PATH = Path(__file__).resolve().parent.parent / "data" / "calibration.json"

#: Weight of the plausibility cost until it is fitted on held-out runs (a
#: calibration file without ``plausibility_weight`` gets this value).
#: Provisional, not fitted: the plausibility cost is a negative log frequency
#: like the rarity prior, whose fitted weight is 0.46, so the same order is
#: taken.  On 400 held-out training constitutions (one in ten by hash of the
#: SMILES, table built on the other nine) against 4,000 near-duplicates (one
#: to three random formula-preserving moves), rarity + w * plausibility ranks
#: the true structure cheaper in 94.8 % of pairs for w = 0.5 and 1 (rarity
#: alone: 88.5 %), so the value matters little for telling plausible from
#: implausible; the refit on held-out elucidation runs sets it against the
#: shift evidence.
PROVISIONAL_PLAUSIBILITY_WEIGHT = 0.5


@dataclass(frozen=True)
class Calibration:
    """Fitted parameters (defaults: the uncalibrated DP4-style model)."""

    fit_weight: float = 1.0
    prior_weight: float = 1.0
    listed_when_complete: float = 1.0
    listed_logit: tuple[float, float, float] | None = None  # (c0, c1, c2); None: q = 1
    #: listed-answer model for sampled results: (s0, s_heavy, s_since, s_hits); None: the bounded model
    sampled_logit: tuple[float, float, float, float] | None = None
    #: early stop of sampling: (d0, d_since, d_hits, d_heavy, d_rounds); None: never stop early
    stop_logit: tuple[float, float, float, float, float] | None = None
    provenance: dict = field(default_factory=dict, compare=False)
    plausibility_weight: float = PROVISIONAL_PLAUSIBILITY_WEIGHT
    #: early stop of sampling when the energy includes 2D correlations (the
    #: same features, fitted on runs with correlations); None: ``stop_logit``
    stop_logit_2d: tuple[float, float, float, float, float] | None = None

    def __post_init__(self):
        if not (self.fit_weight > 0 and self.prior_weight >= 0 and self.plausibility_weight >= 0):
            raise ValueError(f"calibration weights must be positive, got {self.fit_weight}, "
                             f"{self.prior_weight}, {self.plausibility_weight}; refit with "
                             "scripts/fit_calibration.py")
        if not 0 < self.listed_when_complete <= 1:
            raise ValueError(f"listed_when_complete must lie in (0, 1], got {self.listed_when_complete}")

    def to_dict(self) -> dict:
        return {
            "format": "elucidate-calibration/1",
            "fit_weight": self.fit_weight,
            "prior_weight": self.prior_weight,
            "plausibility_weight": self.plausibility_weight,
            "listed_when_complete": self.listed_when_complete,
            "listed_logit": list(self.listed_logit) if self.listed_logit is not None else None,
            "sampled_logit": list(self.sampled_logit) if self.sampled_logit is not None else None,
            "stop_logit": list(self.stop_logit) if self.stop_logit is not None else None,
            "stop_logit_2d": list(self.stop_logit_2d) if self.stop_logit_2d is not None else None,
            "provenance": self.provenance,
        }


_LOADED: dict[str, Calibration] = {}


def load_calibration(path: str | Path | None = None) -> Calibration:
    """The shipped calibration (cached per path); defaults when the file is absent."""
    if path:
        p = Path(path)
    else:
        from ..datafiles import data_file

        p = data_file("calibration.json")
    key = str(p)
    if key not in _LOADED:
        if not p.is_file():
            _LOADED[key] = Calibration()
        else:
            d = json.loads(p.read_text(encoding="utf-8"))
            logit = d.get("listed_logit")
            sampled = d.get("sampled_logit")
            stop = d.get("stop_logit")
            stop2 = d.get("stop_logit_2d")
            _LOADED[key] = Calibration(
                fit_weight=float(d["fit_weight"]),
                prior_weight=float(d["prior_weight"]),
                listed_when_complete=float(d["listed_when_complete"]),
                listed_logit=tuple(float(x) for x in logit) if logit is not None else None,
                sampled_logit=tuple(float(x) for x in sampled) if sampled is not None else None,
                stop_logit=tuple(float(x) for x in stop) if stop is not None else None,
                provenance=d.get("provenance", {}),
                plausibility_weight=float(d.get("plausibility_weight", PROVISIONAL_PLAUSIBILITY_WEIGHT)),
                stop_logit_2d=tuple(float(x) for x in stop2) if stop2 is not None else None,
            )
    return _LOADED[key]


def calibrated_scores(fit_costs: Sequence[float], priors: Sequence[float],
                      calibration: Calibration, plausibility: Sequence[float] | None = None) -> np.ndarray:
    """``a f + b r + c v`` per candidate (lower is better; ``v`` = 0 when
    ``plausibility`` is not given)."""
    f = np.asarray(fit_costs, dtype=float)
    r = np.asarray(priors, dtype=float)
    out = calibration.fit_weight * f + calibration.prior_weight * r
    if plausibility is not None:
        out = out + calibration.plausibility_weight * np.asarray(plausibility, dtype=float)
    return out


def listed_probabilities(scores: Sequence[float]) -> np.ndarray:
    """P(candidate | the answer is listed) from calibrated scores
    (:func:`calibrated_scores`), summing to 1 over the list."""
    s = np.asarray(scores, dtype=float)
    if s.size == 0:
        return s
    w = np.exp(-(s - s.min()))
    return w / w.sum()


def _sigmoid(x: float) -> float:
    return 1.0 / (1.0 + math.exp(-x)) if x >= 0 else math.exp(x) / (1.0 + math.exp(x))


def listed_chance(status: str, margin: float | None, heavy_atoms: int,
                  calibration: Calibration, sampling: tuple[int, int] | None = None) -> float:
    """Probability that the answer is among the listed structures.

    ``sampling`` is ``(rounds since the best improved, chains that ended at
    the best)`` of a sampled result.  A search that is not complete is never
    more sure than a complete one (an exhaustive search examined everything
    a partial one did): its chance is capped at the complete searches' rate.
    """
    if status == "complete":
        return calibration.listed_when_complete
    if status == "sampled" and calibration.sampled_logit is not None and sampling is not None:
        s0, *ws = calibration.sampled_logit
        since, hits = sampling
        q = _sigmoid(s0 + sum(w * x for w, x in zip(ws, sampling_features(heavy_atoms, since, hits))))
    elif calibration.listed_logit is None:
        q = 1.0
    else:
        c0, c1, c2 = calibration.listed_logit
        m = max(0.0, margin) if margin is not None else 0.0
        q = _sigmoid(c0 + c1 * m + c2 * heavy_atoms / 10.0)
    return min(q, calibration.listed_when_complete)


#: how a "not listed" chance from a fitted model is described in reports
CALIBRATED_BASIS = "calibrated on elucidation runs over held-out training compounds"


def listed_is_calibrated(status: str, calibration: Calibration) -> bool:
    """Whether :func:`listed_chance` uses a model fitted for this kind of result.

    A sampled result without a fitted sampled model falls back on the
    cost-bounded model, fitted before annealing existed, when large unknowns
    were rarely found: its chance that the answer is not listed is then too
    high, and must not be called calibrated.
    """
    return not (status == "sampled" and calibration.sampled_logit is None)


def listed_basis(status: str, calibration: Calibration) -> str:
    """Which model gave :func:`listed_chance` its number, in words for the report."""
    if listed_is_calibrated(status, calibration):
        return CALIBRATED_BASIS
    return ("not yet calibrated for sampled results: the cost-bounded searches' model was used, which "
            "overstates this chance when annealing found the structures")


def sampling_features(heavy_atoms: int, since_gain: int, total_hits: int) -> tuple[float, float, float]:
    """Features of the sampled listed-answer model (see :func:`listed_chance`)."""
    return heavy_atoms / 10.0, float(min(since_gain, 10)), float(min(total_hits, 10))


def stop_features(since_gain: int, total_hits: int, heavy_atoms: int, rounds: int) -> tuple[float, ...]:
    """Features of the early-stop model (see :func:`better_chance`)."""
    return float(min(since_gain, 10)), float(min(total_hits, 10)), heavy_atoms / 10.0, min(rounds, 40) / 10.0


def confident_margin(heavy_atoms: int, calibration: Calibration, below: float = 0.01) -> float | None:
    """The bound margin (proven cost bound minus the best candidate's
    approximate cost) at which the bounded listed-answer model, uncapped,
    puts the chance of an answer beyond the bound below ``below``; None
    without a model.  The cost-bounded search stops there: deepening further
    would almost surely not change the best candidates."""
    if calibration.listed_logit is None:
        return None
    c0, c1, c2 = calibration.listed_logit
    if c1 <= 0:
        return None
    target = math.log((1.0 - below) / below)
    return max(0.0, (target - c0 - c2 * heavy_atoms / 10.0) / c1)


def better_chance(since_gain: int, total_hits: int, rounds: int, heavy_atoms: int,
                  calibration: Calibration, correlations: bool = False) -> float | None:
    """Calibrated chance that more annealing (to the time limit) finds a
    structure better than the best so far; None without a fitted model.

    A logistic model of the sampling state (rounds since the best last
    improved, chains that ended at the best, rounds so far, size), fitted on
    held-out runs that ran to the time limit (``scripts/fit_calibration.py``).
    With ``correlations`` (the energy includes 2D correlations, which make
    the best structure stand out sooner) the model fitted on runs with
    correlations is used, ``stop_logit_2d``, when the calibration has one.
    """
    model = calibration.stop_logit
    if correlations and calibration.stop_logit_2d is not None:
        model = calibration.stop_logit_2d
    if model is None:
        return None
    d0, *ws = model
    return _sigmoid(d0 + sum(w * x for w, x in zip(ws, stop_features(since_gain, total_hits, heavy_atoms, rounds))))


# ---------------------------------------------------------------- fitting

def fit_score_weights(cases: Sequence[tuple], iterations: int = 50,
                      fixed: dict | None = None) -> tuple[float, ...]:
    """Maximum-likelihood conditional-logit weights, one per score part.

    ``cases``: per case, one array per score part over the listed candidates
    (assignment costs first, then priors, e.g. rarity and plausibility) and,
    last, the index of the true constitution among them; every case has the
    same number of parts.  Newton's method on the concave log-likelihood;
    returns ``(a, b)`` for two parts, ``(a, b, c)`` for three.  ``fixed``
    maps part indices to weights held at a given value (the others are
    fitted with that part as a fixed offset).  Raises ValueError without data.
    """
    fixed = dict(fixed or {})
    rows = []
    for case in cases:
        *parts, k = case
        x = np.stack([np.asarray(p, float) for p in parts], axis=1)  # candidates x features
        if len(x) > 1:
            rows.append((x, int(k)))
    if not rows:
        raise ValueError("no case lists the answer among two or more candidates; run more held-out cases")
    dims = {x.shape[1] for x, _k in rows}
    if len(dims) != 1:
        raise ValueError(f"cases mix {sorted(dims)} score parts; fit rows of one version at a time")
    d_all = dims.pop()
    if any(not 0 <= i < d_all for i in fixed):
        raise ValueError(f"fixed part indices must lie in 0..{d_all - 1}")
    free = [i for i in range(d_all) if i not in fixed]
    if fixed:
        fix_idx = sorted(fixed)
        fix_w = np.array([fixed[i] for i in fix_idx], dtype=float)
        rows = [(x[:, free], k, x[:, fix_idx] @ fix_w) for x, k in rows]
    else:
        rows = [(x, k, 0.0) for x, k in rows]
    d = len(free)
    theta = np.ones(d)
    floor = np.array([1e-3 if i == 0 else 0.0 for i in free])
    for _ in range(iterations):
        grad = np.zeros(d)
        hess = np.zeros((d, d))
        for x, k, off in rows:
            u = -(x @ theta) - off  # utility
            p = np.exp(u - u.max())
            p /= p.sum()
            mean = p @ x
            grad += -(x[k] - mean)
            cov = (x * p[:, None]).T @ x - np.outer(mean, mean)
            hess -= cov
        step = np.linalg.solve(hess - 1e-9 * np.eye(d), grad)
        theta = theta - step
        theta = np.maximum(theta, floor)
        if np.abs(step).max() < 1e-8:
            break
    out = dict(zip(free, (float(t) for t in theta)))
    out.update({i: float(w) for i, w in fixed.items()})
    return tuple(out[i] for i in range(d_all))


def fit_logistic(features: Sequence[Sequence[float]], outcomes: Sequence[bool],
                 ridge: float = 1e-2, iterations: int = 100) -> tuple[float, ...]:
    """Logistic regression ``logit p = w0 + w . x`` by Newton's method with a
    small ridge penalty (keeps the fit finite when the classes separate).

    >>> w = fit_logistic([[0.0], [0.0], [1.0], [1.0]], [False, True, True, True])
    >>> w[1] > 0
    True
    """
    if len(features) != len(outcomes) or not features:
        raise ValueError("fit_logistic needs one feature row per outcome")
    x = np.array([[1.0] + [float(v) for v in row] for row in features])
    y = np.array([1.0 if v else 0.0 for v in outcomes])
    k = x.shape[1]
    w = np.zeros(k)
    for _ in range(iterations):
        p = 1.0 / (1.0 + np.exp(-(x @ w)))
        grad = x.T @ (y - p) - ridge * w
        hess = -(x * (p * (1 - p))[:, None]).T @ x - ridge * np.eye(k)
        step = np.linalg.solve(hess, grad)
        w = w - step
        if np.abs(step).max() < 1e-10:
            break
    return tuple(float(v) for v in w)


def fit_listed_model(features: Sequence[tuple[float, float]], listed: Sequence[bool],
                     ridge: float = 1e-2, iterations: int = 100) -> tuple[float, float, float]:
    """Logistic regression ``logit q = c0 + c1 margin + c2 heavy/10`` (see
    :func:`fit_logistic`)."""
    if len(features) != len(listed) or not features:
        raise ValueError("fit_listed_model needs one (margin, heavy_atoms) pair per outcome")
    return fit_logistic([(max(0.0, m), h / 10.0) for m, h in features], listed, ridge, iterations)
