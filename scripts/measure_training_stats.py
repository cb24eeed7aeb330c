"""Measure, on the training spectra, the figures behind two constraint defaults.

1. Symmetry: how often the number of lines per multiplicity differs from the
   number of topologically distinct carbons (overlap / split), for neutral
   molecules with <= 22 heavy atoms.  Used for the default allowance and the
   penalties in elucidate/constraints/spectral.py and rank/assignment.py
   (rotamer splitting per class: scripts/measure_rotamer_splits.py).
2. Implausible motifs: the share of training constitutions containing each
   motif of elucidate/constraints/structural.py.

Usage: python scripts/measure_training_stats.py ../shared/data/train_spectra.jsonl.gz
Data: open nmrshiftdb2 (Steinbeck, Krause, Kuhn, J. Chem. Inf. Comput. Sci. 2003, 43, 1733).
"""

import gzip
import json
import sys
from collections import Counter

from rdkit import Chem, RDLogger

from elucidate.constraints.structural import IMPLAUSIBLE_MOTIFS

RDLogger.DisableLog("rdApp.*")
MULT = {"C": 0, "CH": 1, "CH2": 2, "CH3": 3}


def main(path):
    overlap, split = Counter(), Counter()
    constitutions = {}
    n = 0
    with gzip.open(path, "rt") as fh:
        for line in fh:
            rec = json.loads(line)
            mol = Chem.MolFromSmiles(rec["smiles"])
            if mol is None:
                continue
            constitutions.setdefault(Chem.MolToSmiles(mol, isomericSmiles=False), mol)
            if any(a.GetFormalCharge() for a in mol.GetAtoms()) or mol.GetNumHeavyAtoms() > 22:
                continue
            n += 1
            ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
            classes = Counter(h for h, _ in {(a.GetTotalNumHs(), ranks[a.GetIdx()])
                                             for a in mol.GetAtoms() if a.GetAtomicNum() == 6})
            lines = Counter(MULT[m] for _, m in {(s, m) for s, m in rec["shifts"]})
            overlap[sum(max(0, classes[h] - lines[h]) for h in range(4))] += 1
            split[sum(max(0, lines[h] - classes[h]) for h in range(4))] += 1
    print(f"symmetry, {n} neutral spectra with <= 22 heavy atoms")
    for name, counter in (("overlap", overlap), ("split", split)):
        cum = 0
        for k in sorted(counter):
            cum += counter[k]
            print(f"  {name} {k:>2}: {100 * counter[k] / n:6.2f} %   cumulative {100 * cum / n:6.2f} %")
    print(f"motifs, {len(constitutions)} constitutions")
    for motif in IMPLAUSIBLE_MOTIFS:
        has = motif.matcher()
        hits = sum(1 for m in constitutions.values() if has(m))
        print(f"  {motif.name:45s} {hits:6d}  {100 * hits / len(constitutions):5.2f} %  default drop: {motif.default}")


if __name__ == "__main__":
    main(sys.argv[1])
