"""Hold out training constitutions for fitting the probability calibration.

The probabilities of the ranking (``elucidate/rank/calibration.py``) are fitted
on elucidation runs over constitutions the predictor has *not* seen: this
script removes one in ``--fold`` constitutions (chosen by a hash of the
stereo-free canonical SMILES, so the split is stable) from the training
spectra, writes the rest for a table rebuild, and writes the held-out
constitutions as elucidation cases in the bench's JSON-lines format (peaks
merged by identical shift and multiplicity, one spectrum per constitution),
``--per-band`` cases in each heavy-atom band (neutral molecules only).

Usage (DEVELOPERS.md, "Refit the probability calibration"):

    python scripts/calibration_split.py ../shared/data/train_spectra.jsonl.gz OUT_DIR

writes OUT_DIR/train_rest.jsonl.gz and OUT_DIR/heldout_cases.jsonl.
Data: open nmrshiftdb2 (Steinbeck, Krause, Kuhn, J. Chem. Inf. Comput. Sci.
2003, 43, 1733; from memory).  Nothing written here is committed.
"""

import gzip
import hashlib
import json
import random
import sys
from collections import Counter
from pathlib import Path

import click
from rdkit import Chem, RDLogger

from elucidate.bench import BANDS

RDLogger.DisableLog("rdApp.*")


def _held_out(canonical: str, fold: int) -> bool:
    return int(hashlib.sha256(canonical.encode()).hexdigest(), 16) % fold == 0


def _case(rec: dict, canonical: str, n: int) -> dict:
    merged = Counter((round(float(s), 2), m) for s, m in rec["shifts"])
    peaks = [{"shift": s, "mult": m, "count": c} for (s, m), c in sorted(merged.items())]
    return {"id": f"h-{n:04d}", "formula": rec["formula"], "solvent": rec.get("solvent"),
            "peaks": peaks, "answer": canonical, "source_id": rec.get("source_id")}


@click.command()
@click.argument("train", type=click.Path(exists=True, dir_okay=False))
@click.argument("out_dir", type=click.Path(file_okay=False))
@click.option("--fold", default=20, show_default=True, help="Hold out one constitution in FOLD.")
@click.option("--per-band", default=40, show_default=True, help="Cases written per heavy-atom band.")
@click.option("--seed", default=0, show_default=True)
def main(train, out_dir, fold, per_band, seed):
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    bands: dict[tuple[int, int], dict[str, dict]] = {b: {} for b in BANDS}
    kept = held = 0
    with gzip.open(train, "rt") as fh, gzip.open(out / "train_rest.jsonl.gz", "wt") as rest:
        for line in fh:
            rec = json.loads(line)
            mol = Chem.MolFromSmiles(rec["smiles"])
            if mol is None:
                continue
            canonical = Chem.MolToSmiles(mol, isomericSmiles=False)
            if not _held_out(canonical, fold):
                rest.write(line)
                kept += 1
                continue
            held += 1
            if any(a.GetFormalCharge() for a in mol.GetAtoms()):
                continue
            n = mol.GetNumHeavyAtoms()
            for b in BANDS:
                if b[0] <= n <= b[1]:
                    bands[b].setdefault(canonical, rec)
    rng = random.Random(seed)
    cases = []
    for b in BANDS:
        keys = sorted(bands[b])
        rng.shuffle(keys)
        for canonical in keys[:per_band]:
            cases.append(_case(bands[b][canonical], canonical, len(cases)))
    with (out / "heldout_cases.jsonl").open("w") as fh:
        for c in cases:
            fh.write(json.dumps(c) + "\n")
    print(f"kept {kept} spectra, held out {held}; wrote {len(cases)} cases "
          f"({', '.join(f'{b[0]}-{b[1]}: {min(per_band, len(bands[b]))}' for b in BANDS)})",
          file=sys.stderr)


if __name__ == "__main__":
    main()
