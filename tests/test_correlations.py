"""2D correlation tables (HSQC, HMBC, H2BC, COSY): reading, linking to the
13C lines, checking structures, and their weight in a solve.

Sources: bond distances are shortest paths in the molecular graph computed
by RDKit (``Chem.GetDistanceMatrix``); 13C shifts of butan-2-one and ethyl
acetate from memory of common reference data (Gottlieb, Kotlyar & Nudelman,
J. Org. Chem. 1997, 62, 7512 lists ethyl acetate: 171.4, 60.5, 21.0, 14.2);
the 1H shifts are placeholders (the tests need distinct values only).
"""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner
from rdkit import Chem

from elucidate.cli import main
from elucidate.constraints.correlations import LONG_RANGE_COST, VIOLATION_COST, link_correlations
from elucidate.errors import InputError
from elucidate.pipeline import SolveSettings, solve
from elucidate.rank.scoring import score_structure
from elucidate.spectrum.correlations import CrossPeak, parse_correlations, read_correlations
from elucidate.spectrum.peaks import parse_peaks
from elucidate.synthetic_correlations import synthetic_correlations

BUTANONE = "CCC(C)=O"
BUTANONE_PEAKS = "209.3 C, 36.9 CH2, 29.4 CH3, 7.9 CH3"
# protons (placeholders): CH2 2.44, acetyl CH3 2.14, ethyl CH3 1.06
BUTANONE_HSQC = "HSQC 2.44 36.9\nHSQC 2.14 29.4\nHSQC 1.06 7.9\n"
ETHYL_ACETATE_PEAKS = "171.1 C, 60.5 CH2, 21.0 CH3, 14.2 CH3"
ETHYL_ACETATE_2D = """# ethyl acetate, placeholder 1H shifts
experiment 1H 13C
HSQC 4.12 60.5
HSQC 2.05 21.0
HSQC 1.26 14.2
HMBC 4.12 171.1
HMBC 2.05 171.1
HMBC 1.26 60.5
COSY 4.12 1.26
"""


def _checks(smiles: str, peaks_text: str, table_text: str):
    peaks = parse_peaks(peaks_text).peaks
    evidence = link_correlations(parse_correlations(table_text), peaks)
    mol = Chem.MolFromSmiles(smiles)
    scored = score_structure(smiles, mol, peaks, None, smiles_written=False, evidence=evidence)
    return scored, mol


# ---------------------------------------------------------------- reading

def test_reads_whitespace_csv_tsv_with_comments_and_header():
    # common practice, no source: the trade's experiment names, any case
    a = parse_correlations("# 600 MHz\nhsqc 7.26 128.4  # aromatic\n\nHMBC 2.55 197.8\ncosy 1.25 4.12\n")
    b = parse_correlations("experiment,1H,13C\nHSQC,7.26,128.4\nHMBC,2.55,197.8\nCOSY,1.25,4.12\n")
    c = parse_correlations("type\t1H\tX\nHSQC\t7.26\t128.4\nHMBC\t2.55\t197.8\nCOSY\t1.25\t4.12\n")
    assert [r.describe() for r in a] == [r.describe() for r in b] == [r.describe() for r in c] == [
        "HSQC 7.26/128.4", "HMBC 2.55/197.8", "COSY 1.25/4.12"]
    assert [r.line for r in a] == [2, 4, 5]
    aliases = parse_correlations("HMQC 7.26 128.4\nDQF-COSY 1.25 4.12\nH2BC 1.25 30.1")
    assert [r.experiment for r in aliases] == ["HSQC", "COSY", "H2BC"]
    assert aliases.experiments() == ("HSQC", "H2BC", "COSY")


def test_reads_a_file(tmp_path):
    path = tmp_path / "kb17.csv"
    path.write_text(ETHYL_ACETATE_2D, encoding="utf-8")
    table = read_correlations(str(path))
    assert len(table) == 7 and table.source == str(path)


