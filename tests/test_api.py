"""The Python API returns the objects the CLI serialises.

Shifts quoted from memory: ethyl acetate from Fulmer et al., Organometallics
2010, 29, 2176; 2-butanone from standard CDCl3 13C tables.
"""

import json

import pytest
from click.testing import CliRunner

import elucidate
from elucidate.cli import main
from elucidate.pipeline import SolveResult
from elucidate.workflows.check import CheckResult

ETHYL_ACETATE = "171.1 C, 60.4 CH2, 21.0 CH3, 14.2 CH3"
BUTANONE = "209.3 C, 36.9 CH2, 29.4 CH3, 7.9 CH3"


def _strip(d):
    # run: the time of the run differs between two runs
    return {k: v for k, v in d.items() if k not in ("elapsed_s", "settings", "search", "run")}


def test_solve_same_as_cli():
    result = elucidate.solve("C4H8O2", ETHYL_ACETATE, time_limit=20, top=5)
    assert isinstance(result, SolveResult) and result.complete
    assert result.candidates[0].smiles == "CCOC(C)=O"
    cli = CliRunner().invoke(main, ["solve", "-f", "C4H8O2", "-p", ETHYL_ACETATE, "--top", "5",
                                    "--time-limit", "20", "--format", "json"])
    assert cli.exit_code == 0, cli.output
    assert _strip(json.loads(cli.stdout)) == _strip(elucidate.to_dict(result))


def test_check_same_as_cli():
    report = elucidate.check("CCC(C)=O", BUTANONE, time_limit=3)
    assert isinstance(report, CheckResult) and report.verdict == "consistent"
    cli = CliRunner().invoke(main, ["check", "-s", "CCC(C)=O", "-p", BUTANONE, "--time-limit", "3",
                                    "--format", "json"])
    assert cli.exit_code == 0, cli.output
    assert _strip(json.loads(cli.stdout)) == _strip(elucidate.to_dict(report))


def test_predict_same_as_cli_and_subpackage_still_works():
    shifts = elucidate.predict("CCOC(C)=O")
    cli = CliRunner().invoke(main, ["predict", "CCOC(C)=O", "--format", "json"])
    assert json.loads(cli.stdout)[0]["atoms"] == elucidate.to_dict(shifts)
    # ethyl acetate carbonyl near 171 ppm (Fulmer 2010, from memory); within the model's uncertainty
    carbonyl = next(a for a in shifts if a.index == 3)
    assert abs(carbonyl.shift - 171.1) < 3 * carbonyl.sigma
    from elucidate.predict import predict_smiles

    assert predict_smiles("CCOC(C)=O") == shifts


@pytest.mark.parametrize("call", [
    lambda: elucidate.solve("C4H8O2", ETHYL_ACETATE, bogus=1),
    lambda: elucidate.solve("C4H8O2", ETHYL_ACETATE, top="3"),
    lambda: elucidate.solve("C4H8O2", ETHYL_ACETATE, require=5),
    lambda: elucidate.solve("C4H8O2", ETHYL_ACETATE, valences={"S": (0,)}),
    lambda: elucidate.check("not a smiles", BUTANONE),
    lambda: elucidate.predict(""),
    lambda: elucidate.to_dict(42),
])
def test_api_input_errors(call):
    with pytest.raises(elucidate.InputError):
        call()


def test_solve_options_reach_settings():
    r = elucidate.solve("C4H8O2", ETHYL_ACETATE, time_limit=10, require="[CX3](=O)[OX2]", max_rings=0,
                        scaffold="C=O")
    assert r.settings.require == ("[CX3](=O)[OX2]",) and r.settings.max_rings == 0
    assert r.settings.scaffold == "C=O"
    assert elucidate.to_dict(r)["settings"]["scaffold"] == "C=O"


def test_to_dict_records_sample_names_time_and_spectrum():
    from datetime import datetime, timezone
    from pathlib import Path

    # scenarios/kestrel-coatings-jcamp: synthetic 13C spectrum of 4-methylpentan-2-one (make_spectra.py)
    jdx = Path(__file__).resolve().parents[1] / "scenarios" / "kestrel-coatings-jcamp" / "drum-rinse-KC-2211_c13.jdx"
    start = datetime(2026, 1, 15, 8, 30, tzinfo=timezone.utc)
    result = elucidate.solve("C6H12O", str(jdx), solvent="CDCl3", time_limit=20, top=3)
    a = elucidate.to_dict(result, sample_id="KC-2211", analyst="R. Okafor", run_at=start, spectrum=jdx)
    b = elucidate.to_dict(result, sample_id="KC-2211", analyst="R. Okafor", run_at=start, spectrum=str(jdx))
    assert a == b  # deterministic once the time is given
    assert a["run"]["timestamp_utc"] == "2026-01-15T08:30:00Z" and a["run"]["sample_id"] == "KC-2211"
    assert a["spectrum_trace"]["points"] == 32768 and a["observe_mhz"] == pytest.approx(100.6)
    assert "spectrum_trace" not in elucidate.to_dict(result)
    with pytest.raises(elucidate.InputError, match="timezone"):
        elucidate.to_dict(result, run_at=datetime(2026, 1, 15))
    with pytest.raises(elucidate.InputError, match="solve results only"):
        elucidate.to_dict(elucidate.check("CCC(C)=O", BUTANONE, search=False), sample_id="X")


@pytest.mark.parametrize("call,fragment", [
    (lambda: elucidate.solve("C4H8O2", ETHYL_ACETATE, solvent=""), "solvent=''"),
    (lambda: elucidate.solve("C4H8O2", ETHYL_ACETATE, solvent="   "), "solvent name is empty"),
    (lambda: elucidate.solve("C4H8O2", ETHYL_ACETATE, solvent="chloroformx"), "known: "),
    (lambda: elucidate.solve("C4H8O2", ETHYL_ACETATE, solvent=77.16), "solvent must be a solvent name"),
    (lambda: elucidate.check("CCC(C)=O", BUTANONE, solvent=""), "solvent=''"),
], ids=["solve-empty", "solve-blank", "solve-unknown", "solve-number", "check-empty"])
def test_api_solvent_validated_like_the_cli(call, fragment):
    # The CLI rejects --solvent "" (tests/test_cli_errors.py); the API must
    # not quietly treat an empty name as "keep the solvent lines".
    with pytest.raises(elucidate.InputError) as err:
        call()
    msg = str(err.value)
    assert fragment in msg, msg
    assert "cdcl3" in msg.lower() or "None" in msg, msg  # says how to fix it
    cli = CliRunner().invoke(main, ["solve", "-f", "C4H8O2", "-p", ETHYL_ACETATE, "--solvent", ""])
    assert cli.exit_code == 2 and "solvent" in cli.stderr
