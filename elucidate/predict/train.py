"""Train the learned correction (`elucidate.predict.learned`) from the training spectra.

Steps (deterministic given the seed; needs the optional ``train`` extra,
``pip install -e '.[train]'``, for LightGBM):

1. Read the training spectra exactly as the table build does and take the
   recovered carbon assignment from its cache (`iter_assigned_training`;
   the table build runs first when the cache is missing).
2. For every carbon, leave-one-constitution-out table statistics: the
   blended table shift (the shipped table's method, fallback cross-fitted
   on two constitution folds) and, for every sphere 1–5, the median, count
   and spread of the *other* constitutions' examples.  Plus the
   environment descriptors of `atom_descriptors`.
3. Gradient-boosted trees (LightGBM, Ke et al., NeurIPS 2017 — from memory)
   fit the correction ``y - t``; out-of-fold corrections (constitution
   folds) train a second ensemble for the expected absolute error, and a
   scale factor makes 68 % of the held-out carbons fall within one sigma.
4. Write ``shift_trees.npz`` (plain arrays plus a JSON header with
   provenance, settings and held-out figures) next to the table.
"""

from __future__ import annotations

import datetime as _dt
import json
import time
from dataclasses import asdict, dataclass
from pathlib import Path

import click
import numpy as np
from rdkit import Chem

from ..errors import InputError
from .build import (_EXACT_LOO_MAX, ATTRIBUTION, BuildSettings, _file_digest, _group_stats, _loo_predict,
                    _read_corpus, iter_assigned_training)
from .codes import MAX_SPHERE, _shell_steps, graph_from_mol, sphere_codes
from .learned import (DESCRIPTOR_NAMES, FEATURE_NAMES, TABLE_FEATURE_NAMES, LearnedCorrection,
                      TreeEnsemble, atom_descriptors, table_features)

__all__ = ["TrainSettings", "build_trees_command", "sigma_calibration", "train_learned"]


@dataclass(frozen=True)
class TrainSettings:
    """Settings of the learned-correction build (recorded in its header)."""

    seed: int = 7
    rounds: int = 1500
    learning_rate: float = 0.1
    num_leaves: int = 63
    max_depth: int = 8
    min_data_in_leaf: int = 200
    feature_fraction: float = 0.8
    bagging_fraction: float = 0.8
    lambda_l2: float = 1.0
    objective: str = "l1"
    huber_alpha: float = 2.0
    sigma_rounds: int = 300
    folds: int = 3
    threads: int = 2


