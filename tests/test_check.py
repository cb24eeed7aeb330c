"""The check workflow: verdicts, flagged lines, better-fitting isomers.

Shift lists are published CDCl3 values quoted from memory: 2-butanone and
cyclohexanone from standard 13C tables; ethyl acetate from Fulmer et al.,
Organometallics 2010, 29, 2176; 4-methylphenol (p-cresol) from standard
tables.  Student-t quantiles from standard statistical tables (from memory).
"""

import json

import pytest
from click.testing import CliRunner
from rdkit import Chem

from elucidate.cli import main
from elucidate.errors import InputError
from elucidate.workflows.check import (
    CLEARLY_BETTER_RATIO,
    GROSS_Z,
    check_structure,
    check_to_dict,
    render_check_text,
    t_tail,
)
from elucidate.workflows.regio import positional_isomers, single_moves

BUTANONE = "209.3 C, 36.9 CH2, 29.4 CH3, 7.9 CH3"
ETHYL_ACETATE = "171.1 C, 60.4 CH2, 21.0 CH3, 14.2 CH3"
P_CRESOL = "153.0 C, 130.1 CH, 130.0 C, 115.2 CH, 20.5 CH3"
CYCLOHEXANONE = "212.0 C, 42.0 CH2, 27.1 CH2, 25.1 CH2"


@pytest.mark.parametrize("t, p", [(3.182, 0.05), (5.841, 0.01), (12.924, 0.001), (2.353, 0.10)])
def test_t3_tail_matches_published_table(t, p):
    # two-sided critical values of Student's t, 3 degrees of freedom (statistical tables, from memory)
    assert t_tail(t, 3) == pytest.approx(p, abs=2e-4)


def test_t_tail_other_df_and_errors():
    # t with 1 df is the Cauchy distribution: P(|T| > 1) = 1/2 (exact)
    assert t_tail(1.0, 1) == pytest.approx(0.5)
    # t with 2 df: 5 % point 4.303 (tables, from memory)
    assert t_tail(4.303, 2) == pytest.approx(0.05, abs=2e-4)
    with pytest.raises(InputError):
        t_tail(1.0, 7)


def test_gross_threshold_is_the_0_1_percent_point():
    assert GROSS_Z == pytest.approx(12.92, abs=0.01)  # t(3) 99.95 % point, tables (from memory)


def test_true_structure_is_consistent():
    r = check_structure("CCC(C)=O", BUTANONE, time_limit=3)
    assert r.verdict == "consistent"
    assert r.gross == 0 and r.unexplained == 0
    assert r.formula.hill == "C4H8O"  # formula defaults to the structure's
    # every line carries exactly the carbon of the right multiplicity
    mol = Chem.MolFromSmiles("CCC(C)=O")
    for f in r.fits:
        (atom,) = f.atoms
        assert mol.GetAtomWithIdx(atom).GetTotalNumHs() == {"C": 0, "CH": 1, "CH2": 2, "CH3": 3}[f.multiplicity]


def test_wrong_ester_regioisomer_is_flagged_and_truth_listed():
    # methyl propanoate expected, ethyl acetate measured: the O-CH2 at 60 ppm cannot be a C-CH2
    r = check_structure("CCC(=O)OC", ETHYL_ACETATE, time_limit=3)
    assert r.verdict in ("doubtful", "inconsistent")
    best = r.alternatives[0]
    assert best.smiles == "CCOC(C)=O" and best.clearly_better
    assert best.delta_cost > 0 and best.pairwise_probability > 0.95


@pytest.mark.parametrize("wrong", ["Cc1ccccc1O", "Cc1cccc(O)c1"])
def test_wrong_cresol_isomer_is_flagged_and_para_listed(wrong):
    # five lines (para symmetry) cannot come from the unsymmetric ortho/meta isomer
    r = check_structure(wrong, P_CRESOL, time_limit=3)
    assert r.verdict in ("doubtful", "inconsistent")
    assert "Cc1ccc(O)cc1" in [a.smiles for a in r.alternatives if a.clearly_better]
    assert all(a.same_scaffold for a in r.alternatives if a.smiles == "Cc1ccc(O)cc1")
    assert r.no_own_line >= 2


