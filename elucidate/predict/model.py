"""The shipped 13C shift model: environment-code table plus additive fallback.

Prediction for one carbon (method):

1. Build its environment codes, spheres 0–5 (`elucidate.predict.codes`,
   HOSE-style after Bremser, *Anal. Chim. Acta* 1978, 103, 355 — from memory).
2. Look up the deepest sphere ``s >= 1`` whose code has training examples;
   take the median shift ``m`` of those examples, their count ``n`` and
   spread, and the median ``m'`` of the next shallower sphere.
3. Compute the additive fallback ``r``: a per-atom-type base shift plus ridge
   increments of path features (distance <= 4), in the spirit of additive
   increment schemes such as Grant & Paul, *J. Am. Chem. Soc.* 1964, 86, 2984
   (from memory), plus one shrunken increment per environment code of
   spheres 1–3 (a random-effect-like term: the ridge penalty weights each
   code by its number of examples), all fitted jointly by ridge regression
   on the training set.
4. Blend: ``shift = r + a * (m - r) + b * (m' - r)``; the weights ``a, b``
   (a linear stacking of the three estimates, least squares per sphere,
   count bucket, spread bucket and H count) and the uncertainty
   ``sigma[s, n]`` are calibrated at build time on leave-one-constitution-out
   predictions of the training set.  When no
   sphere >= 1 matches, the fallback alone is used (reported sphere 0).

Per-carbon results are cached by the sphere-5 code (which determines the
fallback features too), so ranking many related candidates is cheap.
"""

from __future__ import annotations

import copy
import json
from itertools import repeat
from pathlib import Path

import numpy as np

from .codes import MAX_SPHERE, _shell_steps, code_key, graph_from_mol, path_features, sphere_codes

__all__ = [
    "CODE_FEATURE_SPHERES",
    "COUNT_BUCKETS",
    "SPREAD_BUCKETS",
    "count_bucket",
    "ShiftModel",
    "default_table_path",
    "default_predictor_label",
    "default_table_version",
    "PREDICTORS",
    "default_trees_path",
    "load_default_model",
    "load_model",
    "load_search_model",
    "table_version",
]

#: Spheres whose codes carry a fallback increment of their own.
CODE_FEATURE_SPHERES = (1, 2, 3)

#: Spread (ppm) bounds of the buckets used for blending weights.
SPREAD_BUCKETS = (0.5, 1.5, 3.0)

#: Lower bounds of the example-count buckets used for blending and sigma.
COUNT_BUCKETS = (1, 2, 3, 5, 10, 20)

_SIGMA_FLOOR = 0.3


def count_bucket(n: int) -> int:
    """Index of the count bucket of ``n`` examples (``n >= 1``)."""
    b = 0
    for i, lo in enumerate(COUNT_BUCKETS):
        if n >= lo:
            b = i
    return b


def default_table_path() -> Path:
    """Path of the table shipped inside the package."""
    from ..datafiles import data_file

    return data_file("shift_table.npz")