BAD_TABLES = [
    ("NOESY 1.0 2.0", "line 1: experiment 'NOESY' unknown"),
    ("HSQC 7.26", "line 1: 2 field(s)"),
    ("HSQC 7,26 128,4", "line 1: 5 field(s)"),
    ("HSQC 4.12 60.5\nHMBC abc 171.1", "line 2: 1H shift 'abc' is not a number"),
    ("HSQC 25.0 60.5", "line 1: 1H shift 25 ppm is outside"),
    ("HSQC 4.12 400", "line 1: 13C shift 400 ppm is outside"),
    ("HSQC 4.12 60.5\nCOSY 4.12 4.12", "line 2: COSY 4.12/4.12 is a diagonal peak"),
    ("HSQC 4.12 100.0", "line 1: HSQC 4.12/100 matches no 13C line"),
    ("HSQC 4.12 60.5\nHMBC 3.30 171.1", "line 2: no HSQC row has a proton at 3.3 ppm"),
    ("HSQC 4.12 60.5\nHMBC 4.12 150.0", "line 2: HMBC 4.12/150 matches no 13C line"),
    ("HSQC 5.00 171.1", "line 1: HSQC 5/171.1 falls on a line the multiplicities give as C"),
    ("HSQC 4.12 60.5\nCOSY 4.12 0.90", "line 2: no HSQC row has a proton at 0.9 ppm"),
    ("# nothing but a comment\n", "has no cross peaks"),
]


@pytest.mark.parametrize("text,message", BAD_TABLES)
def test_bad_rows_are_one_line_errors_with_exit_code_2(tmp_path, text, message):
    path = tmp_path / "bad.txt"
    path.write_text(text + "\n", encoding="utf-8")
    res = CliRunner().invoke(main, ["solve", "-f", "C4H8O2", "-p", ETHYL_ACETATE_PEAKS,
                                    "--correlations", str(path), "--time-limit", "5"])
    assert res.exit_code == 2, res.output
    err = res.output.strip()
    assert err.count("\n") == 0 and "Traceback" not in err
    assert message in err, err


def test_missing_file_and_bad_tolerances_are_input_errors():
    with pytest.raises(InputError, match="not found"):
        read_correlations("no/such/table.csv")
    with pytest.raises(InputError, match="--match-13c"):
        SolveSettings(match_13c=0)
    with pytest.raises(InputError, match="1H matching tolerance"):
        link_correlations(parse_correlations(ETHYL_ACETATE_2D), parse_peaks(ETHYL_ACETATE_PEAKS).peaks,
                          h_tolerance=-1)
    with pytest.raises(InputError, match="experiment 'NOE' unknown"):
        CrossPeak("NOE", 1.0, 2.0)


def test_a_shift_near_two_lines_is_a_choice_not_an_error():
    # 128.4 and 128.7 both within 0.5 ppm of 128.5: the row may mean either
    peaks = parse_peaks("128.7 CH, 128.4 CH, 137.9 C, 21.5 CH3").peaks
    ev = link_correlations(parse_correlations("HSQC 7.20 128.5\nHSQC 2.35 21.5\nHMBC 2.35 128.5"), peaks)
    assert ev.rows[0].c_lines == (0, 1) and ev.rows[2].c_lines == (0, 1)


# ---------------------------------------------------------------- checking

def test_bond_distances_on_butanone_follow_the_graph():
    # butan-2-one: acetyl H to C=O 2 bonds, ethyl CH3 H to C=O 3 bonds,
    # ethyl CH3 H to acetyl CH3 4 bonds (distances by RDKit)
    table = BUTANONE_HSQC + ("HMBC 2.14 209.3\nHMBC 1.06 209.3\nHMBC 2.14 36.9\nHMBC 1.06 29.4\n"
                             "COSY 2.44 1.06\nCOSY 2.14 2.44\nH2BC 2.44 7.9\nH2BC 1.06 209.3\n")
    scored, mol = _checks(BUTANONE, BUTANONE_PEAKS, table)
    dist = Chem.GetDistanceMatrix(mol)
    by_row = {(c.row.experiment, c.row.h_shift, c.row.other): c for c in scored.checks}
    hmbc = by_row[("HMBC", 2.14, 209.3)]
    assert (hmbc.status, hmbc.bonds) == ("satisfied", 2)
    assert hmbc.bonds == int(dist[hmbc.atoms]) + 1
    assert by_row[("HMBC", 1.06, 209.3)].bonds == 3
    assert by_row[("HMBC", 2.14, 36.9)].bonds == 3
    far = by_row[("HMBC", 1.06, 29.4)]
    assert (far.status, far.bonds, far.cost) == ("long range", 4, LONG_RANGE_COST)
    assert by_row[("COSY", 2.44, 1.06)].status == "satisfied" and by_row[("COSY", 2.44, 1.06)].bonds == 3
    assert by_row[("COSY", 2.14, 2.44)].bonds == 4  # H-C-C(=O)-C-H
    assert by_row[("H2BC", 2.44, 7.9)].status == "satisfied"
    h2bc = by_row[("H2BC", 1.06, 209.3)]
    assert (h2bc.status, h2bc.bonds) == ("violated", 3)
    assert scored.correlation == pytest.approx(2 * LONG_RANGE_COST + VIOLATION_COST)
    assert all(c.status == "satisfied" for c in scored.checks if c.row.experiment == "HSQC")


