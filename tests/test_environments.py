"""Environment keys and the environment rule used during generation."""

from types import SimpleNamespace as P

from rdkit import Chem

from elucidate.constraints.environments import (
    EnvironmentTable,
    environment_keys,
    environment_row_check_factory,
    kekule_forms,
    mol_environment_keys,
)
from elucidate.generate import AtomType


def test_keys_of_ethanol():
    keys = mol_environment_keys(Chem.MolFromSmiles("CCO"))
    assert keys[1] == ("2|C3-1,O1-1", "2|C-1,O-1")
    assert keys[0] == ("3|C2-1", "3|C-1")


def test_kekule_forms_of_pyridine_cover_both_bond_patterns():
    forms = kekule_forms(Chem.MolFromSmiles("c1ccncc1"))
    c2_keys = {mol_environment_keys(f)[4][1] for f in forms}  # atom 4 is a C next to N
    assert c2_keys == {"1|C-1,N-2", "1|C-2,N-1"}


def test_rule_rejects_a_ketone_carbon_without_a_line_near_200_ppm():
    # A ketone carbonyl sits near 205-212 ppm (common practice, no source).
    k2, k1 = environment_keys(0, [("C", 3, 1), ("C", 3, 1), ("O", 0, 2)])
    table = EnvironmentTable({k2: [50, 200.0, 207.0, 215.0, 204.0, 210.0, 198.0, 216.0],
                              k1: [80, 195.0, 206.0, 218.0, 203.0, 209.0, 190.0, 220.0]}, {})
    dist = (AtomType("C", 4, 0), AtomType("C", 4, 3), AtomType("C", 4, 3), AtomType("O", 2, 0))
    m = [[0, 1, 1, 2], [1, 0, 0, 0], [1, 0, 0, 0], [2, 0, 0, 0]]
    without = environment_row_check_factory([P(shift=170.0, hydrogens=0)], table, margin=4.0)
    assert without(dist)(0, m) is False
    assert without.rejected == 1
    with_line = environment_row_check_factory([P(shift=206.5, hydrogens=0)], table, margin=4.0)
    assert with_line(dist)(0, m) is True
    unknown_mult = environment_row_check_factory([P(shift=206.5, hydrogens=None)], table)
    assert unknown_mult(dist)(0, m) is True


def test_unseen_environment_is_allowed():
    rule = environment_row_check_factory([P(shift=10.0, hydrogens=0)], EnvironmentTable({}, {}))
    assert rule.allowed(0, ("0|Se0-2", "0|Se-2"))


def test_rare_environments_never_exclude():
    # fewer than 20 examples: the coarser level decides, here nothing is known
    k2, k1 = environment_keys(3, [("C", 0, 1)])
    table = EnvironmentTable({k2: [5, 30.0, 31.0, 32.0, 30.5, 31.5, 30.0, 32.0]}, {})
    rule = environment_row_check_factory([P(shift=90.0, hydrogens=3)], table)
    assert rule.allowed(3, (k2, k1))


def test_costs_are_zero_at_the_median_and_grow_away_from_it():
    k2, k1 = environment_keys(3, [("C", 2, 1)])
    stats = [100, 10.0, 14.0, 20.0, 13.0, 15.0, 8.0, 25.0]
    table = EnvironmentTable({k2: stats}, {})
    near = environment_row_check_factory([P(shift=14.0, hydrogens=3)], table)
    far = environment_row_check_factory([P(shift=24.0, hydrogens=3)], table)
    assert near.cost(3, (k2, k1)) == 0.0
    assert far.cost(3, (k2, k1)) > 1.0
