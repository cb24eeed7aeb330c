"""Evaluation of the shift predictor and its click commands.

Reference shifts: Fulmer et al., Organometallics 2010, 29, 2176, CDCl3
column (values from memory), written as invented "unknowns" of a fictitious
QC lab.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from elucidate.errors import InputError
from elucidate.predict.build import build_table_command
from elucidate.predict.evaluate import evaluate_cases, match_errors, predictor_bench_command

DATA = Path(__file__).resolve().parents[1].parent / "shared" / "data"
TRAIN = DATA / "train_spectra.jsonl.gz"

# fictitious lab samples; peaks = Fulmer et al. 2010 CDCl3 values (from memory)
CASES = [
    {"id": "demo-lot-001", "answer": "CC(=O)OCC",
     "peaks": [{"shift": 14.19, "mult": "CH3", "count": 1}, {"shift": 21.04, "mult": "CH3", "count": 1},
               {"shift": 60.49, "mult": "CH2", "count": 1}, {"shift": 171.36, "mult": "C", "count": 1}]},
    {"id": "demo-lot-002", "answer": "Cc1ccccc1",
     "peaks": [{"shift": 21.46, "mult": "CH3", "count": 1}, {"shift": 125.33, "mult": "CH", "count": 1},
               {"shift": 128.26, "mult": "CH", "count": 2}, {"shift": 129.07, "mult": "CH", "count": 2},
               {"shift": 137.89, "mult": "C", "count": 1}]},
    {"id": "demo-lot-003", "answer": "CCOCC",
     "peaks": [{"shift": 15.20, "mult": "CH3", "count": 2}, {"shift": 65.91, "mult": "CH2", "count": 2}]},
]


@pytest.fixture()
def case_file(tmp_path):
    path = tmp_path / "cases.jsonl"
    path.write_text("".join(json.dumps(c) + "\n" for c in CASES))
    return path


def test_evaluate_fulmer_cases(case_file):
    # Fulmer et al. 2010, CDCl3 (from memory): every carbon within 2.5 ppm
    res = evaluate_cases(case_file)
    assert res["cases"] == 3
    assert res["overall"]["carbons"] == 4 + 7 + 4
    assert res["overall"]["mae"] < 1.5
    assert res["overall"]["p99"] < 2.5
    assert set(res["bands"]) == {"4-8", "9-12", "13-16", "17-22"}


def test_match_errors_is_optimal_on_a_line():
    # common practice, no source: sorted matching pairs 1<->1.2 and 5<->4.5
    errs = match_errors({"x": [(5.0, 1.0, 3), (1.0, 1.0, 3)]}, {"x": [4.5, 1.2]})
    assert sorted(round(e[0], 6) for e in errs) == [-0.2, 0.5]
    with pytest.raises(InputError):
        match_errors({"x": [(1.0, 1.0, 3)]}, {"x": [1.0, 2.0]})


def test_bench_command(case_file):
    result = CliRunner().invoke(predictor_bench_command, [str(case_file)])
    assert result.exit_code == 0, result.output
    out = json.loads(result.output)
    assert out["overall"]["carbons"] == 15
    result = CliRunner().invoke(predictor_bench_command, [str(case_file), "--no-mult"])
    assert result.exit_code == 0
    assert json.loads(result.output)["overall"]["carbons"] == 15


def test_bench_missing_file_is_input_error(tmp_path):
    with pytest.raises(InputError, match="not found"):
        evaluate_cases(tmp_path / "missing.jsonl")


@pytest.mark.skipif(not TRAIN.is_file(), reason=f"open nmrshiftdb2 training data not found at {TRAIN}")
def test_build_command_small_sample(tmp_path):
    out = tmp_path / "t.npz"
    result = CliRunner().invoke(build_table_command, ["--data", str(TRAIN), "--output", str(out),
                                                      "--limit", "150", "--rounds", "1",
                                                      "--cache-dir", str(tmp_path / "cache")])
    assert result.exit_code == 0, result.output
    assert out.is_file()
    assert list((tmp_path / "cache").glob("assigned-*-limit150.jsonl.gz"))
    text = result.output  # progress lines (stderr) may be mixed in before the JSON
    assert json.loads(text[text.index("{"):])["counts"]["spectra_used"] <= 150