def test_violated_rows_cost_and_enter_the_fit():
    plain, _m = _checks(BUTANONE, BUTANONE_PEAKS, BUTANONE_HSQC)
    # the ethyl CH3 proton "correlating" with itself is no long-range path;
    # to the acetyl CH3 it is 4 bonds; an isomer with the ethyl on the other side
    wrong, _m = _checks(BUTANONE, BUTANONE_PEAKS, BUTANONE_HSQC + "HMBC 1.06 7.9\n")
    assert wrong.checks[-1].status == "violated" and wrong.checks[-1].bonds is None
    assert wrong.fit_cost == pytest.approx(plain.fit_cost + VIOLATION_COST)
    assert wrong.correlation == VIOLATION_COST and plain.correlation == 0


def test_hsqc_on_a_carbon_without_hydrogen_is_violated():
    # no multiplicities given: the row links, but the carbonyl carries no H
    scored, _m = _checks(BUTANONE, "209.3, 36.9, 29.4, 7.9", "HSQC 2.44 209.3\n")
    assert scored.checks[0].status == "violated"


def test_geminal_cosy_on_one_carbon():
    # diastereotopic CH2 protons give a COSY peak between two shifts of one carbon
    scored, _m = _checks(BUTANONE, BUTANONE_PEAKS, "HSQC 2.40 36.9\nHSQC 2.48 36.9\nCOSY 2.40 2.48\n")
    assert (scored.checks[-1].status, scored.checks[-1].bonds) == ("satisfied", 2)


# ---------------------------------------------------------------- in a solve

def test_answer_ranks_first_with_a_four_bond_hmbc_row():
    table = ETHYL_ACETATE_2D + "HMBC 1.26 171.1\n"  # 4 bonds: H-CH3-CH2-O-C(=O)
    res = solve("C4H8O2", ETHYL_ACETATE_PEAKS, SolveSettings(time_limit=20, top=5), correlations=table)
    best = res.candidates[0]
    assert best.smiles == "CCOC(C)=O"
    assert [c.status for c in best.correlations].count("long range") == 1
    assert best.correlation_cost == LONG_RANGE_COST
    assert len(res.correlations) == 8


def test_correlations_change_the_ranking_of_an_isomer():
    # the same lines, ranked with and without 2D: an isomer that breaks a row
    # (butanoic acid: its 60.5 and 14.2 carbons are not bonded, so the COSY row is
    # 4 bonds H to H) falls further behind the answer
    peaks = "171.1, 60.5, 21.0, 14.2"  # no DEPT: more isomers compete
    table = ETHYL_ACETATE_2D
    without = solve("C4H8O2", peaks, SolveSettings(time_limit=20, top=10, near_alternatives=0))
    with_2d = solve("C4H8O2", peaks, SolveSettings(time_limit=20, top=10, near_alternatives=0),
                    correlations=table)
    assert with_2d.candidates[0].smiles == "CCOC(C)=O"
    others = {c.smiles: c for c in with_2d.candidates[1:] if c.correlation_cost > 0}
    assert "CCCC(=O)O" in others
    gap_without = {c.smiles: c.score - without.candidates[0].score for c in without.candidates}
    for smi, c in others.items():
        if smi in gap_without:
            assert c.score - with_2d.candidates[0].score > gap_without[smi]


