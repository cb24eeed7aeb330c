"""Every user error gives one line 'error: ...' on stderr and exit code 2.

Rule of thumb for command-line tools (common practice, no source): a usage
error exits with status 2 and says how to fix the input, without a traceback.
"""

import json

import pytest
from click.testing import CliRunner

from elucidate.cli import main

OK_PEAKS = "171.1 C, 60.5 CH2, 21.0 CH3, 14.2 CH3"


def _bad_case_file(tmp_path):
    p = tmp_path / "cases.jsonl"
    p.write_text('{"formula": "C4H8O2", "peaks": [}\n')
    return str(p)


def _case_file_missing_key(tmp_path):
    p = tmp_path / "cases2.jsonl"
    p.write_text(json.dumps({"formula": "C4H8O2", "peaks": []}) + "\n")
    return str(p)


BAD = [
    ("element", ["solve", "--formula", "C4H8Xq2", "--peaks", OK_PEAKS], "element"),
    ("unsupported element", ["isomers", "--formula", "C2H5Na", "--count"], "not supported"),
    ("no carbon", ["solve", "--formula", "H2O", "--peaks", OK_PEAKS], "no carbon"),
    ("nitrogen rule", ["isomers", "--formula", "C2H5", "--count"], "half-integer"),
    ("negative DBE", ["isomers", "--formula", "CH6", "--count"], "negative DBE"),
    ("missing peak file", ["solve", "--formula", "C4H8O2", "--peaks", "nothere/peaks.txt"], "not found"),
    ("malformed shift", ["solve", "--formula", "C4H8O2", "--peaks", "17x.1 C, 60.5 CH2"], "17x.1"),
    ("bad multiplicity", ["solve", "--formula", "C4H8O2", "--peaks", "171.1 CH4, 60.5 CH2"], "CH4"),
    ("shift out of range", ["solve", "--formula", "C4H8O2", "--peaks", "371.1 C, 60.5 CH2"], "371.1"),
    ("more lines than carbons", ["solve", "--formula", "C2H6O", "--peaks", "10 CH3, 20 CH3, 30 CH2"], "carbon"),
    ("counts above carbons", ["solve", "--formula", "C2H6O", "--peaks", "18.0 CH3 2, 58.0 CH2 2"], "count"),
    ("DEPT H above formula", ["solve", "--formula", "C3H4O", "--peaks", "20 CH3, 30 CH3, 200 C"], "H"),
    ("empty peak list", ["solve", "--formula", "C4H8O2", "--peaks", " "], "peak"),
    ("unknown solvent", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--solvent", "moonjuice"], "solvent"),
    ("unknown format", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--format", "pdf"], "format"),
    ("zero time limit", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--time-limit", "0"], "time-limit"),
    ("top zero", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--top", "0"], "top"),
    ("bad valence value", ["isomers", "--formula", "C2H6S", "--valence", "S=3", "--count"], "valence"),
    ("bad valence syntax", ["isomers", "--formula", "C2H6S", "--valence", "S", "--count"], "ELEMENT=V"),
    ("bad SMARTS", ["isomers", "--formula", "C3H8O", "--require", "[C(", "--count"], "SMARTS"),
    ("negative max rings", ["isomers", "--formula", "C3H6", "--max-rings", "-1", "--count"], "max-rings"),
    ("missing formula", ["solve", "--peaks", OK_PEAKS], "formula"),
    ("unknown option", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--colour"], "colour"),
    ("unknown command", ["elucidify"], "elucidify"),
    ("bad SMILES", ["predict", "C1CC"], "SMILES"),
    ("predict without input", ["predict"], "SMILES"),
    ("predict input missing", ["predict", "--input", "no_such_file.smi"], "no_such_file"),
    ("bench missing file", ["bench", "no_such_cases.jsonl"], "not found"),
]


@pytest.mark.parametrize("name,args,fragment", BAD, ids=[b[0] for b in BAD])
def test_user_error_exit_code_and_one_line(name, args, fragment):
    result = CliRunner().invoke(main, args)
    assert result.exit_code == 2, (name, result.output, result.stderr)
    err = result.stderr.strip()
    assert err.startswith("error: "), err
    assert "\n" not in err, err
    assert "Traceback" not in result.output + result.stderr
    assert fragment.lower() in err.lower(), err


@pytest.mark.parametrize("maker", [_bad_case_file, _case_file_missing_key])
def test_bench_bad_case_files(tmp_path, maker):
    result = CliRunner().invoke(main, ["bench", maker(tmp_path)])
    assert result.exit_code == 2
    assert result.stderr.startswith("error: ")
    assert "Traceback" not in result.stderr


def test_at_least_twenty_distinct_bad_inputs():
    assert len(BAD) + 2 >= 20
