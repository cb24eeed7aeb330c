"""End-to-end: the bundled invented scenarios through `elucidate solve`.

Each scenario's shifts are published CDCl3 values of common compounds
(Fulmer et al., Organometallics 2010, 29, 2176, from memory; 2-butanone from
memory of standard tables).  The check is that the known structure is among
the candidates of a complete search, and that the JSON contract holds.
"""

import json
from pathlib import Path

import pytest
from click.testing import CliRunner
from rdkit import Chem

from elucidate.cli import main

ROOT = Path(__file__).resolve().parents[1]
SCENARIOS = sorted(p.parent for p in (ROOT / "scenarios").glob("*/scenario.json") if
                   "peaks" in json.loads(p.read_text()) and "formula" in json.loads(p.read_text())
                   and not json.loads(p.read_text()).get("large"))
TOP_KEYS = {"formula", "dbe", "complete", "candidates_generated", "elapsed_s", "warnings", "candidates",
            "constraint_log"}
CAND_KEYS = {"smiles", "score", "mae_ppm", "max_error_ppm", "assignment"}
ENTRY_KEYS = {"peak_index", "observed", "predicted", "atoms"}


def _canon(smi):
    return Chem.MolToSmiles(Chem.MolFromSmiles(smi), isomericSmiles=False)


@pytest.mark.parametrize("folder", SCENARIOS, ids=[p.name for p in SCENARIOS])
def test_scenario_solves_completely_with_known_answer(folder):
    meta = json.loads((folder / "scenario.json").read_text())
    args = ["solve", "--formula", meta["formula"], "--peaks", str(folder / meta["peaks"]),
            "--format", "json", "--top", "50"]
    if meta.get("solvent"):
        args += ["--solvent", meta["solvent"]]
    result = CliRunner().invoke(main, args)
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert TOP_KEYS <= set(data)
    assert data["complete"] is True
    assert data["candidates"], "no candidates"
    for cand in data["candidates"]:
        assert CAND_KEYS <= set(cand)
        mol = Chem.MolFromSmiles(cand["smiles"])
        n_atoms = mol.GetNumAtoms()
        for entry in cand["assignment"]:
            assert ENTRY_KEYS <= set(entry)
            assert all(0 <= a < n_atoms and mol.GetAtomWithIdx(a).GetSymbol() == "C" for a in entry["atoms"])
    smiles = [c["smiles"] for c in data["candidates"]]
    assert _canon(meta["confirmed"]) in smiles


LARGE = sorted(p.parent for p in (ROOT / "scenarios").glob("*/scenario.json") if json.loads(p.read_text()).get("large"))


@pytest.mark.slow
@pytest.mark.parametrize("folder", LARGE, ids=[p.name for p in LARGE])
def test_large_scenario_puts_the_confirmed_structure_first(folder):
    # too large to enumerate: found by the search strategies, stated as such
    meta = json.loads((folder / "scenario.json").read_text())
    args = ["solve", "--formula", meta["formula"], "--peaks", str(folder / meta["peaks"]),
            "--format", "json", "--solvent", meta["solvent"], "--time-limit", "60"]
    if meta.get("correlations"):  # 2D cross peaks (HSQC/HMBC) recorded with the 13C spectrum
        args += ["--correlations", str(folder / meta["correlations"])]
    result = CliRunner().invoke(main, args)
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert data["candidates"][0]["smiles"] == _canon(meta["confirmed"])
    assert data["completeness"]["statement"] and data["completeness"]["how"]
    assert Chem.MolFromSmiles(meta["confirmed"]).GetNumAtoms() >= 16


def test_small_scenarios_exist():
    small = [p for p in SCENARIOS
             if Chem.MolFromSmiles(json.loads((p / "scenario.json").read_text())["confirmed"]).GetNumAtoms() <= 8]
    assert len(small) >= 3


def test_assignment_atoms_follow_smiles_order():
    # Ethyl acetate: carbonyl carbon must be the atom bonded to two O in the
    # SMILES as written (rule of thumb: ester C=O near 171 ppm; common practice, no source).
    result = CliRunner().invoke(main, ["solve", "--formula", "C4H8O2", "--peaks",
                                       "171.1 C, 60.5 CH2, 21.0 CH3, 14.2 CH3", "--format", "json"])
    data = json.loads(result.stdout)
    best = data["candidates"][0]
    mol = Chem.MolFromSmiles(best["smiles"])
    entry = next(e for e in best["assignment"] if e["observed"] == 171.1)
    (atom,) = entry["atoms"]
    assert sorted(n.GetSymbol() for n in mol.GetAtomWithIdx(atom).GetNeighbors()) == ["C", "O", "O"]
