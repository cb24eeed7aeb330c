"""Re-score the listed candidates of bench rows with the current best predictor.

A solve's search scores with the environment table and its kept structures
are then re-scored with the best predictor (`elucidate.pipeline.refine_ranking`).
Which structures are listed is the search's business, so held-out runs made
before a new predictor can be brought up to date without running them again:
this script re-scores every row's ``listed_smiles`` against its case's lines
(mult mode, no correlations, as `elucidate bench` does) and writes the rows
with new ``fit_terms`` (same order as ``listed_smiles``) and the answer's
``rank`` (its position in that list, as the calibration fit reads it).

Run it with the same data folder as the runs (``ELUCIDATE_DATA_DIR``, the
tables built without the held-out compounds, plus their learned correction),
then refit (DEVELOPERS.md, "Refitting the probability calibration"):

    ELUCIDATE_DATA_DIR=/tmp/cal/data python scripts/rescore_rows.py \\
        /tmp/cal/heldout_cases.jsonl ROWS.jsonl ROWS_rescored.jsonl
    python scripts/fit_calibration.py fit ROWS_rescored.jsonl --time-limit 60
"""

from __future__ import annotations

import json
import sys

import click
from rdkit import Chem

from elucidate.bench import _records_for_mode
from elucidate.formula import parse_formula
from elucidate.pipeline import SolveSettings, _constraints, _structure_prior, prepare_peaks
from elucidate.predict.model import load_default_model
from elucidate.rank.scoring import score_structure
from elucidate.spectrum.peaks import peaks_from_records


@click.command()
@click.argument("cases", type=click.Path(dir_okay=False, exists=True))
@click.argument("rows", type=click.Path(dir_okay=False, exists=True))
@click.argument("output", type=click.Path(dir_okay=False))
@click.option("--mode", type=click.Choice(["mult", "plain", "count"]), default="mult", show_default=True,
              help="Peak mode the rows were run in.")
def main(cases, rows, output, mode):
    """Write ROWS re-scored with the current predictor to OUTPUT."""
    model = load_default_model()
    if model.trees is None:
        raise click.UsageError("no learned correction in the data folder: nothing to re-score with")
    by_id = {}
    with open(cases, encoding="utf-8") as fh:
        for line in fh:
            if line.strip():
                c = json.loads(line)
                by_id[c["id"]] = c
    settings = SolveSettings()
    n = 0
    with open(rows, encoding="utf-8") as fh, open(output, "w", encoding="utf-8") as out:
        for line in fh:
            if not line.strip():
                continue
            row = json.loads(line)
            names = row.get("listed_smiles") or []
            if names:
                case = by_id[row["id"]]
                formula = parse_formula(case["formula"])
                peaks = peaks_from_records(_records_for_mode(case["peaks"], mode))
                prepared = prepare_peaks(formula, peaks, settings.solvent)
                prior = _structure_prior(_constraints(formula, prepared, settings).rule, settings)
                terms = []
                for smi in names:
                    mol = Chem.MolFromSmiles(smi)
                    s = score_structure(smi, mol, prepared.peaks, prior, smiles_written=False, model=model)
                    terms.append([round(s.fit_cost, 4), round(s.prior, 4), round(s.plausibility, 4)])
                row["fit_terms"] = terms
                row["rank"] = names.index(row["answer"]) + 1 if row["answer"] in names else None
                row["rescored_with"] = model.name
            out.write(json.dumps(row) + "\n")
            n += 1
    click.echo(f"{n} rows re-scored with {model.name}", err=True)


if __name__ == "__main__":
    sys.exit(main())