def test_json_text_and_html_show_the_checks(tmp_path):
    path = tmp_path / "ea.txt"
    path.write_text(ETHYL_ACETATE_2D, encoding="utf-8")
    args = ["solve", "-f", "C4H8O2", "-p", ETHYL_ACETATE_PEAKS, "--correlations", str(path), "--time-limit", "10",
            "--near-alternatives", "0"]
    text = CliRunner().invoke(main, args)
    assert text.exit_code == 0, text.output
    assert "2D 7/7 met" in text.output and "2D correlations of rank 1" in text.output
    data = json.loads(CliRunner().invoke(main, args + ["--format", "json"]).output)
    assert data["settings"]["match_1h"] == 0.02 and len(data["correlations"]) == 7
    checks = data["candidates"][0]["correlations"]
    assert [c["status"] for c in checks] == ["satisfied"] * 7
    assert [c["bonds"] for c in checks if c["experiment"] == "HMBC"] == [3, 2, 2]
    html = CliRunner().invoke(main, args + ["--format", "html"]).output
    assert html.count('marker-end="url(#corr-head-') == 3  # the three HMBC arrows of rank 1
    assert "2D correlations checked on candidate 1" in html


# ---------------------------------------------------------------- synthetic tables

def test_synthetic_tables_follow_the_recipe():
    # graph distances by RDKit; the recipe in elucidate/synthetic_correlations.py
    smiles = "CCOC(=O)c1ccc(OC)cc1"  # ethyl 4-methoxybenzoate
    peaks = parse_peaks("166.4 C, 163.3 C, 131.5 CH, 122.9 C, 113.5 CH, 60.6 CH2, 55.4 CH3, 14.4 CH3").peaks
    mol = Chem.MolFromSmiles(smiles)
    a = synthetic_correlations(mol, peaks, seed="kb-17", cosy=True)
    b = synthetic_correlations(mol, peaks, seed="kb-17", cosy=True)
    assert a == b  # fixed seed
    assert sum(1 for r in a if r.experiment == "HSQC") == 5  # one per protonated line
    h = [r.h_shift for r in a if r.experiment == "HSQC"]
    assert len(set(h)) == len(h)
    scored = score_structure(smiles, mol, peaks, None, smiles_written=False, evidence=link_correlations(a, peaks))
    hmbc = [c for c in scored.checks if c.row.experiment == "HMBC"]
    assert hmbc and all(c.bonds in (2, 3, 4) for c in hmbc)
    assert sum(c.bonds == 4 for c in hmbc) <= max(1, round(0.05 * len(hmbc)) + 1)
    cosy = [c for c in scored.checks if c.row.experiment == "COSY"]
    assert cosy and all(c.status == "satisfied" for c in cosy)  # ring CH/CH and OCH2/CH3
    plain = synthetic_correlations(mol, peaks, seed="kb-17")
    assert not any(r.experiment == "COSY" for r in plain)


# ---------------------------------------------------------------- what to measure next

def _candidate(smiles, lines_to_atoms, hydrogens, probability):
    from types import SimpleNamespace as E

    assignment = [E(peak_index=i, atoms=(a,)) for i, a in enumerate(lines_to_atoms)]
    predicted = [(a, hydrogens[k], 0.0, 1.0) for k, a in enumerate(lines_to_atoms)]
    return E(smiles=smiles, assignment=assignment, predicted=predicted, probability=probability, set_aside="")


