"""Measure how often rotamer-capable carbon classes show two lines in the training spectra.

For every neutral training spectrum with <= 22 heavy atoms (the population of
scripts/measure_training_stats.py) the carbons are grouped into ordinary symmetry
classes and the classes that slow rotation about a hindered bond can split are marked
(elucidate/rank/rotamers.py; the control kinds, not treated as hindered, are measured
too).  The shift lists carry no atom mapping, so a class's fate is read from counts:
in one multiplicity, lines = distinct shift values and classes = ordinary classes;
``lines - classes`` extra lines are splits.

Two attributions, both printed:

* clean: only multiplicities holding exactly one multi-carbon class (the marked one,
  or for the ordinary row one unmarked class and no marked one); the class counts as
  split when that multiplicity has more lines than classes.  Accidental overlap of
  other carbons in the same multiplicity can hide a split (undercounts splits);
* all: every multiplicity; its extra lines go to the marked classes first, nearest
  to the nitrogen first, the rest to the ordinary multi-carbon classes.

The penalty for a split of a class is -ln(split / merged) (its log odds), the
ordinary per-spectrum penalty SPLIT_COST stays as measured by
scripts/measure_training_stats.py.

Usage: python scripts/measure_rotamer_splits.py ../shared/data/train_spectra.jsonl.gz
Data: open nmrshiftdb2 (Steinbeck, Krause, Kuhn, J. Chem. Inf. Comput. Sci. 2003, 43, 1733).
"""

import gzip
import json
import math
import sys
from collections import Counter, defaultdict

from rdkit import Chem, RDLogger

from elucidate.rank.rotamers import BOND_KINDS, ROTAMER_SPLIT_COST, rotamer_sites

RDLogger.DisableLog("rdApp.*")
MULT = {"C": 0, "CH": 1, "CH2": 2, "CH3": 3}
ALL_KINDS = [k for k, _, _ in BOND_KINDS]
GROUP = {k: g for k, _, g in BOND_KINDS}


def tier(distance: int) -> str:
    return str(distance) if distance < 3 else ">=3"


def main(path):
    clean = defaultdict(Counter)   # key -> Counter(split=, merged=)
    spread = defaultdict(Counter)
    n = 0
    with gzip.open(path, "rt") as fh:
        for line in fh:
            rec = json.loads(line)
            mol = Chem.MolFromSmiles(rec["smiles"])
            if mol is None:
                continue
            if any(a.GetFormalCharge() for a in mol.GetAtoms()) or mol.GetNumHeavyAtoms() > 22:
                continue
            n += 1
            ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
            classes = defaultdict(list)
            for a in mol.GetAtoms():
                if a.GetAtomicNum() == 6:
                    classes[(a.GetTotalNumHs(), ranks[a.GetIdx()])].append(a.GetIdx())
            sites = {s.atoms: s for s in rotamer_sites(mol, ALL_KINDS)}
            lines = Counter(MULT[m] for _, m in {(s, m) for s, m in rec["shifts"]})
            for h in range(4):
                cls = [tuple(sorted(v)) for (hh, _), v in classes.items() if hh == h]
                extra = max(0, lines[h] - len(cls))
                marked = sorted((sites[c] for c in cls if c in sites), key=lambda s: (s.distance, s.atoms))
                plain = [c for c in cls if c not in sites and len(c) > 1]
                keys = [(s.kind, tier(s.distance)) for s in marked] + [("ordinary", "-")] * len(plain)
                if len(keys) == 1:
                    clean[keys[0]]["split" if extra else "merged"] += 1
                for k in keys:
                    if extra:
                        spread[k]["split"] += 1
                        extra -= 1
                    else:
                        spread[k]["merged"] += 1
    print(f"{n} neutral spectra with <= 22 heavy atoms")
    for name, table in (("clean", clean), ("all", spread)):
        print(f"\n{name} attribution: kind, distance from N, classes, split, merged, split share, -ln(split/merged)")
        for group in sorted({g for g in GROUP.values() if g}) + [None]:
            rows = sorted(k for k in table if k[0] != "ordinary" and GROUP[k[0]] == group)
            for key in rows:
                _row(key[0], key[1], table[key])
            for t in ("1", "2", ">=3"):
                _row(f"[{group or 'not hindered'}]", t, sum((table[k] for k in rows if k[1] == t), Counter()))
            _row(f"[{group or 'not hindered'}]", "all", sum((table[k] for k in rows), Counter()))
        _row("ordinary", "-", table[("ordinary", "-")])
    print("\nshipped ROTAMER_SPLIT_COST (all attribution, floored at 0):", ROTAMER_SPLIT_COST)


def _row(kind, distance, c):
    s, m = c["split"], c["merged"]
    odds = f"{-math.log(s / m):6.2f}" if s and m else "     -"
    share = 100 * s / (s + m) if s + m else float("nan")
    print(f"  {kind:18s} {distance:>4s} {s + m:6d} {s:6d} {m:6d} {share:6.1f} % {odds}")


if __name__ == "__main__":
    main(sys.argv[1])
