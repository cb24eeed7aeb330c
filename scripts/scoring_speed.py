"""Speed of the full scorer a stochastic search calls for every structure it visits.

One *evaluation* is what a search over constitutions pays per visited structure:

* a fresh RDKit molecule from SMILES (so no per-molecule cache hides any cost),
* ``elucidate.pipeline.rank_structure(mol, peaks)`` (13C prediction, carbon
  symmetry classes, rotamer split costs, min-cost-flow line assignment),
* ``EnvironmentTable.mol_rarity(mol)`` (structure prior),
* ``EnvironmentRule.structure_cost(mol)`` (approximate cost).

Molecules: the answers of ``../shared/data/bench_cases.jsonl`` with 13-22 heavy
atoms and their peak lists in mult mode (DEPT multiplicities, no counts), used
read-only for timing, never for tuning; without that file, a built-in list of
invented drug-like SMILES whose "observed" lines are their own predicted shifts.
Each molecule also gets *near-duplicates*: a seeded random walk of edits (a
terminal substituent moved to another atom carrying a hydrogen), scored against
the molecule's lines, as a local search would visit them.

Three cache regimes of the predictor's per-environment cache:

* ``warm``  -- every environment already predicted (second visit of the same structures);
* ``local`` -- cache emptied once per repeat, then each molecule followed by its
  walk of near-duplicates (shared environments hit, new ones miss);
* ``cold``  -- cache emptied before every evaluation.

Figures: median (and fastest) over repeats of the mean ms per evaluation, and the same per part
(the parts are the calls ``rank_structure`` makes, timed one after the other on
one molecule, plus the two environment costs).  Times are CPU time of this
process (``time.process_time``), so other jobs on a shared machine inflate them
less than wall time; the per-part clock reads add about 1 us per part.

Usage::

    python scripts/scoring_speed.py [--molecules 200] [--repeats 5] [--json]
    python scripts/scoring_speed.py --against /tmp/base --rounds 3
        # alternates runs of this checkout and of the checkout at /tmp/base
        # (e.g. `git worktree add /tmp/base <old commit>`), reports ratios

Figures go to docs/performance.md (one machine, back-to-back runs; quote ratios).
"""

from __future__ import annotations

import argparse
import json
import os
import random
import statistics
import subprocess
import sys
import time
from pathlib import Path

from rdkit import Chem, rdBase

ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT.parent / "shared" / "data" / "bench_cases.jsonl"

#: Invented drug-like structures (no source; used only when the case file is absent).
INVENTED = (
    "CC(=O)Nc1ccc(OCC(O)CN2CCOCC2)cc1", "COc1ccc(CC(=O)N2CCN(C)CC2)cc1Cl", "CCOC(=O)c1cnc(N)s1",
    "CC(C)Cc1ccc(C(C)C(=O)OCC)cc1", "O=C(Nc1ccccc1F)c1ccc(Br)o1", "CN(C)CCOC(c1ccccc1)c1ccc(Cl)cc1",
    "COc1cc(C=CC(=O)O)ccc1OC(C)=O", "CC1=CC(=O)c2ccccc2C1=O", "CCN(CC)C(=O)c1cccc(C)c1",
    "Cc1nc2ccccc2n1CC(=O)OC(C)(C)C", "O=S(=O)(Nc1ccccn1)c1ccc(N)cc1", "CC(C)NCC(O)COc1cccc2ccccc12",
    "COC(=O)C1=C(C)NC(C)=C(C(=O)OC)C1c1ccccc1", "CCCCc1oc2ccccc2c1C(=O)c1ccc(O)cc1",
    "N#Cc1ccc(Cn2ccnc2)cc1", "CC(=O)Oc1ccccc1C(=O)OCC(F)(F)F", "CSc1nc(C)cc(OCC2CC2)n1",
    "CCOP(=O)(OCC)Cc1ccc(C)cc1", "O=C1CCC(c2ccc(Cl)cc2)N1CC#C", "Cc1ccc(S(=O)(=O)N2CCCC2C(=O)O)cc1",
    "COc1ccc2[nH]cc(CCNC(C)=O)c2c1", "CC(C)(C)OC(=O)N1CCC(O)(c2ccccc2)CC1", "Clc1ccc(OCC2=NCCN2)c(Cl)c1",
    "CC(=O)c1sc(NC(=O)C2CC2)nc1C", "OC(CN1CCCCC1)(c1ccccc1)c1ccccc1", "CCN1C(=O)C(C)(CC)C(=O)NC1=O",
    "COc1cc(CNC(=O)CCCC=CC(C)C)ccc1O", "FC(F)(F)c1cccc(N2CCNCC2)c1", "CC(C)C(=O)Nc1ccc([N+](=O)[O-])cc1",
    "O=C(O)CCc1nc(-c2ccccc2)c(-c2ccccc2)o1",
)


