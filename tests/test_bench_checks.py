"""The bench's listing checks: how many candidates each case listed, and how
often exotic ring patterns reach the top of a list.

"Exotic" means a ring, fused ring pair or cumulated-bond pattern that none of
the training constitutions (open nmrshiftdb2 data, through the shipped
plausibility table) has; a four-membered ring with a cumulated double bond is
such a pattern, benzene and cyclohexanone are not (checked against the table
here, not assumed).
"""

from __future__ import annotations

from rdkit import Chem

from elucidate.bench import listing_check, motif_check
from elucidate.constraints.plausibility import absent_motifs, load_plausibility_table
from elucidate.rank.calibration import Calibration

TABLE = load_plausibility_table()
EXOTIC = "C1=C=CC1"
COMMON = ["Cc1ccccc1", "O=C1CCCCC1", "CCOC(C)=O", "CC(C)=O"]


def test_the_patterns_used_here_are_what_the_table_says():
    assert absent_motifs(Chem.MolFromSmiles(EXOTIC), TABLE)
    assert not any(absent_motifs(Chem.MolFromSmiles(s), TABLE) for s in COMMON)


def test_share_counts_top_five_over_cases_whose_answer_is_common():
    rows = [
        {"answer": "Cc1ccccc1", "listed_smiles": [COMMON[0], EXOTIC] + COMMON[1:]},
        {"answer": "CC(C)=O", "listed_smiles": COMMON},
        {"answer": EXOTIC, "listed_smiles": [EXOTIC] + COMMON},  # skipped: its answer is exotic
    ]
    line = motif_check(rows, TABLE)[0]
    assert "11.1 % of 9" in line and "over 2 cases" in line


def test_reranking_from_fit_terms_moves_the_exotic_structure():
    listed = [EXOTIC] + COMMON + ["CCO"]
    terms = [[9.0, 0.0, 0.0]] + [[1.0 + i, 0.0, 0.0] for i in range(5)]  # the exotic one fits worst
    rows = [{"answer": "Cc1ccccc1", "listed_smiles": listed, "fit_terms": terms}]
    assert "20.0 % of 5" in motif_check(rows, TABLE)[0]
    cal = Calibration(fit_weight=1.0, prior_weight=0.0, plausibility_weight=0.0)
    assert "0.0 % of 5" in motif_check(rows, TABLE, cal)[0]


def test_listing_check_skips_old_rows_and_counts_short_lists():
    assert listing_check([{"rank": 1}]) == []
    line = listing_check([{"listed": 3, "near_alternatives": 0}, {"listed": 7, "near_alternatives": 2}])[0]
    assert "fewest 3" in line and "cases under 5: 1 of 2" in line and "near alternatives: 1" in line
