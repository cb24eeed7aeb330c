"""The library never switches RDKit's log off for the caller.

Parsing that is expected to fail (edited structures with impossible
valences, unreadable records that get our own error message) is quiet while
it runs, inside ``rdkit.rdBase.BlockLogs``; afterwards RDKit reports to the
caller exactly as before.  Rule for libraries: no global side effects on a
shared logger (common practice, no source).
"""

from __future__ import annotations

import json

import pytest
from rdkit import Chem, rdBase

from elucidate.errors import InputError

BAD_SMILES = "C1CC"  # unclosed ring: RDKit logs a parse error and returns None


@pytest.fixture()
def rdkit_log(capfd):
    """RDKit errors and warnings on, as in a fresh process; yields a check
    that the status is unchanged and that RDKit still speaks to the caller."""
    before = dict(line.split(":", 1) for line in rdBase.LogStatus().splitlines() if ":" in line)
    rdBase.EnableLog("rdApp.error")
    rdBase.EnableLog("rdApp.warning")
    status = rdBase.LogStatus()

    def still_on(what: str) -> None:
        capfd.readouterr()
        assert rdBase.LogStatus() == status, f"{what} changed RDKit's log status"
        assert Chem.MolFromSmiles(BAD_SMILES) is None
        err = capfd.readouterr().err
        assert "SMILES Parse Error" in err or "unclosed ring" in err.lower(), (
            f"after {what}, RDKit no longer reports a bad SMILES to the caller: {err!r}")

    yield still_on
    for name, state in before.items():
        (rdBase.EnableLog if state.strip() == "enabled" else rdBase.DisableLog)(name)


def test_regioisomers_quiet_while_editing_and_log_left_on(rdkit_log, capfd):
    from elucidate.workflows.regio import positional_isomers, single_moves

    capfd.readouterr()
    # 2-chlorotoluene: the 3- and 4-isomers and benzyl chloride are one move
    # away (see the single_moves docstring; positional isomers by definition).
    assert "Cc1ccc(Cl)cc1" in single_moves("Cc1ccccc1Cl")
    gen = positional_isomers("Cc1ccccc1Cl", depth=2)
    first = next(gen)
    rdkit_log("a suspended positional_isomers generator")  # the generator must not hold a block open
    rest = list(gen)
    assert first not in rest and "ClCc1ccccc1" in [first, *rest]
    assert capfd.readouterr().err == ""  # failed edits were not reported
    rdkit_log("positional_isomers")


def test_regioisomers_bad_smiles_is_an_input_error(rdkit_log, capfd):
    from elucidate.workflows.regio import positional_isomers, single_moves

    capfd.readouterr()
    with pytest.raises(InputError, match="cannot parse"):
        single_moves(BAD_SMILES)
    with pytest.raises(InputError, match="cannot parse"):
        list(positional_isomers(BAD_SMILES))
    assert capfd.readouterr().err == ""  # our error replaces RDKit's parser message
    rdkit_log("single_moves on bad SMILES")


def test_predictor_evaluation_leaves_log_on(rdkit_log, tmp_path, capfd):
    from elucidate.predict.evaluate import evaluate_cases

    # invented QC "unknown"; ethanol CDCl3 shifts from Fulmer et al.,
    # Organometallics 2010, 29, 2176 (from memory)
    path = tmp_path / "cases.jsonl"
    path.write_text(json.dumps({"id": "demo-lot-9", "answer": "CCO", "peaks": [
        {"shift": 18.41, "mult": "CH3", "count": 1}, {"shift": 58.28, "mult": "CH2", "count": 1}]}) + "\n")
    assert evaluate_cases(path)["cases"] == 1
    rdkit_log("evaluate_cases")
    path.write_text(json.dumps({"id": "demo-lot-10", "answer": BAD_SMILES, "peaks": [
        {"shift": 20.0, "mult": "CH2", "count": 1}]}) + "\n")
    capfd.readouterr()
    with pytest.raises(InputError, match="demo-lot-10"):
        evaluate_cases(path)
    assert capfd.readouterr().err == ""
    rdkit_log("evaluate_cases on a bad answer")


def test_table_build_reader_skips_bad_records_quietly_and_leaves_log_on(rdkit_log, tmp_path, capfd):
    from elucidate.predict.build import _read_corpus

    # invented records; ethanol / propan-1-ol shifts from common CDCl3 tables (from memory)
    path = tmp_path / "train.jsonl"
    path.write_text("".join(json.dumps(r) + "\n" for r in [
        {"smiles": "CCO", "shifts": [[18.4, "CH3"], [58.3, "CH2"]]},
        {"smiles": BAD_SMILES, "shifts": [[20.0, "CH2"]]},
        {"smiles": "CCCO", "shifts": [[10.1, "CH3"], [25.9, "CH2"], [64.2, "CH2"]]},
    ]))
    capfd.readouterr()
    corpus, n_lines = _read_corpus(path, None, 1, None)
    assert n_lines == 3 and list(corpus.smiles) == ["CCO", "CCCO"]
    assert capfd.readouterr().err == ""
    rdkit_log("the training-data reader")


def test_reference_library_and_index_leave_log_on(rdkit_log, tmp_path, capfd):
    from elucidate.reference.index import ReferenceEntry, ReferenceIndex
    from elucidate.reference.library import load_reference_library

    path = tmp_path / "lab.jsonl"
    path.write_text(json.dumps({"smiles": BAD_SMILES, "shifts": [[20.0, "CH2"]]}) + "\n")
    capfd.readouterr()
    with pytest.raises(InputError, match="cannot read SMILES"):
        load_reference_library(path)
    assert capfd.readouterr().err == ""
    rdkit_log("load_reference_library")
    sdf = tmp_path / "lab.sdf"
    sdf.write_text("bad\n  invented\n\n  1  0  0  0  0  0  0  0  0  0999 V2000\n"
                   "    0.0000    0.0000    0.0000 Xx  0  0  0  0  0  0  0  0  0  0  0  0\n"
                   "M  END\n> <13C_PEAKS>\n20.0\n\n$$$$\n")
    with pytest.raises(InputError):
        load_reference_library(sdf)
    rdkit_log("load_reference_library on an SD file")
    entry = ReferenceEntry(smiles=BAD_SMILES, formula="C3H6", lines=((20.0, 2, 1),),
                           source_id="x-1", origin="invented")
    capfd.readouterr()
    with pytest.raises(InputError, match="x-1"):
        ReferenceIndex.from_entries([entry])
    assert capfd.readouterr().err == ""
    rdkit_log("ReferenceIndex.from_entries")
