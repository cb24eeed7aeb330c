"""Case files and stratified samples (``elucidate.cases.read_cases``)."""

from __future__ import annotations

import json
from collections import Counter
from pathlib import Path

import pytest

from elucidate.cases import BANDS, band_of, read_cases
from elucidate.errors import InputError
from elucidate.formula import parse_formula

BENCH = Path(__file__).resolve().parents[2] / "shared" / "data" / "bench_cases.jsonl"


def _band(formula):
    return band_of(parse_formula(formula).heavy_atoms)


def test_every_counts_within_each_band(tmp_path):
    # bands interleaved in the file: every 2nd must be taken per band
    formulas = ["CH4O", "C10H22", "C2H6O", "C10H22", "C3H8O", "C10H22", "C4H10O", "C10H22"]
    path = tmp_path / "cases.jsonl"
    path.write_text("".join(json.dumps({"id": f"c{i}", "formula": f, "peaks": [], "answer": "C"}) + "\n"
                            for i, f in enumerate(formulas)))
    got = [c["id"] for c in read_cases(str(path), every=2)]
    # CH4O and C2H6O (2 and 3 heavy atoms, outside the bands) form their own
    # stratum; C3H8O and C4H10O are 4-8; C10H22 is 9-12
    assert got == ["c0", "c1", "c4", "c5"]


def test_missing_key_is_an_input_error(tmp_path):
    path = tmp_path / "cases.jsonl"
    path.write_text(json.dumps({"formula": "C2H6O"}) + "\n")
    with pytest.raises(InputError, match="lacks peaks, answer"):
        read_cases(str(path))


@pytest.mark.skipif(not BENCH.is_file(), reason="../shared/data not beside the checkout")
def test_every_fifth_bench_case_is_thirty_per_band():
    # the shared bench file holds 150 cases per band (../shared/data/README.md)
    counts = Counter(_band(c["formula"]) for c in read_cases(str(BENCH), every=5))
    assert counts == {b: 30 for b in BANDS}