def _log(msg: str) -> None:
    print(msg, file=sys.stderr, flush=True)


def _move_substituent(mol: Chem.Mol, rng: random.Random) -> str | None:
    """Canonical SMILES of ``mol`` with one terminal heavy atom moved to another
    atom that carries a hydrogen; None when the random edit does not sanitize."""
    work = Chem.Mol(mol)
    Chem.Kekulize(work, clearAromaticFlags=True)
    terminals = [a.GetIdx() for a in work.GetAtoms()
                 if a.GetDegree() == 1 and a.GetBonds()[0].GetBondType() == Chem.BondType.SINGLE]
    if not terminals:
        return None
    x = rng.choice(terminals)
    a = work.GetAtomWithIdx(x).GetNeighbors()[0].GetIdx()
    targets = [b.GetIdx() for b in work.GetAtoms()
               if b.GetIdx() not in (x, a) and b.GetTotalNumHs() > 0]
    if not targets:
        return None
    b = rng.choice(targets)
    rw = Chem.RWMol(work)
    rw.RemoveBond(x, a)
    rw.AddBond(x, b, Chem.BondType.SINGLE)
    for idx, delta in ((a, 1), (b, -1)):
        atom = rw.GetAtomWithIdx(idx)
        if atom.GetNumExplicitHs() or atom.GetNoImplicit():
            atom.SetNumExplicitHs(max(0, atom.GetNumExplicitHs() + delta))
    try:
        out = rw.GetMol()
        Chem.SanitizeMol(out)
        smi = Chem.MolToSmiles(out)
    except (RuntimeError, ValueError):
        return None
    return smi if "." not in smi and Chem.MolFromSmiles(smi) is not None else None


