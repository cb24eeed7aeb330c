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
