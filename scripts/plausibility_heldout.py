"""Held-out check of the plausibility cost (docs/constraints.md).

The training constitutions are split by a hash of their canonical SMILES
(CRC-32 mod 10 == 0 held out, the rest build a plausibility table and the
first-sphere atom counts of the rarity prior).  400 held-out structures of
9-22 heavy atoms (neutral, C H N O S F Cl Br I) each get 10 near-duplicates
from one to three random formula-preserving moves of the annealing search
(:mod:`elucidate.search.moves`, seed 1).  For every (true, near-duplicate)
pair the script counts how often a prior ranks the true structure cheaper,
equal or dearer, for the plausibility cost alone, the first-sphere rarity
alone and rarity + w * plausibility.

Usage: python scripts/plausibility_heldout.py ../shared/data/train_spectra.jsonl.gz
(a few minutes; data: open nmrshiftdb2, Steinbeck, Krause, Kuhn, J. Chem. Inf.
Comput. Sci. 2003, 43, 1733)
"""

import gzip
import json
import random
import sys
import zlib
from collections import defaultdict

from rdkit import Chem, RDLogger

from elucidate.constraints.environments import EnvironmentTable, kekule_forms, mol_atom_keys
from elucidate.constraints.plausibility import build_plausibility_table
from elucidate.formula import VALENCES
from elucidate.search.moves import random_move, skeleton_from_mol

RDLogger.DisableLog("rdApp.*")
ELEMENTS = {"C", "N", "O", "S", "F", "Cl", "Br", "I"}


def _constitutions(path):
    seen = set()
    with gzip.open(path, "rt", encoding="utf-8") as fh:
        for line in fh:
            mol = Chem.MolFromSmiles(json.loads(line)["smiles"])
            if mol is not None:
                seen.add(Chem.MolToSmiles(mol, isomericSmiles=False))
    return sorted(seen)


def _decoys(held, rng):
    chosen = []
    for smi in held:
        mol = Chem.MolFromSmiles(smi)
        if (9 <= mol.GetNumHeavyAtoms() <= 22 and not any(a.GetFormalCharge() for a in mol.GetAtoms())
                and all(a.GetSymbol() in ELEMENTS for a in mol.GetAtoms())):
            chosen.append(smi)
    rng.shuffle(chosen)
    pairs = []
    for smi in chosen[:400]:
        sk = skeleton_from_mol(Chem.MolFromSmiles(smi))
        decoys = set()
        for _ in range(200):
            if len(decoys) == 10:
                break
            cur = sk
            for _ in range(rng.randint(1, 3)):
                _kind, nxt = random_move(cur, rng, VALENCES, None)
                if nxt is not None:
                    cur = nxt
            mol = cur.to_mol()
            if mol is not None:
                out = Chem.MolToSmiles(mol, isomericSmiles=False)
                if out != smi:
                    decoys.add(out)
        pairs.append((smi, sorted(decoys)))
    return pairs


def _compare(name, cost, pairs):
    win = tie = lose = 0
    true_costs = []
    for smi, decoys in pairs:
        t = cost(smi)
        true_costs.append(t)
        for d in decoys:
            c = cost(d)
            if t < c - 1e-9:
                win += 1
            elif t <= c + 1e-9:
                tie += 1
            else:
                lose += 1
    n = win + tie + lose
    true_costs.sort()
    print(f"{name:34s} true cheaper {100 * win / n:5.1f} %  tie {100 * tie / n:4.1f} %  "
          f"true dearer {100 * lose / n:4.1f} %   true cost median {true_costs[len(true_costs) // 2]:.2f}, "
          f"zero {100 * sum(1 for x in true_costs if x == 0) / len(true_costs):.0f} %")


def main(path):
    consts = _constitutions(path)
    train = [s for s in consts if zlib.crc32(s.encode()) % 10 != 0]
    held = [s for s in consts if zlib.crc32(s.encode()) % 10 == 0]
    table = build_plausibility_table(train)
    counts = defaultdict(float)
    for smi in train:
        forms = kekule_forms(Chem.MolFromSmiles(smi))
        for form in forms:
            for k in mol_atom_keys(form):
                counts[k] += 1.0 / len(forms)
    env = EnvironmentTable({}, {}, dict(counts))
    pairs = _decoys(held, random.Random(1))
    print(f"{len(train)} training / {len(held)} held-out constitutions; {len(pairs)} structures, "
          f"{sum(len(d) for _s, d in pairs)} near-duplicates")
    mols = {}

    def mol(smi):
        if smi not in mols:
            mols[smi] = Chem.MolFromSmiles(smi)
        return mols[smi]

    plaus = {}
    rar = {}

    def p(smi):
        if smi not in plaus:
            plaus[smi] = table.cost(mol(smi))
        return plaus[smi]

    def r(smi):
        if smi not in rar:
            rar[smi] = env.mol_rarity(mol(smi))
        return rar[smi]

    _compare("plausibility", p, pairs)
    _compare("first-sphere rarity", r, pairs)
    for w in (0.5, 1.0, 2.0):
        _compare(f"rarity + {w} x plausibility", lambda s, w=w: r(s) + w * p(s), pairs)


if __name__ == "__main__":
    main(sys.argv[1])
