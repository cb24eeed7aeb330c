"""Measure the lab workflows on the open benchmark cases (measurement only).

    python scripts/measure_workflows.py check [--cases ../shared/data/bench_cases.jsonl] [-n 30]
    python scripts/measure_workflows.py batch [-n 50] [--workers 2]

``check``: for the first N usable cases (file order, at most 12 heavy
atoms, a substituent that can be moved), run ``check`` with the true answer
and with a regioisomer made by moving one substituent (:func:`move_substituent`);
report the share of "consistent" verdicts for the answers, and the share of
"doubtful"/"inconsistent" verdicts with the answer listed as better fitting
for the regioisomers.

``batch``: write a sample sheet of N cases, run them one by one (single
``solve`` runs) and as a batch with ``--workers``; compare the candidate
lists and the wall-clock times.

Never used for tuning: thresholds come from the error model (see
docs/workflows.md).  The case file is not part of the repository.
"""

from __future__ import annotations

import argparse
import csv
import json
import sys
import tempfile
import time
from pathlib import Path

from rdkit import Chem, RDLogger
from rdkit.Chem.rdMolDescriptors import CalcMolFormula

RDLogger.DisableLog("rdApp.*")
DATA = Path(__file__).resolve().parents[1].parent / "shared" / "data" / "bench_cases.jsonl"


def move_substituent(smiles: str) -> str | None:
    """A constitutional isomer made by moving one substituent to another carbon.

    The substituent is the smaller side of a non-ring single bond from a
    ring carbon (or, for acyclic molecules, from a chain carbon); it moves
    to another carbon of the same ring system (or chain) that carries a
    hydrogen.  Deterministic: the first valid move in atom order whose
    product differs from the input.
    """
    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        return None
    canon = Chem.MolToSmiles(mol, isomericSmiles=False)
    ri = mol.GetRingInfo()
    bonds = []
    for b in mol.GetBonds():
        if b.IsInRing() or b.GetBondType() != Chem.BondType.SINGLE:
            continue
        for a, x in ((b.GetBeginAtom(), b.GetEndAtom()), (b.GetEndAtom(), b.GetBeginAtom())):
            if a.GetSymbol() == "C":
                bonds.append((0 if a.IsInRing() else 1, a.GetIdx(), x.GetIdx()))
    for _, ai, xi in sorted(bonds):
        em = Chem.RWMol(mol)
        em.RemoveBond(ai, xi)
        frags = Chem.GetMolFrags(em, asMols=False)
        side = next(f for f in frags if xi in f)
        if len(side) * 2 > mol.GetNumAtoms():
            continue
        a = mol.GetAtomWithIdx(ai)
        if a.IsInRing():
            system = {i for r in ri.AtomRings() if ai in r for i in r}
            grown = True
            while grown:
                grown = False
                for r in ri.AtomRings():
                    if system & set(r) and not set(r) <= system:
                        system |= set(r)
                        grown = True
            targets = sorted(system)
        else:
            targets = sorted(i for f in frags if ai in f for i in f)
        for bi in targets:
            t = mol.GetAtomWithIdx(bi)
            if bi == ai or t.GetSymbol() != "C" or t.GetTotalNumHs() == 0:
                continue
            rw = Chem.RWMol(mol)
            rw.RemoveBond(ai, xi)
            rw.AddBond(bi, xi, Chem.BondType.SINGLE)
            for idx in (ai, bi):
                at = rw.GetAtomWithIdx(idx)
                at.SetNoImplicit(False)
                at.SetNumExplicitHs(0)
            try:
                new = rw.GetMol()
                Chem.SanitizeMol(new)
            except Exception:
                continue
            out = Chem.MolToSmiles(new, isomericSmiles=False)
            if out != canon and Chem.MolFromSmiles(out) is not None and \
                    CalcMolFormula(new) == CalcMolFormula(mol):
                return out
    return None


def _peak_text(case) -> str:
    return ", ".join(f"{p['shift']} {p.get('mult') or '?'}" for p in case["peaks"])


def _cases(path, max_heavy):
    with open(path, encoding="utf-8") as fh:
        for line in fh:
            case = json.loads(line)
            mol = Chem.MolFromSmiles(case["answer"])
            if mol is None or mol.GetNumHeavyAtoms() > max_heavy:
                continue
            yield case