class ShiftModel:
    """Environment table + ridge fallback + calibrated blending.

    Build one with `ShiftModel.load` (or `elucidate.predict.build.build_table`
    to make a table); predict with `predict_graph`.
    """

    def __init__(self, keys, median, count, spread, code_weight, ridge_weights, ridge_base,
                 h_means, alpha, sigma, meta):
        self._row = {int(k): i for i, k in enumerate(np.asarray(keys).tolist())}
        self._median = np.asarray(median, dtype=np.float64).tolist()
        self._count = np.asarray(count, dtype=np.int64).tolist()
        self._spread = np.asarray(spread, dtype=np.float64).tolist()
        self._code_w = np.asarray(code_weight, dtype=np.float64).tolist()
        self._w = dict(ridge_weights)
        self._base = dict(ridge_base)
        self._h_means = {int(k): float(v) for k, v in h_means.items()}
        self._alpha = [[[[(float(c[0]), float(c[1])) for c in hs] for hs in sb] for sb in r]
                       for r in alpha]
        self._sigma = [list(map(float, r)) for r in sigma]
        self.meta = meta
        self._cache = {}
        self.trees = None

    def with_trees(self, trees) -> "ShiftModel":
        """This table with a learned correction (`LearnedCorrection`) attached.

        Returns a new model that shares the table's arrays and has a cache
        of its own; ``None`` gives the table alone.
        """
        if trees is not None and trees.table_version != table_version(self.meta):
            from ..errors import InputError

            raise InputError(
                f"the learned correction was trained on shift table {trees.table_version} but the "
                f"table is {table_version(self.meta)}; retrain it with `elucidate build-trees`")
        other = copy.copy(self)
        other.trees = trees
        other._cache = {}
        return other

    @property
    def name(self) -> str:
        """Which predictor produces the shifts: ``"table+trees"`` or ``"table"``."""
        return "table+trees" if self.trees is not None else "table"

    # -- persistence -----------------------------------------------------
    def save(self, path) -> None:
        """Write the model as a compressed ``.npz`` with a JSON header."""
        keys = np.array(sorted(self._row), dtype=np.uint64)
        order = [self._row[int(k)] for k in keys.tolist()]
        feats = sorted(self._w)
        bases = sorted(self._base)
        header = dict(self.meta)
        header["alpha"] = self._alpha
        header["sigma"] = self._sigma
        header["h_means"] = {str(k): v for k, v in sorted(self._h_means.items())}
        header["count_buckets"] = list(COUNT_BUCKETS)
        with open(path, "wb") as fh:
            np.savez_compressed(
                fh,
                header=np.array(json.dumps(header, sort_keys=True)),
                keys=keys,
                median=np.array([self._median[i] for i in order], dtype=np.float32),
                count=np.array([self._count[i] for i in order], dtype=np.int32),
                spread=np.array([self._spread[i] for i in order], dtype=np.float32),
                code_weight=np.array([self._code_w[i] for i in order], dtype=np.float32),
                feature_names=np.array("\n".join(feats)),
                feature_weights=np.array([self._w[f] for f in feats], dtype=np.float32),
                base_names=np.array("\n".join(bases)),
                base_values=np.array([self._base[b] for b in bases], dtype=np.float32),
            )

    @classmethod
    def load(cls, path) -> "ShiftModel":
        """Read a model written by `save`."""
        with np.load(path, allow_pickle=False) as z:
            header = json.loads(str(z["header"]))
            feats = str(z["feature_names"]).split("\n") if str(z["feature_names"]) else []
            bases = str(z["base_names"]).split("\n") if str(z["base_names"]) else []
            return cls(
                keys=z["keys"],
                median=z["median"],
                count=z["count"],
                spread=z["spread"],
                code_weight=z["code_weight"],
                ridge_weights=dict(zip(feats, z["feature_weights"].astype(float).tolist())),
                ridge_base=dict(zip(bases, z["base_values"].astype(float).tolist())),
                h_means=header.pop("h_means"),
                alpha=header.pop("alpha"),
                sigma=header.pop("sigma"),
                meta=header,
            )

    # -- prediction ------------------------------------------------------
    def fallback(self, feats, codes, hydrogens: int) -> float:
        """Additive fallback shift from path features (first = centre type)
        and the code increments of spheres `CODE_FEATURE_SPHERES`."""
        return self._fallback(feats, _CodeKeys(codes), hydrogens)

    def _fallback(self, feats, keys: "_CodeKeys", hydrogens: int) -> float:
        base = self._base.get(feats[0])
        if base is None:
            # unseen centre type: mean shift of carbons with as many H (CH4 -> CH3)
            return self._h_means.get(min(hydrogens, 3), 100.0)
        total = base + sum(map(self._w.get, sorted(feats[1:]), repeat(0.0)))
        row = self._row
        for s in CODE_FEATURE_SPHERES:
            i = row.get(keys[s])
            if i is not None:
                total += self._code_w[i]
        return total

    def lookup(self, codes):
        """Deepest sphere >= 1 with examples.

        Returns ``(sphere, median, count, spread, shallower median)``; the
        last is the median one sphere up (equal to ``median`` at sphere 1);
        ``(0, nan, 0, nan, nan)`` when nothing matches.
        """
        return self._lookup(_CodeKeys(codes))

    def _lookup(self, keys: "_CodeKeys"):
        row = self._row
        for s in range(MAX_SPHERE, 0, -1):
            i = row.get(keys[s])
            if i is not None:
                j = row.get(keys[s - 1]) if s > 1 else None
                up = self._median[j] if j is not None else self._median[i]
                return s, self._median[i], self._count[i], self._spread[i], up
        nan = float("nan")
        return 0, nan, 0, nan, nan

    def combine(self, sphere, median, count, spread, up, fb, hydrogens=0):
        """Blend table medians and fallback; return ``(shift, sigma)``."""
        if sphere == 0:
            return fb, self._sigma[0][0]
        b = count_bucket(count)
        sp = spread if spread == spread else 0.0
        sb = sum(1 for t in SPREAD_BUCKETS if sp >= t)
        a1, a2 = self._alpha[sphere][b][sb][min(max(hydrogens, 0), 3)]
        shift = fb + a1 * (median - fb) + a2 * (up - fb)
        sig = self._sigma[sphere][b]
        if count >= 3 and spread == spread:
            sig = (0.5 * sig * sig + 0.5 * spread * spread) ** 0.5
        return shift, max(sig, _SIGMA_FLOOR)

    def _sphere_stats(self, keys: "_CodeKeys"):
        """Per sphere 0..MAX_SPHERE: median, count and spread of the code's
        examples (NaN, 0, NaN where the code is not in the table)."""
        nan = float("nan")
        med = [nan] * (MAX_SPHERE + 1)
        cnt = [0] * (MAX_SPHERE + 1)
        spr = [nan] * (MAX_SPHERE + 1)
        row = self._row
        for s in range(1, MAX_SPHERE + 1):
            i = row.get(keys[s])
            if i is not None:
                med[s] = self._median[i]
                cnt[s] = self._count[i]
                spr[s] = self._spread[i]
        return med, cnt, spr

    def predict_graph(self, graph):
        """Predict all carbons of a `MolGraph`.

        With a learned correction attached (`with_trees`), the carbons not yet
        in the cache are corrected together in one batch -- except a carbon
        whose sphere-5 code takes in its whole molecule and is in the table:
        that molecule itself was measured, and the table's value stands (the
        trees learned corrections for environments seen in *other* molecules
        only; see docs/prediction.md).

        Returns
        -------
        list of tuple
            ``(local index, shift, sigma, sphere, source)`` per carbon,
            ascending local index; ``source`` says which predictor gave the
            value (``"table"`` or ``"table+trees"``).
        """
        out = []
        cache = self._cache
        steps = _shell_steps(graph)
        trees = self.trees
        pending = []
        for i, sym in enumerate(graph.symbol):
            if sym != "C":
                continue
            shells = []
            codes = sphere_codes(graph, i, steps, shells)
            key = codes[MAX_SPHERE]
            hit = cache.get(key)
            if hit is None:
                feats = path_features(graph, i, shells)
                keys = _CodeKeys(codes)
                s, m, n, spread, up = self._lookup(keys)
                fb = self._fallback(feats, keys, graph.hydrogens[i])
                shift, sig = self.combine(s, m, n, spread, up, fb, graph.hydrogens[i])
                # not for a carbon whose whole molecule lies within sphere 5 and is in the table
                if trees is not None and not (s == MAX_SPHERE and not shells[-1][0]):
                    med, cnt, spr = self._sphere_stats(keys)
                    pending.append((len(out), i, key, s, shift,
                                    trees.features(graph, i, shells, shift, fb, s, med, cnt, spr)))
                    out.append(None)
                    continue
                hit = (shift, sig, s, "table")
                if len(cache) > 500_000:
                    cache.clear()
                cache[key] = hit
            out.append((i, *hit))
        if pending:
            shifts, sigmas = trees.correct([p[4] for p in pending], [p[5] for p in pending])
            if len(cache) > 500_000:
                cache.clear()
            for (pos, i, key, s, _, _), sh, sg in zip(pending, shifts.tolist(), sigmas.tolist()):
                cache[key] = (sh, sg, s, "table+trees")
                out[pos] = (i, sh, sg, s, "table+trees")
        return out

    def predict_mol(self, mol, with_source: bool = False):
        """`predict_graph` on an RDKit molecule; indices are RDKit indices.

        Returns ``(atom index, hydrogens, shift, sigma, sphere)`` per carbon,
        plus the predictor that gave the value with ``with_source``.
        """
        graph = graph_from_mol(mol)
        if with_source:
            return [(graph.atom_index[i], graph.hydrogens[i], sh, sg, s, src)
                    for i, sh, sg, s, src in self.predict_graph(graph)]
        return [(graph.atom_index[i], graph.hydrogens[i], sh, sg, s)
                for i, sh, sg, s, _ in self.predict_graph(graph)]


