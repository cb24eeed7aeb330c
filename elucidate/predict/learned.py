"""Learned correction of the environment table: gradient-boosted trees.

Method (stacked generalisation, Wolpert, *Neural Networks* 1992, 5, 241 —
from memory): the table model of `elucidate.predict.model` gives, per carbon,
a blended shift ``t`` and the statistics of every environment sphere it
matched; a regression-tree ensemble trained by gradient boosting (Friedman,
*Ann. Stat.* 2001, 29, 1189 — from memory; fitted with LightGBM, Ke et al.,
NeurIPS 2017 — from memory, at build time only) predicts the correction
``y - t`` from those statistics and from descriptors of the carbon's
surroundings (element and bond counts per graph distance, ring-closure marks,
charges).  A second, smaller ensemble predicts the expected absolute error
of the corrected shift; ``sigma`` is an affine function of that value,
calibrated on held-out training carbons (68 % within one sigma, two-sigma
share as close to 95 % as the offset allows; `elucidate.predict.train.sigma_calibration`).

Training uses leave-one-constitution-out table statistics, so the trees
learn how far the table can be trusted for an environment it has *not*
seen the molecule itself in (`elucidate.predict.train`).  At run time the
fitted trees are plain arrays evaluated with numpy (`TreeEnsemble`), so the
installed tool needs no training library.

Every feature is a function of the carbon's sphere-5 environment code, so
predictions are cached per code like the table's.
"""

from __future__ import annotations

import json

import numpy as np

from .codes import MAX_SPHERE

__all__ = [
    "DESCRIPTOR_NAMES",
    "TABLE_FEATURE_NAMES",
    "FEATURE_NAMES",
    "LearnedCorrection",
    "TreeEnsemble",
    "atom_descriptors",
    "table_features",
]

#: Element classes counted per graph distance (aromatic atoms apart).
ELEMENT_CLASSES = ("C", "Ca", "N", "Na", "O", "Oa", "S", "Sa", "F", "Cl", "Br", "I", "P", "X")
_ELEMENT_INDEX = {e: j for j, e in enumerate(ELEMENT_CLASSES)}
#: Graph distances whose atoms are counted by element class.
DESCRIPTOR_DISTANCE = 4
_BONDS = ("-", "=", "#", ":")
_BOND_INDEX = {b: j for j, b in enumerate(_BONDS)}
_BOND_NAMES = ("single", "double", "triple", "aromatic")
#: Graph distances whose atoms are counted by the bond that reaches them.
BOND_DISTANCE = 3


def _descriptor_names():
    names = ["hydrogens", "aromatic", "charged", "degree"]
    names += [f"centre_{b}" for b in _BOND_NAMES]
    for k in range(1, DESCRIPTOR_DISTANCE + 1):
        names += [f"d{k}_{e}" for e in ELEMENT_CLASSES]
    for k in range(1, BOND_DISTANCE + 1):
        names += [f"d{k}_{b}" for b in _BOND_NAMES]
    names += ["d1_hydrogens", "d1_hetero_h", "d1_degree_sum", "d1_charged", "d2_charged"]
    for k in range(1, MAX_SPHERE + 1):
        names += [f"d{k}_atoms", f"d{k}_inner", f"d{k}_multi"]
    return tuple(names)


DESCRIPTOR_NAMES = _descriptor_names()
#: Positions of the first entry of each block of `DESCRIPTOR_NAMES`.
_AT = {name: j for j, name in enumerate(DESCRIPTOR_NAMES)}


def _token_class(tok: str) -> int:
    base = tok.rstrip("+-")
    j = _ELEMENT_INDEX.get(base)
    return _ELEMENT_INDEX["X"] if j is None else j