def cmd_check(args):
    from elucidate.workflows.check import check_structure

    rows = []
    for case in _cases(args.cases, args.max_heavy):
        wrong = move_substituent(case["answer"])
        if wrong is None:
            continue
        truth = Chem.MolToSmiles(Chem.MolFromSmiles(case["answer"]), isomericSmiles=False)
        peaks = _peak_text(case)
        r_true = check_structure(case["answer"], peaks, formula=case["formula"], time_limit=args.time_limit)
        r_wrong = check_structure(wrong, peaks, formula=case["formula"], time_limit=args.time_limit,
                                  alternatives=50)
        listed = [a.smiles for a in r_wrong.alternatives]
        row = {"id": case["id"], "formula": case["formula"], "answer": truth, "wrong": wrong,
               "true_verdict": r_true.verdict, "true_reasons": list(r_true.reasons),
               "wrong_verdict": r_wrong.verdict, "answer_listed_better": truth in listed,
               "answer_rank": listed.index(truth) + 1 if truth in listed else None,
               "search_complete": [r_true.search_complete, r_wrong.search_complete]}
        rows.append(row)
        print(json.dumps(row), flush=True)
        if len(rows) >= args.n:
            break
    n = len(rows)
    ok_true = sum(r["true_verdict"] == "consistent" for r in rows)
    ok_wrong = sum(r["wrong_verdict"] != "consistent" and r["answer_listed_better"] for r in rows)
    flagged = sum(r["wrong_verdict"] != "consistent" for r in rows)
    listed = sum(r["answer_listed_better"] for r in rows)
    print(f"cases {n}; answer 'consistent': {ok_true}/{n} = {100 * ok_true / n:.0f}%")
    print(f"regioisomer doubtful/inconsistent AND answer listed better: {ok_wrong}/{n} = {100 * ok_wrong / n:.0f}% "
          f"(flagged {flagged}, answer listed {listed})")


def cmd_batch(args):
    from elucidate import api
    from elucidate.workflows.batch import BatchOptions, run_batch

    cases = list(_cases(args.cases, args.max_heavy))[: args.n]
    tmp = Path(tempfile.mkdtemp(prefix="elucidate-batch-"))
    sheet = tmp / "samples.csv"
    with sheet.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "formula", "peaks"])
        for c in cases:
            w.writerow([c["id"], c["formula"], _peak_text(c)])
        w.writerow(["malformed-row", "", "1.0 C"])  # one malformed row on purpose
    single = {}
    t0 = time.monotonic()
    for c in cases:
        r = api.solve(c["formula"], _peak_text(c), time_limit=args.time_limit, top=10)
        single[c["id"]] = ([x.smiles for x in r.candidates], r.complete)
    t_single = time.monotonic() - t0
    t0 = time.monotonic()
    report = run_batch(sheet, tmp / "out", workers=args.workers,
                       options=BatchOptions(time_limit=args.time_limit, top=10))
    t_batch = time.monotonic() - t0
    same = both_complete = same_complete = same_top = 0
    for c in cases:
        doc = json.loads((tmp / "out" / f"{c['id']}.json").read_text())
        smiles = [x["smiles"] for x in doc["candidates"]]
        ref, ref_complete = single[c["id"]]
        same += smiles == ref
        same_top += smiles[:1] == ref[:1]
        if doc["complete"] and ref_complete:
            both_complete += 1
            same_complete += smiles == ref
    (tmp / "single.json").write_text(json.dumps(single))
    print(f"{len(cases)} cases + 1 malformed row; failed in batch: {report.failed}")
    print(f"searches complete in both runs: {both_complete}; identical candidate lists among them: "
          f"{same_complete}/{both_complete}")
    print(f"all cases: identical lists {same}/{len(cases)}, identical top candidate {same_top}/{len(cases)} "
          "(a search stopped by the time limit depends on machine load)")
    print(f"single runs {t_single:.1f} s, batch --workers {args.workers} {t_batch:.1f} s "
          f"= {100 * t_batch / t_single:.0f}% of the summed time")
    # resume: a second run does nothing new
    t0 = time.monotonic()
    again = run_batch(sheet, tmp / "out", workers=args.workers,
                      options=BatchOptions(time_limit=args.time_limit, top=10))
    print(f"re-run: {again.ran} run (malformed row only), {again.skipped} skipped, {time.monotonic() - t0:.1f} s")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    sub = ap.add_subparsers(dest="cmd", required=True)
    for name in ("check", "batch"):
        p = sub.add_parser(name)
        p.add_argument("--cases", default=str(DATA))
        p.add_argument("-n", type=int, default=30 if name == "check" else 50)
        p.add_argument("--max-heavy", type=int, default=12)
        p.add_argument("--time-limit", type=float, default=20.0)
        if name == "batch":
            p.add_argument("--workers", type=int, default=2)
    args = ap.parse_args(argv)
    if not Path(args.cases).is_file():
        sys.exit(f"case file {args.cases} not found (the open benchmark lives in ../shared/data)")
    {"check": cmd_check, "batch": cmd_batch}[args.cmd](args)


if __name__ == "__main__":
    main()
