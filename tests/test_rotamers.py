"""Rotamer (hindered-rotation) splitting: the structural rule, its penalty, and DEET.

Chemistry sources: doubled N-alkyl lines of N,N-dialkylamides at room temperature
(slow amide C-N rotation) are common practice, no source; DMF's two N-methyl lines
(36.5 and 31.4 ppm in CDCl3) are from the published solvent table (Fulmer et al.,
Organometallics 2010, 29, 2176; from memory); the DEET shifts below are from memory.
Which groups count as hindered was measured on the nmrshiftdb2 training spectra
(scripts/measure_rotamer_splits.py, docs/constraints.md).
"""

import gzip
import json
import math
from pathlib import Path
from types import SimpleNamespace as P

import pytest
from click.testing import CliRunner
from rdkit import Chem

from elucidate.cli import main
from elucidate.constraints.spectral import SymmetryAllowance, carbon_classes, symmetry_filter, symmetry_mismatch
from elucidate.errors import InputError
from elucidate.pipeline import rank_structure
from elucidate.rank.assignment import SPLIT_COST, CarbonClass, assign_lines
from elucidate.rank.rotamers import ROTAMER_SPLIT_COST, rotamer_sites, rotamer_split_costs
from elucidate.spectrum.peaks import read_peaks

DATA = Path(__file__).resolve().parents[2] / "shared" / "data" / "train_spectra.jsonl.gz"
DEET = "CCN(CC)C(=O)c1cccc(C)c1"
# DEET in CDCl3, from memory: two N-CH2 and two N-CH2-CH3 lines (slow amide rotation).
DEET_PEAKS = ("171.3 C, 138.2 C, 137.2 C, 129.8 CH, 128.2 CH, 126.8 CH, 123.2 CH, "
              "43.2 CH2, 39.2 CH2, 21.4 CH3, 14.2 CH3, 12.9 CH3")


def _marked(smiles):
    """(H count, class size, distance from N) of each rotamer-capable class, sorted."""
    mol = Chem.MolFromSmiles(smiles)
    return sorted((mol.GetAtomWithIdx(s.atoms[0]).GetTotalNumHs(), len(s.atoms), s.distance)
                  for s in rotamer_sites(mol))


def test_deet_n_ethyl_carbons_are_rotamer_capable():
    # common practice, no source: both N-CH2 (distance 1) and their CH3 (distance 2) double.
    assert _marked(DEET) == [(2, 2, 1), (3, 2, 2)]
    sites = rotamer_sites(Chem.MolFromSmiles(DEET))
    assert {s.kind for s in sites} == {"amide"}


def test_dmf_n_methyls_are_rotamer_capable():
    # Fulmer et al. 2010 (from memory): DMF shows two N-methyl lines.
    assert _marked("CN(C)C=O") == [(3, 2, 1)]


@pytest.mark.parametrize("smiles", [
    "CCN(CC)CC",          # triethylamine: free inversion/rotation (common practice, no source)
    "CCOCC",              # diethyl ether
    "CCOC(=O)OCC",        # diethyl carbonate: no nitrogen
    "CN(C)c1ccccc1",      # N,N-dimethylaniline: never split in the training spectra
    "CCN(CC)S(=O)(=O)c1ccccc1",  # sulfonamide: never split in the training spectra
    "CN(C)C(=O)N(C)C",    # tetramethylurea: ureas split no more than ordinary classes (training spectra)
    "CC(=O)NC",           # secondary amide: no pair of equivalent N substituents
    "CCN(C)C(C)=O",       # N-ethyl-N-methyl: substituents already distinct
])
def test_not_rotamer_capable(smiles):
    assert rotamer_sites(Chem.MolFromSmiles(smiles)) == ()


@pytest.mark.parametrize("smiles,kind,marked", [
    ("CN(C)N=O", "N-nitroso", [(3, 2, 1)]),              # NDMA: two methyl lines (from memory)
    ("CC(=S)N(C)C", "thioamide", [(3, 2, 1)]),           # training spectra: split like amides
    ("CC(C)(C)OC(=O)N1CCCCC1", "carbamate", [(2, 2, 1), (2, 2, 2)]),
    ("CC(=O)N1CCCCC1", "amide", [(2, 2, 1), (2, 2, 2)]),  # N-acyl heterocycle: ring C2/C6, C3/C5
    ("CCCCN(CCCC)C(C)=O", "amide", [(2, 2, 1), (2, 2, 2), (2, 2, 3), (3, 2, 4)]),
])
def test_other_hindered_groups(smiles, kind, marked):
    assert _marked(smiles) == marked
    assert {s.kind for s in rotamer_sites(Chem.MolFromSmiles(smiles))} == {kind}


def test_marked_classes_are_the_ordinary_classes():
    mol = Chem.MolFromSmiles("CC(C)N(C(C)C)C(=O)c1ccccc1")
    ordinary = {tuple(sorted(a)) for groups in carbon_classes(mol).values() for a in groups}
    assert {s.atoms for s in rotamer_sites(mol)} <= ordinary


