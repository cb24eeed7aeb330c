"""Assignment-free accuracy of the shift predictor on a case file.

For every case, the answer's carbons are predicted, the observed peaks are
expanded by their ``count``, and predictions are matched to observed shifts
within each multiplicity group (C, CH, CH2, CH3; one group when the peaks
carry no multiplicity) by sorted matching — the optimal one-to-one matching
for any convex cost of the difference in one dimension (the assignment
problem, Kuhn 1955, reduces to sorting on a line).  Reported: mean absolute
error, RMS, 99th percentile of the absolute error, per heavy-atom band, the
fraction of carbons per matched sphere and the share of errors within one
predicted sigma.

Figures measured on nmrshiftdb2-derived cases keep the attribution: Steinbeck,
Krause, Kuhn, *J. Chem. Inf. Comput. Sci.* 2003, 43, 1733 (from memory).
"""

from __future__ import annotations

import json

import click
import numpy as np
from rdkit import Chem, rdBase

from ..cases import BANDS, read_cases
from ..errors import InputError
from .model import PREDICTORS, ShiftModel, load_default_model, load_model

__all__ = ["BANDS", "case_groups", "match_errors", "evaluate_cases", "predictor_bench_command"]

#: Heavy-atom bands reported separately (inclusive bounds).

_MULT_H = {"C": 0, "CH": 1, "CH2": 2, "CH3": 3}


def match_errors(predicted, observed):
    """Signed errors after optimal matching within groups.

    Parameters
    ----------
    predicted : dict
        group -> list of (predicted shift, sigma, sphere, ...); items after
        the shift ride along (e.g. the atom index, see `case_groups`).
    observed : dict
        group -> list of observed shifts (expanded by count).

    Returns
    -------
    list of tuple
        ``(error, sigma, sphere, ...)`` per matched carbon (error = predicted -
        observed; the items after the shift as given).

    Raises
    ------
    InputError
        If a group's sizes differ.
    """
    out = []
    for g in sorted(set(predicted) | set(observed), key=str):
        p = sorted(predicted.get(g, []))
        o = sorted(observed.get(g, []))
        if len(p) != len(o):
            raise InputError(
                f"multiplicity group {g!r}: {len(p)} carbons in the structure but "
                f"{len(o)} peaks after expanding counts; fix the peak counts")
        for (sh, *rest), ob in zip(p, o):
            out.append((sh - ob, *rest))
    return out


def case_groups(model, case, use_mult=True):
    """A case's answer predicted and its peaks, per multiplicity group.

    Returns
    -------
    mol : rdkit.Chem.Mol
        The answer.
    predicted : dict
        group -> list of ``(shift, sigma, sphere, RDKit atom index)``.
    observed : dict
        group -> list of observed shifts, expanded by ``count``.

    Groups are the H counts 0-3 when every peak carries a multiplicity (and
    ``use_mult``), else one group ``"all"``.
    """
    with rdBase.BlockLogs():  # our error names the case instead of RDKit's parser log
        mol = Chem.MolFromSmiles(case["answer"])
    if mol is None:
        raise InputError(f"case {case.get('id')}: answer SMILES does not parse")
    has_mult = use_mult and all(p.get("mult") for p in case["peaks"])
    predicted, observed = {}, {}
    for idx, h, sh, sg, s in model.predict_mol(mol):
        predicted.setdefault(h if has_mult else "all", []).append((sh, sg, s, idx))
    for peak in case["peaks"]:
        if has_mult and peak["mult"] not in _MULT_H:
            raise InputError(f"case {case.get('id')}: multiplicity {peak['mult']!r} is not one of "
                             "C, CH, CH2, CH3; fix the peak list")
        g = _MULT_H[peak["mult"]] if has_mult else "all"
        observed.setdefault(g, []).extend([float(peak["shift"])] * int(peak.get("count", 1)))
    return mol, predicted, observed


def _case_errors(model, case, use_mult=True):
    mol, predicted, observed = case_groups(model, case, use_mult)
    return mol.GetNumHeavyAtoms(), [e[:3] for e in match_errors(predicted, observed)]


def _summary(errs):
    if not errs:
        return {"carbons": 0}
    e = np.abs(np.array([x[0] for x in errs]))
    sg = np.array([x[1] for x in errs])
    return {
        "carbons": int(len(e)),
        "mae": round(float(e.mean()), 3),
        "rms": round(float(np.sqrt(np.mean(e ** 2))), 3),
        "p99": round(float(np.percentile(e, 99)), 3),
        "within_1_sigma": round(float(np.mean(e <= sg)), 3),
        "within_2_sigma": round(float(np.mean(e <= 2 * sg)), 3),
    }


def evaluate_cases(cases_path, model: ShiftModel | None = None, use_mult=True) -> dict:
    """Assignment-free accuracy of the predictor on a JSON-lines case file.

    Parameters
    ----------
    cases_path : path-like
        One case per line with ``answer`` (SMILES) and ``peaks``
        (``shift``, ``mult``, ``count``).
    model : ShiftModel, optional
        Default: the shipped model.
    use_mult : bool
        Match within multiplicity groups (True) or over all carbons.

    Returns
    -------
    dict
        Overall and per-band summaries and sphere fractions.
    """
    cases = read_cases(cases_path, required=("answer", "peaks"))
    model = model or load_default_model()
    all_errs = []
    by_band = {b: [] for b in BANDS}
    n_cases = 0
    for case in cases:
        heavy, errs = _case_errors(model, case, use_mult)
        n_cases += 1
        all_errs.extend(errs)
        for lo, hi in BANDS:
            if lo <= heavy <= hi:
                by_band[(lo, hi)].extend(errs)
    spheres = np.array([x[2] for x in all_errs]) if all_errs else np.zeros(0)
    return {
        "predictor": getattr(model, "name", "table"),
        "cases": n_cases,
        "overall": _summary(all_errs),
        "bands": {f"{lo}-{hi}": _summary(by_band[(lo, hi)]) for lo, hi in BANDS},
        "sphere_fraction": {str(s): round(float(np.mean(spheres == s)), 3) for s in range(6)}
        if len(spheres) else {},
    }


@click.command("bench-shifts")
@click.argument("cases", type=click.Path(dir_okay=False))
@click.option("--table", type=click.Path(dir_okay=False), default=None,
              help="Use this shift table instead of the shipped one.")
@click.option("--trees", type=click.Path(dir_okay=False), default=None,
              help="Use this learned correction (from build-trees) instead of the shipped one.")
@click.option("--predictor", type=click.Choice(PREDICTORS), default="auto", show_default=True,
              help="table: the environment table alone; table+trees: corrected by the learned trees; "
                   "auto: the trees when available.")
@click.option("--no-mult", is_flag=True, help="Match over all carbons, ignoring multiplicities.")
def predictor_bench_command(cases, table, trees, predictor, no_mult):
    """Assignment-free 13C shift accuracy on CASES (JSON lines with answers).

    Prints MAE, RMS, p99 and the share of carbons within one and two
    predicted sigmas, overall and per heavy-atom band.

    Example: elucidate bench-shifts ../shared/data/bench_cases.jsonl --predictor table
    """
    model = load_model(table, trees, predictor)
    result = evaluate_cases(cases, model=model, use_mult=not no_mult)
    click.echo(json.dumps(result, indent=2))