#: code string -> `code_key` (a pure function; shallow codes recur in every
#: molecule, so their digests are computed once).  Emptied at _KEYS_SIZE.
_KEYS: dict[str, int] = {}
_KEYS_SIZE = 100_000


class _CodeKeys:
    """`code_key` of each code of a list, computed on first use."""

    __slots__ = ("codes", "keys")

    def __init__(self, codes):
        self.codes = codes
        self.keys = [None] * len(codes)

    def __getitem__(self, s: int) -> int:
        k = self.keys[s]
        if k is None:
            code = self.codes[s]
            k = _KEYS.get(code)
            if k is None:
                if len(_KEYS) >= _KEYS_SIZE:
                    _KEYS.clear()
                k = _KEYS[code] = code_key(code)
            self.keys[s] = k
        return k


_DEFAULT = None
_TABLE = None

#: Predictor choices of `load_model`: the trees when present, the table alone, the table + trees.
PREDICTORS = ("auto", "table", "table+trees")


def default_trees_path() -> Path:
    """Path of the learned correction shipped inside the package."""
    from ..datafiles import data_file

    return data_file("shift_trees.npz")


def load_model(table_path=None, trees_path=None, kind: str = "auto") -> ShiftModel:
    """A shift table, with a learned correction attached as ``kind`` says.

    Parameters
    ----------
    table_path, trees_path : path-like, optional
        Default: the shipped ``shift_table.npz`` and ``shift_trees.npz``.
    kind : {"auto", "table", "table+trees"}
        ``"table"``: the environment table alone; ``"table+trees"``: the
        table corrected by the learned trees (error if they are missing);
        ``"auto"``: the trees when the file is there.

    Raises
    ------
    InputError
        For an unknown ``kind`` or a missing file.
    """
    from ..errors import InputError

    if kind not in PREDICTORS:
        raise InputError(f"unknown predictor {kind!r}; choose one of {', '.join(PREDICTORS)}")
    table_path = Path(table_path) if table_path else default_table_path()
    if not table_path.is_file():
        raise InputError(f"the shift table {table_path} is missing; reinstall the package or "
                         "rebuild it with `elucidate build-table --data TRAIN.jsonl.gz`")
    model = ShiftModel.load(table_path)
    trees_path = Path(trees_path) if trees_path else default_trees_path()
    if kind == "table+trees" or (kind == "auto" and trees_path.is_file()):
        if not trees_path.is_file():
            raise InputError(f"the learned correction {trees_path} is missing; build it with "
                             "`elucidate build-trees --data TRAIN.jsonl.gz` or use the table alone")
        from .learned import LearnedCorrection

        model = model.with_trees(LearnedCorrection.load(trees_path))
    return model


