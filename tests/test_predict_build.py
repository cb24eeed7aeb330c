"""Build of the shift table on a small sample of the open nmrshiftdb2 data
(../shared/data/train_spectra.jsonl.gz); skipped when the data are absent.
"""

from __future__ import annotations

import gzip
import json
from pathlib import Path

import numpy as np
import pytest
from rdkit import Chem

from elucidate.errors import InputError
from elucidate.predict.build import BuildSettings, build_table, iter_assigned_training
from elucidate.predict.model import ShiftModel
from elucidate.predict.ridge import fit_ridge

DATA = Path(__file__).resolve().parents[1].parent / "shared" / "data"
TRAIN = DATA / "train_spectra.jsonl.gz"

needs_data = pytest.mark.skipif(
    not TRAIN.is_file(),
    reason=f"open nmrshiftdb2 training data not found at {TRAIN} (not shipped with the repo)")

LIMIT = 400


@pytest.fixture(scope="module")
def small_build(tmp_path_factory):
    out = tmp_path_factory.mktemp("build")
    settings = BuildSettings(rounds=2)
    h1 = build_table(TRAIN, out / "a.npz", limit=LIMIT, settings=settings,
                     cache_dir=out / "cache", build_date="2000-01-01")
    h2 = build_table(TRAIN, out / "b.npz", limit=LIMIT, settings=settings,
                     cache_dir=False, build_date="2000-01-01")
    return out, h1, h2


@needs_data
def test_build_is_deterministic(small_build):
    out, h1, h2 = small_build
    assert h1 == h2
    a = np.load(out / "a.npz")
    b = np.load(out / "b.npz")
    for name in a.files:
        assert np.array_equal(a[name], b[name]), name


@needs_data
def test_build_header_provenance(small_build):
    out, h1, _ = small_build
    model = ShiftModel.load(out / "a.npz")
    meta = model.meta
    assert "nmrshiftdb2" in meta["attribution"] and "Steinbeck" in meta["attribution"]
    assert meta["build_date"] == "2000-01-01"
    assert meta["counts"]["spectra_used"] <= LIMIT
    assert meta["settings"]["rounds"] == 2


@needs_data
def test_assignment_cache_is_consistent_with_data(small_build):
    # every yielded assignment must be a permutation of the record's observed
    # shifts within each multiplicity group (source: the training file itself)
    out, _, _ = small_build
    records = []
    with gzip.open(TRAIN, "rt") as fh:
        for i, line in enumerate(fh):
            if i >= LIMIT:
                break
            records.append(json.loads(line))
    items = list(iter_assigned_training(TRAIN, cache_dir=out / "cache", limit=LIMIT))
    assert len(items) == len(records)
    mult = {0: "C", 1: "CH", 2: "CH2", 3: "CH3"}
    for (smi, shifts), rec in zip(items, records):
        mol = Chem.MolFromSmiles(smi)
        assert Chem.MolToSmiles(Chem.MolFromSmiles(rec["smiles"]), isomericSmiles=False) == smi
        got = {}
        for idx, v in shifts.items():
            atom = mol.GetAtomWithIdx(idx)
            assert atom.GetSymbol() == "C"
            got.setdefault(mult[atom.GetTotalNumHs()], []).append(v)
        want = {}
        for v, m in rec["shifts"]:
            want.setdefault(m, []).append(v)
        for m in want:
            # symmetry classes are averaged, so compare sums and ranges
            assert len(got[m]) == len(want[m])
            assert abs(sum(got[m]) - sum(want[m])) < 0.05 * len(want[m])
            assert min(want[m]) - 1e-3 <= min(got[m]) and max(got[m]) <= max(want[m]) + 1e-3


def test_build_missing_file_is_input_error(tmp_path):
    with pytest.raises(InputError, match="not found"):
        build_table(tmp_path / "nope.jsonl.gz", tmp_path / "t.npz")


def test_ridge_recovers_known_weights():
    # common practice, no source: an exactly linear system is recovered
    rng = np.random.default_rng(0)
    n, f = 400, 12
    x = rng.integers(0, 2, size=(n, f))
    w_true = rng.normal(size=f) * 5
    y = x @ w_true
    rows, cols = np.nonzero(x)
    w = fit_ridge(rows, cols, y, f, lam=1e-6, tol=1e-12, max_iter=2000)
    assert np.allclose(w, w_true, atol=1e-3)


def test_assignment_keeps_symmetry_classes_whole():
    # common practice, no source: symmetry-equivalent carbons carry one shift.
    # Toluene-like CH group: classes ortho (2), meta (2), para (1); observed
    # lines 125.3 (1 C), 128.3 (2 C), 129.1 (2 C).  Even with predictions that
    # put meta below para, the para class must take the one-carbon line and
    # each two-carbon class a two-carbon line (no splitting of a class).
    from types import SimpleNamespace

    from elucidate.predict.build import _assign, _group_plan, _initial_assignment

    idx = np.array([0, 1, 2, 3, 4])
    sym = np.array([10, 11, 12, 11, 10])  # ortho, meta, para, meta, ortho
    obs = np.array([125.3, 128.3, 128.3, 129.1, 129.1])
    classes, blocks = _group_plan(idx, obs, sym)
    assert blocks is not None
    corpus = SimpleNamespace(groups=((idx, obs, classes, blocks),), sym=sym, record=np.zeros(5))
    y0 = _initial_assignment(corpus)
    assert y0[2] == pytest.approx(125.3) and np.isnan(y0[[0, 1, 3, 4]]).all()
    pred = np.array([129.5, 124.0, 127.0, 124.0, 129.5])  # meta predicted lowest
    y = _assign(corpus, pred, y0)
    assert y[2] == pytest.approx(125.3)
    assert y[1] == y[3] == pytest.approx(128.3)
    assert y[0] == y[4] == pytest.approx(129.1)