def test_true_cresol_consistent():
    r = check_structure("Oc1ccc(C)cc1", P_CRESOL, time_limit=3)
    assert r.verdict == "consistent", r.reasons


def test_formula_mismatch_is_inconsistent():
    r = check_structure("CCC(C)=O", CYCLOHEXANONE, formula="C6H10O", time_limit=2)
    assert r.verdict == "inconsistent"
    assert any("differs" in x for x in r.reasons)


def test_multiplicity_mismatch_is_inconsistent():
    r = check_structure("CC(C)C=O", BUTANONE, search=False)
    assert r.verdict == "inconsistent"
    assert all(f.kind == "unexplained" for f in r.fits)


def test_no_search_lists_no_alternatives():
    r = check_structure("O=C1CCCCC1", CYCLOHEXANONE, search=False)
    assert r.verdict == "consistent" and r.alternatives == () and r.searched == ()


@pytest.mark.parametrize("bad, kw", [("", {}), ("C1CC", {}), ("CC.O", {}), ("[Na+].[Cl-]", {}),
                                     ("CCC(C)=O", {"time_limit": 0}), ("CCC(C)=O", {"alternatives": -1})])
def test_bad_input_raises_input_error(bad, kw):
    with pytest.raises(InputError):
        check_structure(bad, BUTANONE, **kw)


def test_json_contract_and_text():
    data = check_to_dict(check_structure("CCC(C)=O", BUTANONE, time_limit=2))
    assert {"verdict", "assignment", "alternatives", "fit", "reasons", "search", "caution"} <= set(data)
    assert data["verdict"] in ("consistent", "doubtful", "inconsistent")
    assert {"mae_ppm", "max_error_ppm", "gross_deviations", "unexplained_lines"} <= set(data["fit"])
    assert data["fit"]["clearly_better_ratio"] == CLEARLY_BETTER_RATIO
    json.dumps(data)  # plain data only
    text = render_check_text(data)
    assert "Verdict: CONSISTENT" in text and "hypothesis" in text


def test_cli_check_json_and_errors():
    runner = CliRunner()
    res = runner.invoke(main, ["check", "--smiles", "CCC(=O)OC", "--peaks", ETHYL_ACETATE,
                               "--time-limit", "2", "--format", "json"])
    assert res.exit_code == 0, res.output
    data = json.loads(res.stdout)
    assert data["verdict"] != "consistent"
    assert data["alternatives"][0]["smiles"] == "CCOC(C)=O"
    bad = runner.invoke(main, ["check", "--smiles", "C1CC", "--peaks", ETHYL_ACETATE])
    assert bad.exit_code == 2 and bad.stderr.startswith("error:") and "Traceback" not in bad.stderr


def test_positional_isomers_of_chlorotoluene():
    # the three chlorotoluenes and benzyl chloride are the C7H7Cl isomers made by moving Cl or CH3
    # on a benzene ring (common practice, no source)
    assert single_moves("Cc1ccccc1Cl") == ["Cc1ccc(Cl)cc1", "Cc1cccc(Cl)c1", "ClCc1ccccc1"]
    iso = list(positional_isomers("Cc1ccccc1Cl", depth=2))
    assert len(iso) == len(set(iso)) and "Cc1ccccc1Cl" not in iso
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    assert {CalcMolFormula(Chem.MolFromSmiles(s)) for s in iso} == {"C7H7Cl"}


def test_verify_scenario(monkeypatch):
    # scenarios/brackenridge-verify: invented lab; 4-methylphenol shifts from memory of standard tables
    root = __import__("pathlib").Path(__file__).resolve().parents[1]
    meta = json.loads((root / "scenarios" / "brackenridge-verify" / "scenario.json").read_text())
    args = list(meta["command"])
    args[args.index("--time-limit") + 1] = "3"
    monkeypatch.chdir(root)
    res = CliRunner().invoke(main, args + ["--format", "json"])
    assert res.exit_code == 0, res.output
    data = json.loads(res.stdout)
    assert data["verdict"] != meta["expect"]["verdict_not"]
    assert data["alternatives"][0]["smiles"] == meta["expect"]["better_alternative"]