def test_next_measurement_separates_two_invented_isomers_by_an_hmbc_pair():
    # invented lines: 170 C, 60 CH2, 21 CH3, 14 CH3 under ethyl acetate (rank 1) and
    # methyl propanoate (rank 2); graph distances by RDKit: the 14 ppm CH3 proton is 4 bonds
    # from the carbonyl in ethyl acetate and 3 bonds in methyl propanoate; every other
    # proton/carbon pair is 2-3 bonds in both or in neither
    from elucidate.rank.next_measurement import next_measurement_sentence, next_measurements

    peaks = parse_peaks("170.0 C, 60.0 CH2, 21.0 CH3, 14.0 CH3").peaks
    a = _candidate("CCOC(C)=O", (3, 1, 4, 0), (0, 2, 3, 3), 0.6)
    b = _candidate("CCC(=O)OC", (2, 1, 5, 0), (0, 2, 3, 3), 0.4)
    rows = next_measurements(peaks, [a, b])
    hmbc = [r for r in rows if r["experiment"] == "HMBC"]
    assert len(hmbc) == 1
    assert (hmbc[0]["lines"], hmbc[0]["expected_in"], hmbc[0]["not_in"]) == ([4, 1], [2], [1])
    assert rows[0] is hmbc[0]
    assert hmbc[0]["value"] == pytest.approx((0.65 * 0.45) / 1.1 ** 2, abs=1e-4)
    assert "HMBC from the proton on line 4 (14 ppm) to line 1 (170 ppm)" in next_measurement_sentence(rows)
    # already measured: no longer suggested
    given = link_correlations(parse_correlations("HSQC 1.2 14.0\nHMBC 1.2 170.0"), peaks).rows
    assert not [r for r in next_measurements(peaks, [a, b], given=given) if r["experiment"] == "HMBC"]
    assert next_measurements(peaks, [a]) == []


def test_close_lines_are_swapped_when_the_correlations_say_so():
    # guaiacol part of an invented unknown: the two aromatic C-O carbons are 1.1 ppm apart and
    # their predictions favour the wrong lines by a little; the OMe proton's HMBC row to
    # 146.8 ppm is 3 bonds only if the OMe-bearing carbon stands under that line (graph
    # distances by RDKit)
    from elucidate.rank.assignment import Assignment, LineEntry
    from elucidate.rank.likelihood import shift_cost

    mol = Chem.MolFromSmiles("COc1ccccc1O")  # 0 CH3, 2 C-OMe, 7 C-OH
    peaks = parse_peaks("147.9 C, 146.8 C, 55.9 CH3").peaks
    entries = (LineEntry(0, 147.9, 147.5, 1.0, (2,), "primary"), LineEntry(1, 146.8, 147.0, 1.0, (7,), "primary"),
               LineEntry(2, 55.9, 56.0, 1.0, (0,), "primary"))
    cost = sum(shift_cost(e.observed, e.predicted, e.sigma) for e in entries)
    evidence = link_correlations(parse_correlations("HSQC 3.90 55.9\nHMBC 3.90 146.8"), peaks)
    before, checks = evidence.check(mol, entries)
    assert before == LONG_RANGE_COST and checks[1].bonds == 4
    better, after, checks = evidence.assign(mol, Assignment(entries, cost, 0, 0, ()), peaks)
    assert after == 0 and checks[1].bonds == 3
    assert {e.peak_index: e.atoms for e in better.entries}[1] == (2,)
    swapped = (shift_cost(146.8, 147.5, 1.0) + shift_cost(147.9, 147.0, 1.0))
    kept = shift_cost(55.9, 56.0, 1.0)
    assert better.cost == pytest.approx(swapped + kept)
    assert better.cost - cost < LONG_RANGE_COST  # the swap pays off


def test_next_measurement_separates_two_regioisomers_by_the_methyl_hmbc():
    # invented lines under 2-methylanisole (rank 1) and 3-methylanisole (rank 2), one carbon per
    # line in both: the methyl protons are 3 bonds from the C-O carbon in the ortho isomer and
    # 4 in the meta isomer (graph distances by RDKit)
    from elucidate.rank.next_measurement import next_measurements

    peaks = parse_peaks("158.0 C, 135.0 C, 130.0 CH, 127.0 CH, 121.0 CH, 111.0 CH, 55.0 CH3, 20.0 CH3").peaks
    hydrogens = (0, 0, 1, 1, 1, 1, 3, 3)
    ortho = _candidate("COc1ccccc1C", (2, 7, 3, 4, 5, 6, 0, 8), hydrogens, 0.5)
    meta = _candidate("COc1cccc(C)c1", (2, 6, 3, 4, 5, 8, 0, 7), hydrogens, 0.5)
    rows = next_measurements(peaks, [ortho, meta], limit=50)
    assert rows[0]["experiment"] == "HMBC"
    methyl = [r for r in rows if r["experiment"] == "HMBC" and r["lines"] == [8, 1]]
    assert methyl and (methyl[0]["expected_in"], methyl[0]["not_in"]) == ([1], [2])
    assert all(r["value"] <= rows[0]["value"] for r in rows)