def load_molecules(n: int, variants: int, seed: int = 7):
    """``[(smiles, peaks, [variant smiles, ...]), ...]`` for ``n`` molecules."""
    from elucidate.bench import _records_for_mode
    from elucidate.cases import read_cases
    from elucidate.spectrum.peaks import peaks_from_records

    rng = random.Random(seed)
    out = []
    with rdBase.BlockLogs():
        if CASES.is_file():
            cases = read_cases(str(CASES), heavy=(13, 22))
            step = max(1, len(cases) // n)
            chosen = [(c["answer"], peaks_from_records(_records_for_mode(c["peaks"], "mult")).peaks)
                      for c in cases[::step][:n]]
        else:
            from elucidate.pipeline import rank_structure  # noqa: F401  (model load)
            from elucidate.predict import predict_smiles
            from elucidate.spectrum.peaks import Peak

            _log(f"{CASES} absent: using {len(INVENTED)} invented molecules, lines = own predictions")
            chosen = []
            for smi in INVENTED:
                mol = Chem.MolFromSmiles(smi)
                from elucidate.constraints.spectral import carbon_classes

                pred = {p.index: p.shift for p in predict_smiles(smi)}
                lines = sorted({(h, round(sum(pred[i] for i in atoms) / len(atoms), 1))
                                for h, groups in carbon_classes(mol).items() for atoms in groups})
                chosen.append((smi, tuple(Peak(x, h, None) for h, x in sorted(lines, key=lambda t: t[1]))))
        for smi, peaks in chosen:
            mol = Chem.MolFromSmiles(smi)
            if mol is None:
                continue
            # a random walk: each near-duplicate is one edit away from the previous one
            seen = {Chem.MolToSmiles(mol)}
            near = []
            current = mol
            for _ in range(20 * variants):
                if len(near) >= variants:
                    break
                v = _move_substituent(current, rng)
                if v is not None and v not in seen:
                    seen.add(v)
                    near.append(v)
                    current = Chem.MolFromSmiles(v)
            out.append((Chem.MolToSmiles(mol), peaks, near))
    return out


def _clear_model_cache(model) -> None:
    clear = getattr(model, "clear_cache", None)
    if clear is not None:
        clear()
    else:
        model._cache.clear()


def measure(n_mols: int, variants: int, repeats: int) -> dict:
    from elucidate.constraints.environments import EnvironmentRule, load_environment_table
    from elucidate.pipeline import rank_structure
    from elucidate.predict import predict_mol
    from elucidate.predict.model import load_default_model
    from elucidate.rank.assignment import SPLIT_COST, CarbonClass, assign_lines
    from elucidate.constraints.spectral import carbon_classes
    from elucidate.rank.rotamers import rotamer_split_costs

    model = load_default_model()
    table = load_environment_table()
    mols = load_molecules(n_mols, variants)
    rules = [EnvironmentRule(peaks, table) for _, peaks, _ in mols]
    base = [(smi, peaks, rule) for (smi, peaks, _), rule in zip(mols, rules)]
    local = [(s, peaks, rule) for (smi, peaks, near), rule in zip(mols, rules) for s in [smi] + near]
    heavy = [Chem.MolFromSmiles(s).GetNumHeavyAtoms() for s, _, _ in base]

    def evaluate(smi, peaks, rule):
        mol = Chem.MolFromSmiles(smi)
        assignment, predicted = rank_structure(mol, peaks)
        return assignment.cost, table.mol_rarity(mol), rule.structure_cost(mol)

    clock = time.process_time

    def run(items, clear_each=False):
        if not clear_each:
            t = clock()
            for smi, peaks, rule in items:
                evaluate(smi, peaks, rule)
            return 1e3 * (clock() - t) / len(items)
        t_total = 0.0
        for smi, peaks, rule in items:
            _clear_model_cache(model)
            t = clock()
            evaluate(smi, peaks, rule)
            t_total += clock() - t
        return 1e3 * t_total / len(items)

    parts = ("parse", "predict_mol", "rotamer_split_costs", "carbon_classes", "assign_lines",
             "mol_rarity", "structure_cost")

    def run_parts(items):
        acc = dict.fromkeys(parts, 0.0)
        for smi, peaks, rule in items:
            t0 = clock()
            mol = Chem.MolFromSmiles(smi)
            t1 = clock()
            shifts = {a.index: a for a in predict_mol(mol)}
            t2 = clock()
            split_costs = rotamer_split_costs(mol)
            t3 = clock()
            groups = carbon_classes(mol)
            t4 = clock()
            classes = []
            for h, gs in groups.items():
                for atoms in gs:
                    preds = [shifts[i] for i in atoms]
                    classes.append(CarbonClass(h, tuple(atoms), sum(p.shift for p in preds) / len(preds),
                                               max(p.sigma for p in preds),
                                               split_costs.get(atoms[0], SPLIT_COST)))
            assign_lines(peaks, classes)
            t5 = clock()
            table.mol_rarity(mol)
            t6 = clock()
            rule.structure_cost(mol)
            t7 = clock()
            for name, dt in zip(parts, (t1 - t0, t2 - t1, t3 - t2, t4 - t3, t5 - t4, t6 - t5, t7 - t6)):
                acc[name] += dt
        return {k: 1e3 * v / len(items) for k, v in acc.items()}

    run(local)  # warm every cache once (environment rules, model, RDKit pattern set-up)
    res = {"molecules": len(base), "local_structures": len(local),
           "heavy_atoms": [min(heavy), statistics.median(heavy), max(heavy)],
           "warm": [], "local": [], "cold": [], "parts": []}
    for _ in range(repeats):
        res["warm"].append(run(base))
        res["parts"].append(run_parts(base))
        _clear_model_cache(model)
        res["local"].append(run(local))
        res["cold"].append(run(base[: max(1, len(base) // 4)], clear_each=True))
        run(local)  # leave the cache warm again
    out = {k: res[k] for k in ("molecules", "local_structures", "heavy_atoms")}
    for k in ("warm", "local", "cold"):
        out[k] = statistics.median(res[k])
        out[k + "_min"] = min(res[k])
    out["parts"] = {p: statistics.median(r[p] for r in res["parts"]) for p in parts}
    out["parts_min"] = {p: min(r[p] for r in res["parts"]) for p in parts}
    return out


def _print(res: dict, label: str = "") -> None:
    lo, med, hi = res["heavy_atoms"]
    print(f"{label}{res['molecules']} molecules ({lo}-{hi} heavy atoms, median {med:g}), "
          f"{res['local_structures']} in the local stream")
    print(f"{label}ms per evaluation, median of repeats (fastest): "
          + "  ".join(f"{k} {res[k]:.3f} ({res[k + '_min']:.3f})" for k in ("warm", "local", "cold")))
    print(f"{label}warm, per part, median (fastest) ms: "
          + "  ".join(f"{k} {v:.3f} ({res['parts_min'][k]:.3f})" for k, v in res["parts"].items()))


def _use_root(root: str) -> None:
    """Import ``elucidate`` from the checkout at ``root`` (ahead of an editable install)."""
    sys.meta_path[:] = [f for f in sys.meta_path if "editable" not in getattr(f, "__module__", "")
                        and "editable" not in getattr(f, "__name__", "")]
    sys.path.insert(0, str(Path(root).resolve()))


def compare(against: str, rounds: int, argv: list[str]) -> None:
    """Alternate runs of this checkout and of ``against`` (ABAB...), then ratios."""
    runs = {"before": [], "after": []}
    for r in range(rounds):
        for name, root in (("before", against), ("after", str(ROOT))):
            env = dict(os.environ)
            cmd = [sys.executable, str(Path(__file__).resolve()), "--json", "--root", root] + argv
            _log(f"round {r + 1}/{rounds}: {name} ({root})")
            done = subprocess.run(cmd, env=env, capture_output=True, text=True, check=True)
            runs[name].append(json.loads(done.stdout))
    for name in ("before", "after"):
        for i, res in enumerate(runs[name]):
            _print(res, f"[{name} {i + 1}] ")
    keys = ["warm", "local", "cold"]
    print("ratio before/after per round, of medians (of fastest repeats):")
    for b, a in zip(runs["before"], runs["after"]):
        print("  " + "  ".join(f"{k} {b[k] / a[k]:.2f}x ({b[k + '_min'] / a[k + '_min']:.2f}x)" for k in keys)
              + "   parts: " + "  ".join(f"{p} {b['parts'][p] / max(a['parts'][p], 1e-9):.1f}x"
                                         for p in b["parts"]))
    for k in keys:
        ratios = sorted(b[k] / a[k] for b, a in zip(runs["before"], runs["after"]))
        fast = sorted(b[k + "_min"] / a[k + "_min"] for b, a in zip(runs["before"], runs["after"]))
        print(f"{k}: median ratio over rounds {statistics.median(ratios):.2f}x "
              f"(range {ratios[0]:.2f}-{ratios[-1]:.2f}); of fastest repeats {statistics.median(fast):.2f}x")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--molecules", type=int, default=200)
    ap.add_argument("--variants", type=int, default=10, help="near-duplicates (walk steps) per molecule")
    ap.add_argument("--repeats", type=int, default=5)
    ap.add_argument("--json", action="store_true", help="print the figures as one JSON object")
    ap.add_argument("--against", help="root of another checkout to compare with (runs alternate)")
    ap.add_argument("--rounds", type=int, default=3, help="alternating runs per checkout with --against")
    ap.add_argument("--root", help="import elucidate from this checkout (used by --against)")
    args = ap.parse_args()
    if args.root:
        _use_root(args.root)
    if args.against:
        compare(args.against, args.rounds, ["--molecules", str(args.molecules), "--variants",
                                            str(args.variants), "--repeats", str(args.repeats)])
        return
    res = measure(args.molecules, args.variants, args.repeats)
    import elucidate

    res["elucidate"] = str(Path(elucidate.__file__).parent)
    if args.json:
        print(json.dumps(res))
    else:
        _print(res)


if __name__ == "__main__":
    main()
