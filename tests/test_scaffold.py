"""``solve --scaffold``: candidates keep the scaffold; the answer keeps or improves its rank.

Shifts quoted from memory: toluene in CDCl3 from Fulmer et al.,
Organometallics 2010, 29, 2176; 4-methylphenol (p-cresol) and cyclohexanone
from standard CDCl3 13C tables.
"""

import json

import pytest
from click.testing import CliRunner
from rdkit import Chem

from elucidate import api
from elucidate.cli import main
from elucidate.errors import InputError
from elucidate.formula import parse_formula
from elucidate.constraints.scaffold import murcko_scaffold, parse_scaffold, scaffold_filter

P_CRESOL = "153.0 C, 130.1 CH, 130.0 C, 115.2 CH, 20.5 CH3"
CYCLOHEXANONE = "212.0 C, 42.0 CH2, 27.1 CH2, 25.1 CH2"
TOLUENE = "137.9 C, 129.1 CH, 128.3 CH, 125.3 CH, 21.5 CH3"


def _rank(result, smiles):
    target = Chem.MolToSmiles(Chem.MolFromSmiles(smiles))
    names = [c.smiles for c in result.candidates]
    return names.index(target) + 1 if target in names else None


@pytest.mark.parametrize("formula, peaks, answer, scaffold", [
    ("C7H8", TOLUENE, "Cc1ccccc1", "c1ccccc1"),
    ("C6H10O", CYCLOHEXANONE, "O=C1CCCCC1", "C1CCCCC1"),
])
def test_scaffold_keeps_rank_and_every_candidate_contains_it(formula, peaks, answer, scaffold):
    plain = api.solve(formula, peaks, time_limit=20, top=100)
    scaf = api.solve(formula, peaks, time_limit=20, top=100, scaffold=scaffold)
    assert plain.complete and scaf.complete
    r0, r1 = _rank(plain, answer), _rank(scaf, answer)
    assert r0 is not None and r1 is not None and r1 <= r0
    q = Chem.MolFromSmiles(scaffold)
    assert scaf.candidates and all(Chem.MolFromSmiles(c.smiles).HasSubstructMatch(q) for c in scaf.candidates)
    # the scaffold filter removed something and is logged
    name, before, after = next(x for x in scaf.constraint_log if x[0].startswith("scaffold"))
    assert after <= before and len(scaf.candidates) <= len(plain.candidates)


def test_cli_scaffold_combines_with_require_and_forbid():
    res = CliRunner().invoke(main, ["solve", "-f", "C7H8O", "-p", P_CRESOL, "--scaffold", "c1ccccc1",
                                    "--require", "[OX2H]", "--forbid", "[CH2]", "--format", "json",
                                    "--top", "50"])
    assert res.exit_code == 0, res.output
    data = json.loads(res.stdout)
    ring, oh, ch2 = (Chem.MolFromSmarts(s) for s in ("c1ccccc1", "[OX2H]", "[CH2]"))
    assert data["candidates"]
    for c in data["candidates"]:
        m = Chem.MolFromSmiles(c["smiles"])
        assert m.HasSubstructMatch(ring) and m.HasSubstructMatch(oh) and not m.HasSubstructMatch(ch2)
    assert data["candidates"][0]["smiles"] == "Cc1ccc(O)cc1"


def test_scaffold_errors():
    with pytest.raises(InputError, match="not a valid SMILES"):
        parse_scaffold("c1ccc(")
    with pytest.raises(InputError, match="cannot occur"):
        scaffold_filter("c1ccc2ccccc2c1", parse_formula("C7H8O"))
    res = CliRunner().invoke(main, ["solve", "-f", "C7H8O", "-p", P_CRESOL, "--scaffold", "c1ccncc1"])
    assert res.exit_code == 2 and "error:" in res.stderr and "only 0" in res.stderr


def test_fragment_scaffold_ignores_hydrogens():
    # an aromatic ring cut out of a larger system is still a usable pattern
    q = parse_scaffold(murcko_scaffold(Chem.MolFromSmiles("COc1c[nH]c(=O)[nH]c1=O")))
    assert Chem.MolFromSmiles("Cn1cc(OC)c(=O)[nH]c1=O").HasSubstructMatch(q)
    assert not Chem.MolFromSmiles("COc1ccc(=O)[nH]c1").HasSubstructMatch(q)


def test_byproduct_scenario(monkeypatch):
    # scenarios/saltmarsh-byproduct: invented lab; 2-methylphenol shifts from memory of standard tables
    root = __import__("pathlib").Path(__file__).resolve().parents[1]
    meta = json.loads((root / "scenarios" / "saltmarsh-byproduct" / "scenario.json").read_text())
    monkeypatch.chdir(root)
    res = CliRunner().invoke(main, list(meta["command"]) + ["--format", "json", "--top", "50"])
    assert res.exit_code == 0, res.output
    data = json.loads(res.stdout)
    assert data["complete"] and data["candidates"][0]["smiles"] == meta["expect"]["top"]
    q = Chem.MolFromSmiles(meta["expect"]["all_contain"])
    assert all(Chem.MolFromSmiles(c["smiles"]).HasSubstructMatch(q) for c in data["candidates"])
