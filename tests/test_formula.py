"""Formula parsing and DBE against hand-checked values.

DBE values: DBE = C + 1 + (N - H - X)/2, computed by hand for each
compound (common practice, no source); the compounds' formulas are standard
(benzoic acid, pyridine, ...).
"""

import pytest

from elucidate.errors import InputError
from elucidate.formula import parse_formula


@pytest.mark.parametrize(
    "text,hill,dbe",
    [
        ("C8H8O2", "C8H8O2", 5),  # methyl benzoate: ring (4) + C=O (1) -- hand-checked
        ("C6H5Cl", "C6H5Cl", 4),  # chlorobenzene -- hand-checked
        ("BrC2H5", "C2H5Br", 0),  # bromoethane, any element order
        ("C5H5N", "C5H5N", 4),  # pyridine
        ("C2H3N", "C2H3N", 2),  # acetonitrile: C#N counts 2
        ("C7H5NO3", "C7H5NO3", 6),  # a nitrobenzaldehyde-type formula
        ("CH4", "CH4", 0),
        ("C6H12O6", "C6H12O6", 1),  # hexoses
        ("C2H6OS", "C2H6OS", 0),  # DMSO: S counted divalent in the usual formula
        ("CH3CH2OH", "C2H6O", 0),  # repeated symbols add
        ("C6H15O4P", "C6H15O4P", 0),  # triethyl phosphate (P counted trivalent)
        ("C4H12Si", "C4H12Si", 0),  # tetramethylsilane
    ],
)
def test_formula_and_dbe(text, hill, dbe):
    f = parse_formula(text)
    assert f.hill == hill
    assert f.dbe == dbe


def test_counts_and_heavy_atoms():
    f = parse_formula("C6H3BrF2")
    assert (f.carbons, f.hydrogens, f.heavy_atoms) == (6, 3, 9)
    assert f.count("N") == 0


@pytest.mark.parametrize(
    "text,fragment",
    [
        ("C2H5", "half-integer"),  # odd H without N: nitrogen rule
        ("C2H6N", "nitrogen rule"),
        ("CH6", "negative DBE"),
        ("H2O", "no carbon"),
        ("C2Xq", "not an element"),
        ("C2Na", "not supported"),
        ("c2h6", "cannot read 'c2h6'; element symbols start with a capital letter"),
        ("C2H6+", "cannot read '\\+'; a charge is not accepted"),
        ("[C2H7]+", "a charge is not accepted"),
        ("CH3(CH2)2CH3", "brackets are not accepted"),
        ("C2H6.H2O", "use element symbols followed by counts"),
        ("C0H4", "count 0"),
        ("", "empty"),
    ],
)
def test_bad_formulas(text, fragment):
    with pytest.raises(InputError, match=fragment):
        parse_formula(text)