def test_split_costs_by_measured_group():
    # Counts in rank/rotamers.py: amides 241 split vs 103 merged -> log odds below 0, floored;
    # carbamates etc. 52 vs 96.
    assert ROTAMER_SPLIT_COST["frequent"] == 0.0
    assert ROTAMER_SPLIT_COST["occasional"] == pytest.approx(-math.log(52 / 96))
    boc = rotamer_split_costs(Chem.MolFromSmiles("CC(C)(C)OC(=O)N1CCCCC1"))
    assert set(boc.values()) == {ROTAMER_SPLIT_COST["occasional"]}
    assert rotamer_split_costs(Chem.MolFromSmiles("CCN(CC)CC")) == {}


def test_class_split_cost_replaces_the_first_split_only():
    peaks = [P(shift=s, hydrogens=3, count=None) for s in (30.0, 33.0, 36.0)]
    plain = [CarbonClass(3, (0, 1, 2), 33.0, 2.0)]
    cheap = [CarbonClass(3, (0, 1, 2), 33.0, 2.0, split_cost=0.5)]
    a, b = assign_lines(peaks, plain), assign_lines(peaks, cheap)
    assert a.splits == b.splits == 2 and not a.unfilled and not b.unfilled
    assert a.cost - b.cost == pytest.approx(SPLIT_COST - 0.5)


def test_cheap_split_changes_the_choice():
    # Two CH3 lines 5 ppm apart, candidates: one class of two methyls (must split) ...
    peaks = [P(shift=36.5, hydrogens=3, count=None), P(shift=31.4, hydrogens=3, count=None)]
    pair = assign_lines(peaks, [CarbonClass(3, (0, 1), 34.0, 2.0, split_cost=0.0)])
    pair_ordinary = assign_lines(peaks, [CarbonClass(3, (0, 1), 34.0, 2.0)])
    assert pair.splits == 1 and pair_ordinary.cost - pair.cost == pytest.approx(SPLIT_COST)


@pytest.mark.parametrize("bad", [-0.1, SPLIT_COST + 0.1, float("nan")])
def test_split_cost_out_of_range_is_an_input_error(bad):
    with pytest.raises(InputError, match="split_cost"):
        CarbonClass(3, (0, 1), 34.0, 2.0, split_cost=bad)


def test_symmetry_allowance_keeps_deet():
    peaks = read_peaks(DEET_PEAKS).peaks
    mol = Chem.MolFromSmiles(DEET)
    assert symmetry_mismatch(mol, peaks) == (0, 2)
    assert symmetry_filter(peaks, SymmetryAllowance()).keep(mol)


def test_deet_fits_better_than_the_misfit_anilide():
    # The competitor: an anilide whose best assignment leaves a line ~10 ppm off.
    peaks = read_peaks(DEET_PEAKS).peaks
    deet, _ = rank_structure(Chem.MolFromSmiles(DEET), peaks)
    other, _ = rank_structure(Chem.MolFromSmiles("CCC(=O)N(CC)c1ccccc1C"), peaks)
    assert deet.splits == 2 and other.splits == 0
    assert deet.max_error < 4.0 < 8.0 < other.max_error
    assert deet.cost < other.cost


def test_deet_ranks_first_in_a_constrained_solve():
    # Search restricted to benzene amides (the misfit anilide is one) to stay fast.
    result = CliRunner().invoke(main, ["solve", "--formula", "C12H17NO", "--peaks", DEET_PEAKS,
                                       "--scaffold", "c1ccccc1", "--require", "[CX3](=O)N",
                                       "--time-limit", "15", "--format", "json"])
    assert result.exit_code == 0, result.output
    best = json.loads(result.stdout)["candidates"][0]
    assert best["smiles"] == Chem.MolToSmiles(Chem.MolFromSmiles(DEET))
    assert best["split_classes"] == 2


@pytest.mark.skipif(not DATA.exists(), reason="training spectra not present (../shared/data)")
def test_diethylamides_in_the_training_spectra_mostly_split():
    # nmrshiftdb2 training data: N,N-diethylcarboxamides whose N-ethyl CH2 class is the only
    # rotamer-capable CH2 class; split when the CH2 lines outnumber the CH2 classes.
    query = Chem.MolFromSmarts("[CH3][CH2]N([CH2][CH3])C(=O)[#6]")
    split = merged = 0
    with gzip.open(DATA, "rt") as fh:
        for line in fh:
            if "N(CC)" not in line and "CCN(" not in line:
                continue
            rec = json.loads(line)
            mol = Chem.MolFromSmiles(rec["smiles"])
            if mol is None or len(mol.GetSubstructMatches(query)) != 1:
                continue
            sites = [s for s in rotamer_sites(mol) if s.distance == 1]
            ch2_classes = len(carbon_classes(mol).get(2, []))
            ch2_lines = len({s for s, m in rec["shifts"] if m == "CH2"})
            if len(sites) != 1:
                continue
            split += ch2_lines > ch2_classes
            merged += ch2_lines <= ch2_classes
    assert split + merged >= 10
    assert split > 2 * merged
