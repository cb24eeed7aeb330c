"""Time the plausibility cost (elucidate/constraints/plausibility.py) per molecule.

Two sets, as the annealing search meets them:

* ``answers``: the first 200 answers of 13-22 heavy atoms of a case file
  (timing only: the answers are not used for anything else);
* ``near``: 20 near-duplicates of each of the first 50 of them (one random
  formula-preserving move each, :mod:`elucidate.search.moves`, fixed seed).

Cold = the first pass through a set with empty memories; warm = the median
of five further passes.  The environment-rarity prior is timed alongside
for scale.

Usage: python scripts/plausibility_speed.py ../shared/data/bench_cases.jsonl
"""

import json
import random
import statistics
import sys
import time

from rdkit import Chem, RDLogger

from elucidate.constraints.environments import load_environment_table
from elucidate.constraints.plausibility import PlausibilityTable, load_plausibility_table
from elucidate.formula import VALENCES
from elucidate.search.moves import random_move, skeleton_from_mol

RDLogger.DisableLog("rdApp.*")


def _sets(path):
    mols = []
    with open(path, encoding="utf-8") as fh:
        for line in fh:
            if not line.strip():
                continue
            m = Chem.MolFromSmiles(json.loads(line)["answer"])
            if m is not None and 13 <= m.GetNumHeavyAtoms() <= 22:
                mols.append(m)
            if len(mols) == 200:
                break
    rng = random.Random(0)
    near = []
    for m in mols[:50]:
        sk = skeleton_from_mol(m)
        made = 0
        for _ in range(500):
            if made == 20:
                break
            _kind, nxt = random_move(sk, rng, VALENCES, None)
            out = nxt.to_mol() if nxt is not None else None
            if out is not None:
                near.append(Chem.MolFromSmiles(Chem.MolToSmiles(out)))
                made += 1
    return mols, near


def _time(fn, mols, reps=5):
    t0 = time.perf_counter()
    for m in mols:
        fn(m)
    cold = (time.perf_counter() - t0) / len(mols) * 1e3
    warm = []
    for _ in range(reps):
        t0 = time.perf_counter()
        for m in mols:
            fn(m)
        warm.append((time.perf_counter() - t0) / len(mols) * 1e3)
    return cold, statistics.median(warm)


def main(path):
    mols, near = _sets(path)
    shipped = load_plausibility_table()
    env = load_environment_table()
    for name, ms in (("answers", mols), ("near", near)):
        heavy = statistics.mean(m.GetNumHeavyAtoms() for m in ms)
        table = PlausibilityTable(shipped.counts, shipped.provenance)  # empty memories
        cold, warm = _time(table.cost, ms)
        print(f"{name:8s} {len(ms):5d} molecules, mean {heavy:.1f} heavy atoms: plausibility "
              f"cold {cold:.3f} ms, warm {warm:.3f} ms per molecule")
        if env is not None:
            _cold, warm_r = _time(env.mol_rarity, ms, reps=1)
            print(f"{'':8s} environment rarity (mol_rarity) for scale: {warm_r:.3f} ms per molecule")


if __name__ == "__main__":
    main(sys.argv[1])
