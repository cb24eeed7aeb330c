"""Every user error gives one line 'error: ...' on stderr and exit code 2.

Rule of thumb for command-line tools (common practice, no source): a usage
error exits with status 2 and says how to fix the input, without a traceback.
"""

import json
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from elucidate.cli import main
from elucidate.spectrum.jcamp_write import format_jcamp_peak_table

OK_PEAKS = "171.1 C, 60.5 CH2, 21.0 CH3, 14.2 CH3"


def _bad_case_file(tmp_path):
    p = tmp_path / "cases.jsonl"
    p.write_text('{"formula": "C4H8O2", "peaks": [}\n')
    return str(p)


def _case_file_missing_key(tmp_path):
    p = tmp_path / "cases2.jsonl"
    p.write_text(json.dumps({"formula": "C4H8O2", "peaks": []}) + "\n")
    return str(p)


ROOT = Path(__file__).resolve().parents[1]
JCAMP_13C = ROOT / "scenarios" / "kestrel-coatings-jcamp" / "drum-rinse-KC-2211_c13.jdx"

# Files written into the test's temporary folder; "{tmp}" in arguments is that folder.
FILES = {
    "mixed_commas.txt": "# QC-0188 (invented)\n171,1 C, 60,5 CH2, 21,0 CH3, 14,2 CH3\n",
    "split_commas.csv": "shift,count\n171,1\n60,5\n21,0\n14,2\n",
    "headerless.csv": "171.1,1\n60.5,1\n21.0,1\n14.2,1\n",
    "no_shift_column.csv": "mult,count\nC,1\nCH2,1\n",
    "not_json.json": "this is a text report, not JSON\n",
    "not_a_result.json": json.dumps({"sample": "QC-0188", "peaks": [171.1, 60.5]}) + "\n",
    "list.json": "[1, 2, 3]\n",
    "cases.jsonl": json.dumps({"id": "c1", "formula": "C4H8O2", "answer": "CCOC(C)=O",
                               "peaks": [{"shift": 171.1, "mult": "C", "count": 1}]}) + "\n",
    "sheet_no_peaks.csv": "id,formula\nQC-1,C4H8O2\n",
    "c13_table.jdx": format_jcamp_peak_table([171.1, 60.5, 21.0, 14.2], title="QC-0188 13C"),
    "labelled_dept90.jdx": format_jcamp_peak_table([60.5, 21.0, 14.2], [-1, 1, 1], title="QC-0188 DEPT-90"),
}