def atom_descriptors(graph, i: int, shells) -> list:
    """Descriptors of carbon ``i`` of a `MolGraph` (see `DESCRIPTOR_NAMES`).

    Parameters
    ----------
    graph : MolGraph
    i : int
        Local index of the carbon.
    shells : list
        The per-sphere ``(found, inner, multi)`` records that
        `elucidate.predict.codes.sphere_codes` appends (spheres 1..5, fewer
        when the molecule is exhausted).

    Returns
    -------
    list of float
    """
    token = graph.token
    hyd = graph.hydrogens
    adj = graph.adjacency
    out = [0.0] * len(DESCRIPTOR_NAMES)
    tok = token[i]
    out[0] = hyd[i]
    out[1] = 1.0 if tok.rstrip("+-").endswith("a") else 0.0
    out[2] = 1.0 if tok[-1] in "+-" else 0.0
    out[3] = len(adj[i])
    for _, b in adj[i]:
        j = _BOND_INDEX.get(b)
        if j is not None:
            out[_AT["centre_single"] + j] += 1
    pos = _AT["d1_C"]
    n_el = len(ELEMENT_CLASSES)
    bond_pos = _AT["d1_single"]
    extra = _AT["d1_hydrogens"]
    ring_pos = _AT["d1_atoms"]
    for k, (found, inner, multi) in enumerate(shells[:MAX_SPHERE], start=1):
        if k <= DESCRIPTOR_DISTANCE:
            base = pos + (k - 1) * n_el
            for q in found:
                out[base + _token_class(token[q])] += 1
        if k <= BOND_DISTANCE:
            base = bond_pos + (k - 1) * len(_BONDS)
            first = graph.first_token if k == 1 else token
            for q, lab in found.items():
                b = lab[-(len(first[q]) + 1)]
                j = _BOND_INDEX.get(b)
                if j is not None:
                    out[base + j] += 1
        if k == 1:
            for q in found:
                out[extra] += hyd[q]
                if graph.symbol[q] != "C" and hyd[q]:
                    out[extra + 1] += 1
                out[extra + 2] += len(adj[q])
                if token[q][-1] in "+-":
                    out[extra + 3] += 1
        elif k == 2:
            for q in found:
                if token[q][-1] in "+-":
                    out[extra + 4] += 1
        r = ring_pos + 3 * (k - 1)
        out[r] = len(found)
        out[r + 1] = inner
        out[r + 2] = multi
    return out


#: Table statistics used as features (relative to the table's own shift).
TABLE_FEATURE_NAMES = (
    ("table_shift", "fallback_minus_table", "deepest_sphere", "deepest_log_count", "deepest_spread")
    + tuple(f"s{s}_median_minus_table" for s in range(1, MAX_SPHERE + 1))
    + tuple(f"s{s}_log_count" for s in range(1, MAX_SPHERE + 1))
    + tuple(f"s{s}_spread" for s in range(1, MAX_SPHERE + 1))
)

FEATURE_NAMES = TABLE_FEATURE_NAMES + DESCRIPTOR_NAMES


def table_features(t, fb, sphere, medians, counts, spreads) -> list:
    """Table-statistics features of one carbon (see `TABLE_FEATURE_NAMES`).

    Parameters
    ----------
    t : float
        The table's blended shift.
    fb : float
        The additive fallback shift.
    sphere : int
        Deepest matched sphere (0 = none).
    medians, counts, spreads : sequence
        Per sphere 0..MAX_SPHERE: median (NaN when unmatched), number of
        examples (0 when unmatched), standard deviation (NaN when unmatched).
    """
    nan = float("nan")
    out = [t, fb - t, float(sphere)]
    if sphere > 0:
        out += [float(np.log1p(counts[sphere])), spreads[sphere]]
    else:
        out += [0.0, nan]
    out += [(medians[s] - t) if counts[s] > 0 else nan for s in range(1, MAX_SPHERE + 1)]
    out += [float(np.log1p(counts[s])) for s in range(1, MAX_SPHERE + 1)]
    out += [spreads[s] if counts[s] > 0 else nan for s in range(1, MAX_SPHERE + 1)]
    return out