def _loo_spheres(corpus, y):
    """Per carbon and sphere 0..MAX: leave-one-constitution-out median,
    count and standard deviation of the sphere's code group."""
    n = len(y)
    med = np.full((n, MAX_SPHERE + 1), np.nan)
    cnt = np.zeros((n, MAX_SPHERE + 1), dtype=np.int64)
    std = np.full((n, MAX_SPHERE + 1), np.nan)
    const = corpus.const
    n_const = int(const.max()) + 1
    valid = np.ones(n, dtype=bool)
    for s in range(1, MAX_SPHERE + 1):
        kc = corpus.keys[:, s]
        uniq, gmed, gcnt, gstd, rows, start = _group_stats(kc, y, valid)
        pos = np.searchsorted(uniq, kc)
        gid_rows = np.repeat(np.arange(len(uniq)), gcnt)
        pair_rows = gid_rows * n_const + const[rows]
        pu, pc = np.unique(pair_rows, return_counts=True)
        pidx = np.searchsorted(pu, pos * n_const + const)  # each carbon's (group, own constitution)
        own = pc[pidx]
        # own sums for exact LOO mean / std
        prow = np.searchsorted(pu, pair_rows)
        s1 = np.bincount(prow, weights=y[rows], minlength=len(pu))
        s2 = np.bincount(prow, weights=y[rows] ** 2, minlength=len(pu))
        g1 = np.bincount(gid_rows, weights=y[rows], minlength=len(uniq))
        g2 = np.bincount(gid_rows, weights=y[rows] ** 2, minlength=len(uniq))
        other = gcnt[pos] - own
        ok = other > 0
        o = np.maximum(other, 1)
        m1 = (g1[pos] - s1[pidx]) / o
        var = (g2[pos] - s2[pidx]) / o - m1 ** 2
        cnt[:, s] = other
        std[ok, s] = np.sqrt(np.clip(var[ok], 0, None))
        med[ok, s] = gmed[pos[ok]]
        need = np.nonzero(ok & (gcnt[pos] <= _EXACT_LOO_MAX))[0]
        yv = y[rows].tolist()
        cv = const[rows].tolist()
        a_of = start[pos[need]].tolist()
        b_of = (start[pos[need]] + gcnt[pos[need]]).tolist()
        for c, a, b, oc in zip(need.tolist(), a_of, b_of, const[need].tolist()):
            vals = [v for v, cc in zip(yv[a:b], cv[a:b]) if cc != oc]
            m = len(vals)
            med[c, s] = 0.5 * (vals[(m - 1) // 2] + vals[m // 2])
    return med, cnt, std


def _assigned_y(corpus, data_path, cache_dir):
    """The recovered assignment of every corpus carbon (`iter_assigned_training`,
    which runs the table build first when its cache is missing)."""
    per = list(iter_assigned_training(data_path, cache_dir))
    if len(per) != len(corpus.smiles):
        raise InputError("the cached assignment does not match the training data; delete cache/assigned-* "
                         "and rebuild the table")
    return np.array([per[r][1][ai] for r, ai in zip(corpus.record.tolist(), corpus.rdkit_index.tolist())])


def _descriptors(corpus, progress):
    """Descriptor rows in corpus order (records are contiguous)."""
    out = np.zeros((len(corpus.record), len(DESCRIPTOR_NAMES)), dtype=np.float32)
    row_of = {}
    for c, (r, ai) in enumerate(zip(corpus.record.tolist(), corpus.rdkit_index.tolist())):
        row_of[(r, ai)] = c
    for r, smi in enumerate(corpus.smiles):
        mol = Chem.MolFromSmiles(smi)
        graph = graph_from_mol(mol)
        steps = _shell_steps(graph)
        for i, sym in enumerate(graph.symbol):
            if sym != "C":
                continue
            shells = []
            sphere_codes(graph, i, steps, shells)
            out[row_of[(r, graph.atom_index[i])]] = atom_descriptors(graph, i, shells)
        if progress and (r + 1) % 10000 == 0:
            progress(f"descriptors: {r + 1} spectra")
    return out


def feature_matrix(corpus, y, progress=None):
    """Training features (rows in corpus order) and the table shift."""
    # leave-one-constitution-out blended table shift (fallback cross-fitted on two folds)
    t, _, _, sphere, fb = _loo_predict(corpus, y, np.ones(len(y), dtype=bool), BuildSettings(), cross_fit=True)
    if progress:
        progress(f"table LOO MAE {np.mean(np.abs(t - y)):.3f} ppm")
    med, cnt, std = _loo_spheres(corpus, y)
    n_tab = len(TABLE_FEATURE_NAMES)
    x_tab = np.empty((len(y), n_tab), dtype=np.float32)
    for c in range(len(y)):
        x_tab[c] = table_features(t[c], fb[c], int(sphere[c]), med[c], cnt[c], std[c])
    desc = _descriptors(corpus, progress)
    return np.hstack([x_tab, desc]), t


def sigma_calibration(abs_err, predicted, one=0.68, two=0.95, one_tol=0.05, two_tol=0.03):
    """Affine map ``sigma = offset + scale * predicted`` of a predicted error size.

    Errors of shift predictors have heavier tails than a normal
    distribution, so one factor cannot put both 68 % of the errors within one
    sigma and 95 % within two.  Over a grid of offsets (0 to 2 ppm) and
    scales, this picks the map whose worse miss, measured in units of the
    stated tolerances (``|share within 1 sigma - one| / one_tol`` and the
    same for two sigmas), is smallest.

    Returns
    -------
    (offset, scale) : tuple of float
    """
    abs_err = np.asarray(abs_err, dtype=np.float64)
    predicted = np.asarray(predicted, dtype=np.float64)
    best = None
    for offset in np.arange(0.0, 2.0001, 0.1):
        ratio = np.sort((abs_err - offset) / predicted)
        for q in np.arange(0.55, 0.851, 0.005):
            scale = float(np.quantile(ratio, q))
            if scale <= 0:
                continue
            sig = offset + scale * predicted
            c1 = float(np.mean(abs_err <= sig))
            c2 = float(np.mean(abs_err <= 2 * sig))
            miss = max(abs(c1 - one) / one_tol, abs(c2 - two) / two_tol)
            if best is None or miss < best[0] - 1e-12:
                best = (miss, float(round(offset, 2)), scale)
    return best[1], best[2]


def _lgb_params(s: TrainSettings, objective=None):
    return {
        "objective": objective or s.objective,
        "alpha": s.huber_alpha,
        "learning_rate": s.learning_rate,
        "num_leaves": s.num_leaves,
        "max_depth": s.max_depth,
        "min_data_in_leaf": s.min_data_in_leaf,
        "feature_fraction": s.feature_fraction,
        "bagging_fraction": s.bagging_fraction,
        "bagging_freq": 1,
        "lambda_l2": s.lambda_l2,
        "seed": s.seed,
        "deterministic": True,
        "force_row_wise": True,
        "num_threads": s.threads,
        "verbosity": -1,
    }


def train_learned(data_path, output_path=None, settings=None, cache_dir=None, progress=None,
                  limit=None, table_path=None):
    """Build the learned correction and write it; returns its header."""
    try:
        import lightgbm as lgb
    except ImportError as exc:  # pragma: no cover - depends on the environment
        raise InputError("training the learned predictor needs LightGBM: "
                         "pip install -e '.[train]'") from exc
    settings = settings or TrainSettings()
    data_path = Path(data_path)
    if not data_path.is_file():
        raise InputError(f"training data {data_path} not found; pass the path of train_spectra.jsonl.gz")
    from .model import default_table_path

    output_path = Path(output_path) if output_path else default_table_path().with_name("shift_trees.npz")
    table_path = Path(table_path) if table_path else default_table_path()
    t0 = time.time()
    corpus, _ = _read_corpus(data_path, limit, BuildSettings().min_feature_count, progress)
    y = _assigned_y(corpus, data_path, cache_dir)
    x, t = feature_matrix(corpus, y, progress)
    target = y - t
    if progress:
        progress(f"features {x.shape} in {time.time() - t0:.0f} s")
    params = _lgb_params(settings)
    # out-of-fold corrections for the held-out figures and the sigma model
    fold = corpus.const % settings.folds
    oof = np.zeros(len(y))
    for f in range(settings.folds):
        tr = fold != f
        ds = lgb.Dataset(x[tr], target[tr], feature_name=list(FEATURE_NAMES), free_raw_data=False)
        booster = lgb.train(params, ds, num_boost_round=settings.rounds)
        oof[~tr] = booster.predict(x[~tr])
        if progress:
            e = np.abs(t[~tr] + oof[~tr] - y[~tr])
            progress(f"fold {f}: held-out MAE {e.mean():.3f} ppm ({time.time() - t0:.0f} s)")
    abs_err = np.abs(t + oof - y)
    # sigma model on out-of-fold absolute errors (its own folds for the scale)
    sig_params = _lgb_params(settings, objective="regression")
    sig_params.update(num_leaves=31, learning_rate=0.05)
    x_sig = np.hstack([x, oof[:, None].astype(np.float32)])
    sig_oof = np.zeros(len(y))
    for f in range(settings.folds):
        tr = fold != f
        b = lgb.train(sig_params, lgb.Dataset(x_sig[tr], abs_err[tr]),
                      num_boost_round=settings.sigma_rounds)
        sig_oof[~tr] = b.predict(x_sig[~tr])
    sig_oof = np.maximum(sig_oof, 0.05)
    offset, scale = sigma_calibration(abs_err, sig_oof)
    sig_cal = offset + scale * sig_oof
    cover1 = float(np.mean(abs_err <= sig_cal))
    cover2 = float(np.mean(abs_err <= 2 * sig_cal))
    if progress:
        progress(f"held-out MAE {abs_err.mean():.3f} ppm, p99 {np.percentile(abs_err, 99):.2f}; "
                 f"sigma = {offset:.2f} + {scale:.3f} x predicted: {cover1:.3f} within 1 sigma, "
                 f"{cover2:.3f} within 2")
    # final ensembles on everything
    booster = lgb.train(params, lgb.Dataset(x, target, feature_name=list(FEATURE_NAMES)),
                        num_boost_round=settings.rounds)
    fitted = booster.predict(x)
    x_sig_all = np.hstack([x, fitted[:, None].astype(np.float32)])
    sig_booster = lgb.train(sig_params, lgb.Dataset(x_sig_all, abs_err),
                            num_boost_round=settings.sigma_rounds)
    corr = TreeEnsemble.from_lightgbm_dump(booster.dump_model())
    sig = TreeEnsemble.from_lightgbm_dump(sig_booster.dump_model())
    from .model import ShiftModel, table_version

    table = ShiftModel.load(table_path) if table_path else None
    header = {
        "format": "elucidate-shift-trees/1",
        "source": f"nmrshiftdb2 (open NMR database), training spectra file {data_path.name}",
        "attribution": ATTRIBUTION,
        "build_date": _dt.datetime.now(_dt.timezone.utc).date().isoformat(),
        "data_sha256": _file_digest(data_path),
        "table_version": table_version(table.meta) if table else "unknown",
        "feature_names": list(FEATURE_NAMES),
        "settings": asdict(settings),
        "sigma_scale": scale,
        "sigma_offset": offset,
        "sigma_floor": 0.3,
        "heldout": {
            "carbons": int(len(y)),
            "folds": settings.folds,
            "table_mae_ppm": round(float(np.mean(np.abs(t - y))), 4),
            "mae_ppm": round(float(abs_err.mean()), 4),
            "p99_ppm": round(float(np.percentile(abs_err, 99)), 4),
            "within_1_sigma": round(cover1, 4),
            "within_2_sigma": round(cover2, 4),
        },
        "train_seconds": round(time.time() - t0, 1),
    }
    output_path.parent.mkdir(parents=True, exist_ok=True)
    LearnedCorrection(corr, sig, header).save(output_path)
    return header


@click.command("build-trees")
@click.option("--data", "data_path", required=True, type=click.Path(dir_okay=False),
              help="Training spectra (JSON lines, optionally .gz), e.g. ../shared/data/train_spectra.jsonl.gz.")
@click.option("--output", "output_path", type=click.Path(dir_okay=False), default=None,
              help="Where to write the trees (default: the package's shipped shift_trees.npz).")
@click.option("--table", "table_path", type=click.Path(dir_okay=False), default=None,
              help="The shift table the trees correct (default: the shipped one; it must be built "
                   "from the same training file).")
@click.option("--seed", type=int, default=TrainSettings.seed, show_default=True,
              help="Seed of the tree ensembles (bagging and feature sampling).")
@click.option("--rounds", type=click.IntRange(min=1), default=TrainSettings.rounds, show_default=True,
              help="Boosting rounds of the shift ensemble.")
@click.option("--cache-dir", type=click.Path(file_okay=False), default=None,
              help="Where the table build left the recovered assignment (default: cache/ in the repository).")
def build_trees_command(data_path, output_path, table_path, seed, rounds, cache_dir):
    """Train the learned shift correction (needs: pip install -e '.[train]').

    Takes the carbon assignment the table build recovered, computes
    leave-one-constitution-out table statistics and environment descriptors
    for every training carbon, and fits gradient-boosted trees for the
    correction and for the per-carbon uncertainty.  Deterministic given the
    seed; about 8 minutes on 2 cores.

    Example: elucidate build-trees --data ../shared/data/train_spectra.jsonl.gz
    """
    header = train_learned(data_path, output_path, settings=TrainSettings(seed=seed, rounds=rounds),
                           cache_dir=cache_dir, table_path=table_path,
                           progress=lambda msg: click.echo(msg, err=True))
    click.echo(json.dumps({k: header[k] for k in ("heldout", "sigma_scale", "train_seconds")}, indent=2))