BAD = [
    # formula
    ("element", ["solve", "--formula", "C4H8Xq2", "--peaks", OK_PEAKS], "element"),
    ("unsupported element", ["isomers", "--formula", "C2H5Na", "--count"], "not supported"),
    ("no carbon", ["solve", "--formula", "H2O", "--peaks", OK_PEAKS], "no carbon"),
    ("nitrogen rule", ["isomers", "--formula", "C2H5", "--count"], "half-integer"),
    ("negative DBE", ["isomers", "--formula", "CH6", "--count"], "negative DBE"),
    ("formula in lower case", ["solve", "--formula", "c4h8o2", "--peaks", OK_PEAKS], "capital letter"),
    ("formula with trailing garbage", ["isomers", "--formula", "C4H8O2xyz", "--count"], "'xyz'"),
    ("formula with a charge", ["solve", "--formula", "C4H9O2+", "--peaks", OK_PEAKS], "subtract one H"),
    ("formula with brackets", ["isomers", "--formula", "CH3(CH2)2COOH", "--count"], "brackets"),
    ("missing formula", ["solve", "--peaks", OK_PEAKS], "formula"),
    # peaks
    ("missing peak file", ["solve", "--formula", "C4H8O2", "--peaks", "nothere/peaks.txt"], "not found"),
    ("peak path is a folder", ["solve", "--formula", "C4H8O2", "--peaks", "{tmp}"], "directory"),
    ("malformed shift", ["solve", "--formula", "C4H8O2", "--peaks", "17x.1 C, 60.5 CH2"], "17x.1"),
    ("bad multiplicity", ["solve", "--formula", "C4H8O2", "--peaks", "171.1 CH4, 60.5 CH2"], "CH4"),
    ("shift out of range", ["solve", "--formula", "C4H8O2", "--peaks", "371.1 C, 60.5 CH2"], "371.1"),
    ("shift NaN", ["solve", "--formula", "C4H8O2", "--peaks", "nan C, 60.5 CH2"], "not a finite number"),
    ("shift infinite", ["check", "--smiles", "CCOC(C)=O", "--peaks", "171.1 C, inf CH2"], "'inf'"),
    ("count zero", ["solve", "--formula", "C4H8O2", "--peaks", "171.1 C 0, 60.5 CH2"], "count '0'"),
    ("duplicate line, count on one copy only",
     ["solve", "--formula", "C4H8O2", "--peaks", "171.1 C, 60.5 CH2, 21.0 CH3 1, 21.0 CH3"],
     "total is unknown"),
    ("more lines than carbons", ["solve", "--formula", "C2H6O", "--peaks", "10 CH3, 20 CH3, 30 CH2"], "carbon"),
    ("counts above carbons", ["solve", "--formula", "C2H6O", "--peaks", "18.0 CH3 2, 58.0 CH2 2"], "count"),
    ("DEPT H above formula", ["solve", "--formula", "C3H4O", "--peaks", "20 CH3, 30 CH3, 200 C"], "H"),
    ("empty peak list", ["solve", "--formula", "C4H8O2", "--peaks", " "], "peak"),
    # decimal commas (read as 171, 1, 60, 5, ... before: exit 0 and wrong structures)
    ("decimal comma used as separator too",
     ["solve", "--formula", "C4H8O2", "--peaks", "171,1 C, 60,5 CH2, 21,0 CH3, 14,2 CH3"],
     "separate the lines with ';' or newlines"),
    ("decimal comma on one line", ["solve", "--formula", "C2H6O", "--peaks", "58,18"], "58.18"),
    ("whole numbers joined by commas", ["check", "--smiles", "CCOC(C)=O", "--peaks", "171,60,21,14"],
     "space after each separating comma"),
    ("decimal comma in a peak file", ["solve", "--formula", "C4H8O2", "--peaks", "{tmp}/mixed_commas.txt"],
     "mixed_commas.txt"),
    ("decimal comma split by the CSV delimiter",
     ["solve", "--formula", "C4H8O2", "--peaks", "{tmp}/split_commas.csv"], "split over two columns"),
    ("CSV without header", ["solve", "--formula", "C4H8O2", "--peaks", "{tmp}/headerless.csv"],
     "table without its header"),
    ("table without shift column", ["solve", "--formula", "C4H8O2", "--peaks", "{tmp}/no_shift_column.csv"],
     "no shift column"),
    # solvent
    ("unknown solvent", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--solvent", "moonjuice"], "solvent"),
    ("solvent not in the table", ["check", "--smiles", "CCOC(C)=O", "--peaks", OK_PEAKS, "--solvent", "DMF-d7"],
     "known: acetone-d6"),
    ("empty solvent", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--solvent", ""], "solvent name is empty"),
    # DEPT spectra
    ("DEPT-135 with inline peaks", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--dept135", "d.jdx"],
     "not a JCAMP-DX 13C spectrum"),
    ("DEPT-135 file missing", ["solve", "--formula", "C6H12O", "--peaks", str(JCAMP_13C),
                               "--dept135", "{tmp}/no_such_dept135.jdx"], "no_such_dept135.jdx not found"),
    ("13C spectrum missing with DEPT", ["solve", "--formula", "C6H12O", "--peaks", "{tmp}/no_such_c13.jdx",
                                       "--dept90", "{tmp}/d90.jdx"], "no_such_c13.jdx not found"),
    # options
    ("unknown format", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--format", "pdf"], "format"),
    ("zero time limit", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--time-limit", "0"], "time-limit"),
    ("top zero", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--top", "0"], "top"),
    ("negative max overlap", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--max-overlap", "-1"],
     "max-overlap"),
    ("negative alternatives", ["check", "--smiles", "CCOC(C)=O", "--peaks", OK_PEAKS, "--alternatives", "-1"],
     "alternatives"),
    ("bad valence value", ["isomers", "--formula", "C2H6S", "--valence", "S=3", "--count"], "valence"),
    ("bad valence syntax", ["isomers", "--formula", "C2H6S", "--valence", "S", "--count"], "ELEMENT=V"),
    ("valence of unknown element", ["isomers", "--formula", "C2H6S", "--valence", "Q=2", "--count"],
     "unknown element 'Q'"),
    ("negative max rings", ["isomers", "--formula", "C3H6", "--max-rings", "-1", "--count"], "max-rings"),
    ("ring sizes contradict", ["isomers", "--formula", "C6H12", "--min-ring-size", "6", "--max-ring-size", "4",
                               "--count"], "exceeds --max-ring-size"),
    ("unwritable output", ["isomers", "--formula", "C2H6O", "-o", "{tmp}/no_such_dir/out.txt"], "cannot write"),
    ("unknown option", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--colour"], "colour"),
    ("unknown command", ["elucidify"], "elucidify"),
    # SMARTS / SMILES typed by the user (RDKit's own parser log must stay silent)
    ("bad SMARTS", ["isomers", "--formula", "C3H8O", "--require", "[C(", "--count"], "SMARTS"),
    ("bad forbid SMARTS", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--forbid", "C((("], "--forbid"),
    ("bad scaffold SMILES", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--scaffold", "c1ccc("],
     "ring-closure"),
    ("scaffold larger than formula", ["solve", "--formula", "C4H8O2", "--peaks", OK_PEAKS, "--scaffold",
                                      "c1ccccc1"], "cannot occur"),
    ("bad check SMILES", ["check", "--smiles", "C1CC(", "--peaks", OK_PEAKS], "could not parse"),
    ("check SMILES with two fragments", ["check", "--smiles", "CCO.Cl", "--peaks", OK_PEAKS], "fragments"),
    ("bad SMILES", ["predict", "C1CC"], "SMILES"),
    ("predict without input", ["predict"], "SMILES"),
    ("predict input missing", ["predict", "--input", "no_such_file.smi"], "no_such_file"),
    ("DEPT-90 file given as --dept135", ["solve", "--formula", "C4H8O2", "--peaks", "{tmp}/c13_table.jdx",
                                         "--dept135", "{tmp}/labelled_dept90.jdx"], "DEPT-90 spectrum by its header"),
    ("predict water (no carbon)", ["predict", "O"], "O has no carbon atom"),
    ("predict only carbon-free molecules", ["predict", "[NH4+]", "O"], "none of [NH4+], O has a carbon"),
    # report
    ("report file missing", ["report", "{tmp}/no_such_result.json"], "not found"),
    ("report on a non-JSON file", ["report", "{tmp}/not_json.json"], "is not JSON"),
    ("report on JSON that is not a result", ["report", "{tmp}/not_a_result.json"], "formula"),
    ("report on a JSON list", ["report", "{tmp}/list.json"], "JSON object"),
    # bench, batch, tables
    ("bench missing file", ["bench", "no_such_cases.jsonl"], "not found"),
    ("bench --heavy malformed", ["bench", "{tmp}/cases.jsonl", "--heavy", "4to10"], "range such as 4-10"),
    ("bench --heavy reversed", ["bench", "{tmp}/cases.jsonl", "--heavy", "10-4"], "write e.g. 4-10"),
    ("bench --every 0", ["bench", "{tmp}/cases.jsonl", "--every", "0"], "every"),
    ("batch sheet missing", ["batch", "{tmp}/no_such_sheet.csv", "-o", "{tmp}/out"], "not found"),
    ("batch sheet without peaks column", ["batch", "{tmp}/sheet_no_peaks.csv", "-o", "{tmp}/out"],
     "lacks column(s) peaks"),
    ("batch zero workers", ["batch", "{tmp}/sheet_no_peaks.csv", "-o", "{tmp}/out", "-j", "0"], "workers"),
    ("build-table data missing", ["build-table", "--data", "{tmp}/no_such_train.jsonl.gz"], "not found"),
]


@pytest.fixture()
def rdkit_logs_on():
    """RDKit logging as in a fresh process (another test may have turned it off)."""
    from rdkit import rdBase

    before = dict(line.split(":", 1) for line in rdBase.LogStatus().splitlines() if ":" in line)
    rdBase.EnableLog("rdApp.error")
    rdBase.EnableLog("rdApp.warning")
    yield
    for name, state in before.items():
        (rdBase.EnableLog if state.strip() == "enabled" else rdBase.DisableLog)(name)


def _materialise(args, tmp_path):
    for name, content in FILES.items():
        (tmp_path / name).write_text(content, encoding="utf-8")
    return [a.replace("{tmp}", str(tmp_path)) for a in args]


@pytest.mark.parametrize("name,args,fragment", BAD, ids=[b[0] for b in BAD])
def test_user_error_exit_code_and_one_line(name, args, fragment, tmp_path, capfd, rdkit_logs_on):
    result = CliRunner().invoke(main, _materialise(args, tmp_path))
    leaked = capfd.readouterr()  # what bypassed click: RDKit's C++ log writes to file descriptor 2
    assert result.exit_code == 2, (name, result.output, result.stderr)
    err = result.stderr
    assert err.startswith("error: "), err
    assert err.endswith("\n") and err.count("\n") == 1, err  # exactly one line
    assert result.stdout == ""
    assert leaked.err == "" and leaked.out == "", leaked
    assert "Traceback" not in result.output + result.stderr
    assert fragment.lower() in err.lower(), err


def test_bad_smarts_in_a_real_process_prints_exactly_one_line():
    """End to end, RDKit's parser log included (it writes to the process's stderr)."""
    proc = subprocess.run([sys.executable, "-m", "elucidate.cli", "isomers", "--formula", "C3H8O",
                           "--require", "[C(", "--count"], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert proc.stderr.count("\n") == 1 and proc.stderr.startswith("error: --require '[C('"), proc.stderr


@pytest.mark.parametrize("maker", [_bad_case_file, _case_file_missing_key])
def test_bench_bad_case_files(tmp_path, maker):
    result = CliRunner().invoke(main, ["bench", maker(tmp_path)])
    assert result.exit_code == 2
    assert result.stderr.startswith("error: ")
    assert "Traceback" not in result.stderr


def test_at_least_forty_distinct_bad_inputs():
    assert len({b[0] for b in BAD}) == len(BAD)  # names unique
    assert len({tuple(b[1]) for b in BAD}) == len(BAD)  # command lines unique
    assert len(BAD) >= 40