class TreeEnsemble:
    """Sum of binary regression trees, evaluated with numpy.

    Each internal node sends a row left when ``x[feature] <= threshold``, or
    when the value is missing (NaN) and the node's ``default_left`` is set;
    leaves point to themselves, so every row can take the same number of
    steps (the deepest tree's depth).  Nodes of all trees live in flat arrays.
    """

    def __init__(self, feature, threshold, left, right, default_left, value, roots, depth,
                 base=0.0):
        self.feature = np.asarray(feature, dtype=np.int32)
        self.threshold = np.asarray(threshold, dtype=np.float64)
        self.left = np.asarray(left, dtype=np.int32)
        self.right = np.asarray(right, dtype=np.int32)
        self.default_left = np.asarray(default_left, dtype=bool)
        self.value = np.asarray(value, dtype=np.float64)
        self.roots = np.asarray(roots, dtype=np.int32)
        self.depth = int(depth)
        self.base = float(base)

    @classmethod
    def from_lightgbm_dump(cls, dump: dict) -> "TreeEnsemble":
        """Convert ``lightgbm.Booster.dump_model()`` output (numerical
        splits ``<=`` only; missing values as NaN or none)."""
        feature, threshold, left, right, dleft, value, roots = [], [], [], [], [], [], []
        max_depth = 0

        def add(node, depth):
            nonlocal max_depth
            me = len(feature)
            feature.append(0)
            threshold.append(0.0)
            left.append(me)
            right.append(me)
            dleft.append(True)
            value.append(0.0)
            if "leaf_value" in node:
                value[me] = float(node["leaf_value"])
                max_depth = max(max_depth, depth)
                return me
            if node.get("decision_type", "<=") != "<=":
                raise ValueError(f"unsupported split {node.get('decision_type')!r}")
            if node.get("missing_type", "None") not in ("None", "NaN"):
                raise ValueError(f"unsupported missing type {node.get('missing_type')!r}")
            feature[me] = int(node["split_feature"])
            threshold[me] = float(node["threshold"])
            dleft[me] = bool(node.get("default_left", True)) and node.get("missing_type") == "NaN"
            left[me] = add(node["left_child"], depth + 1)
            right[me] = add(node["right_child"], depth + 1)
            return me

        for tree in dump["tree_info"]:
            roots.append(add(tree["tree_structure"], 0))
        return cls(feature, threshold, left, right, dleft, value, roots, max_depth)

    def predict(self, x) -> np.ndarray:
        """Sum of the trees for each row of ``x`` (shape ``(rows, features)``)."""
        x = np.asarray(x, dtype=np.float64)
        if x.ndim != 2:
            raise ValueError("x must be 2-D (rows, features)")
        n = x.shape[0]
        if n == 0:
            return np.zeros(0)
        node = np.broadcast_to(self.roots, (n, len(self.roots))).copy()
        rows = np.arange(n)[:, None]
        feat, thr, lo, hi, dl = self.feature, self.threshold, self.left, self.right, self.default_left
        for _ in range(self.depth):
            v = x[rows, feat[node]]
            go = (v <= thr[node]) | (np.isnan(v) & dl[node])
            node = np.where(go, lo[node], hi[node])
        return self.value[node].sum(axis=1) + self.base

    def to_arrays(self, prefix: str) -> dict:
        """Arrays for ``np.savez`` under ``prefix``."""
        return {
            f"{prefix}_feature": self.feature.astype(np.int16 if self.feature.max(initial=0) < 32000 else np.int32),
            f"{prefix}_threshold": self.threshold,
            f"{prefix}_left": self.left,
            f"{prefix}_right": self.right,
            f"{prefix}_default_left": self.default_left,
            f"{prefix}_value": self.value,
            f"{prefix}_roots": self.roots,
            f"{prefix}_meta": np.array(json.dumps({"depth": self.depth, "base": self.base})),
        }

    @classmethod
    def from_arrays(cls, z, prefix: str) -> "TreeEnsemble":
        """Inverse of `to_arrays` (``z``: a mapping such as an ``NpzFile``)."""
        meta = json.loads(str(z[f"{prefix}_meta"]))
        return cls(z[f"{prefix}_feature"], z[f"{prefix}_threshold"], z[f"{prefix}_left"],
                   z[f"{prefix}_right"], z[f"{prefix}_default_left"], z[f"{prefix}_value"],
                   z[f"{prefix}_roots"], meta["depth"], meta["base"])


class LearnedCorrection:
    """The shipped correction: a shift ensemble, a sigma ensemble and the
    sigma scale, with the provenance header of its build."""

    def __init__(self, correction: TreeEnsemble, sigma: TreeEnsemble, meta: dict):
        self.correction = correction
        self.sigma = sigma
        self.meta = meta
        self.scale = float(meta["sigma_scale"])
        self.offset = float(meta.get("sigma_offset", 0.0))
        self.floor = float(meta.get("sigma_floor", 0.3))
        self.table_version = str(meta.get("table_version", "unknown"))
        names = tuple(meta.get("feature_names", FEATURE_NAMES))
        if names != FEATURE_NAMES:
            raise ValueError("the learned correction was built with other features; rebuild it "
                             "with `elucidate build-trees`")

    @staticmethod
    def features(graph, i, shells, t, fb, sphere, medians, counts, spreads) -> list:
        """Feature row of one carbon (`FEATURE_NAMES`)."""
        return table_features(t, fb, sphere, medians, counts, spreads) + atom_descriptors(graph, i, shells)

    def correct(self, table_shifts, rows):
        """Corrected shifts and sigmas for feature ``rows`` whose table
        shifts are ``table_shifts``."""
        x = np.asarray(rows, dtype=np.float64)
        delta = self.correction.predict(x)
        scale = self.sigma.predict(np.hstack([x, delta[:, None]]))
        sig = np.maximum(self.offset + np.maximum(scale, 0.05) * self.scale, self.floor)
        return np.asarray(table_shifts, dtype=np.float64) + delta, sig

    def save(self, path) -> None:
        """Write as a compressed ``.npz`` (arrays plus a JSON header)."""
        arrays = {"header": np.array(json.dumps(self.meta, sort_keys=True))}
        arrays.update(self.correction.to_arrays("corr"))
        arrays.update(self.sigma.to_arrays("sigma"))
        with open(path, "wb") as fh:
            np.savez_compressed(fh, **arrays)

    @classmethod
    def load(cls, path) -> "LearnedCorrection":
        """Read a file written by `save`."""
        with np.load(path, allow_pickle=False) as z:
            meta = json.loads(str(z["header"]))
            return cls(TreeEnsemble.from_arrays(z, "corr"), TreeEnsemble.from_arrays(z, "sigma"), meta)
