"""How much of an unknown's skeleton its nearest reference spectra share.

For held-out cases (``scripts/calibration_split.py``) and a reference index
rebuilt without them (``ELUCIDATE_DATA_DIR`` pointing at the rebuilt tables,
DEVELOPERS.md), prints per case the largest maximum common substructure
(RDKit FMCS, whole rings only, elements and bond orders compared) between the
answer and the structures of its ``--k`` most similar reference spectra, as a
share of the answer's heavy atoms.  Measures the premise of the analogue
starting points of the search (docs/search.md); never run it on the bench.

    ELUCIDATE_DATA_DIR=/tmp/cal/data python scripts/measure_analogues.py /tmp/cal/dev_cases.jsonl --heavy 17-22
"""

import json
import statistics

import click
from rdkit import Chem
from rdkit.Chem import rdFMCS

from elucidate.bench import _records_for_mode
from elucidate.formula import parse_formula
from elucidate.reference import nearest_spectra
from elucidate.spectrum.peaks import peaks_from_records


@click.command()
@click.argument("cases", type=click.Path(exists=True, dir_okay=False))
@click.option("--heavy", default="17-22", show_default=True, help="Heavy-atom range LO-HI.")
@click.option("--limit", default=20, show_default=True, help="Cases measured.")
@click.option("--k", default=10, show_default=True, help="Nearest reference spectra per case.")
def main(cases, heavy, limit, k):
    lo, hi = (int(x) for x in heavy.split("-"))
    rows = [json.loads(line) for line in open(cases, encoding="utf-8") if line.strip()]
    rows = [r for r in rows if lo <= parse_formula(r["formula"]).heavy_atoms <= hi][:limit]
    shares = []
    for r in rows:
        answer = Chem.MolFromSmiles(r["answer"])
        peaks = peaks_from_records(_records_for_mode(r["peaks"], "mult"))
        best = 0
        for hit in nearest_spectra(peaks, formula=parse_formula(r["formula"]), k=k):
            res = rdFMCS.FindMCS([answer, Chem.MolFromSmiles(hit.smiles)], timeout=1, ringMatchesRingOnly=True,
                                 completeRingsOnly=True, atomCompare=rdFMCS.AtomCompare.CompareElements,
                                 bondCompare=rdFMCS.BondCompare.CompareOrder)
            best = max(best, res.numAtoms)
        shares.append(best / answer.GetNumAtoms())
        click.echo(f"{r['id']}  {answer.GetNumAtoms():>3} heavy atoms  shared {shares[-1]:.2f}")
    if shares:
        click.echo(f"median share {statistics.median(shares):.2f}; "
                   f"70 % or more in {sum(s >= 0.7 for s in shares)} of {len(shares)}")


if __name__ == "__main__":
    main()