def load_search_model() -> ShiftModel:
    """The shipped table alone: the fast predictor every search strategy
    scores with (thousands of structures a second).  Loaded once per process."""
    global _TABLE
    if _TABLE is None:
        _TABLE = load_model(kind="table")
    return _TABLE


def load_default_model() -> ShiftModel:
    """The best shipped predictor, loaded once per process (lazily): the
    table with the learned correction attached when the package ships it.
    Used by `elucidate predict` and by a solve's ``rerank="trees"``; shares
    the table's arrays with `load_search_model`."""
    global _DEFAULT
    if _DEFAULT is None:
        table = load_search_model()
        trees_path = default_trees_path()
        if trees_path.is_file():
            from .learned import LearnedCorrection

            _DEFAULT = table.with_trees(LearnedCorrection.load(trees_path))
        else:
            _DEFAULT = table
    return _DEFAULT


def table_version(meta: dict) -> str:
    """Short identifier of a shift table: build date + training-data checksum prefix.

    Parameters
    ----------
    meta : dict
        The table's provenance header (``ShiftModel.meta``), with
        ``build_date`` and ``data_sha256``.

    Returns
    -------
    str
        E.g. ``"2026-12-02+dfab72eb"`` (the date the table was built and the
        first 8 hex digits of the SHA-256 of its training data); ``"unknown"``
        parts when the header lacks them.
    """
    date = str(meta.get("build_date") or "unknown")
    sha = str(meta.get("data_sha256") or "unknown")[:8]
    return f"{date}+{sha}"


def default_predictor_label() -> str:
    """The best shipped predictor (`load_default_model`): ``"table"`` or
    ``"table+trees <version>"`` (the learned correction's build date and
    training-data checksum prefix)."""
    model = load_default_model()
    if model.trees is None:
        return "table"
    return f"table+trees {table_version(model.trees.meta)}"


def default_table_version() -> str:
    """:func:`table_version` of the shipped table (reads only its header when
    the table is not loaded yet)."""
    if _DEFAULT is not None:
        return table_version(_DEFAULT.meta)
    path = default_table_path()
    if not path.exists():
        return "missing"
    with np.load(path, allow_pickle=False) as z:
        return table_version(json.loads(str(z["header"])))
