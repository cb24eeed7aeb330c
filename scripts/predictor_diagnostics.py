"""Where is the 13C shift predictor wrong?  Errors per carbon class, and a parity plot.

For every case of a JSON-lines case file (``answer`` SMILES, ``peaks`` with
``shift``, ``mult`` in C/CH/CH2/CH3 and ``count``) the answer's carbons are
predicted with ``model.predict_mol(mol)`` and matched to the observed shifts
exactly as ``elucidate.predict.evaluate`` does: peaks expanded by their
count, then sorted matching within each multiplicity group (one group when a
case's peaks do not all carry a multiplicity) -- the optimal one-to-one
matching for any convex cost in one dimension (the assignment problem, Kuhn,
*Naval Res. Logist. Q.* 1955, 2, 83 -- from memory, reduces to sorting on a
line).  Here each matched prediction keeps its RDKit atom index, so its
absolute error can be filed under `elucidate.predict.carbon_classes`; the
matching is checked against ``evaluate.match_errors`` case by case.

Output: a Markdown table of carbons, MAE and 95th percentile of the absolute
error per carbon class and overall (stdout); optionally the same as JSON
(plus the worst-predicted carbons) and a parity plot.

Parity plot (``--png``): 600 x 600 px, x = observed shift, y = predicted
shift, both 0-230 ppm, ticks and numbers every 50 ppm; each 2 x 2 px cell
(0.92 ppm square) is coloured by the log of its number of carbons (light to
dark blue), the grey line is predicted = observed.  Carbons outside 0-230 ppm
on either axis are left out of the plot and counted in the JSON.  Written by
a small PNG encoder of our own (``scripts/_png.py``).

Usage::

    python scripts/predictor_diagnostics.py ../shared/data/bench_cases.jsonl \\
        [--table other_table.npz] [--label NAME] [--png parity.png] [--json out.json]

The predictor is `elucidate.predict.model.load_model(--table, --trees,
--predictor)`; the matching is that of `elucidate bench-shifts`
(`elucidate.predict.evaluate.case_groups` and `match_errors`).
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))  # for _png when run as a script

from _png import write_png  # noqa: E402

from elucidate.cases import read_cases  # noqa: E402
from elucidate.errors import InputError  # noqa: E402
from elucidate.predict.carbon_classes import carbon_class, class_breakdown  # noqa: E402
from elucidate.predict.evaluate import case_groups, match_errors  # noqa: E402
from elucidate.predict.model import load_model  # noqa: E402

#: Parity plot: shift range (ppm) of both axes, tick spacing, image size.
PLOT_RANGE = (0.0, 230.0)
TICK_STEP = 50.0
IMAGE_SIZE = 600

#: Worst-predicted carbons listed in the JSON output.
N_WORST = 25


def case_rows(model, case):
    """Matched carbons of one case with their classes (the matching of
    `elucidate.predict.evaluate`: sorted within multiplicity groups).

    Returns
    -------
    list of dict
        ``{"case", "atom", "class", "predicted", "observed"}`` per carbon.
    """
    case_id = case.get("id")
    mol, predicted, observed = case_groups(model, case)
    try:
        matched = match_errors(predicted, observed)
    except InputError as exc:
        raise InputError(f"case {case_id}: {exc}") from None
    by_atom = {idx: sh for group in predicted.values() for sh, _sg, _s, idx in group}
    return [{"case": case_id, "atom": int(idx), "class": carbon_class(mol, int(idx)),
             "predicted": float(by_atom[idx]), "observed": round(float(by_atom[idx] - err), 6)}
            for err, _sg, _s, idx in matched]


# ------------------------------------------------------------------------- summary

def summarize(rows, label, table, n_cases):
    """Per-class and overall MAE / p95 of matched carbons (a JSON-ready dict)."""
    if not rows:
        raise InputError("no carbons were matched; the case file holds no carbons to compare")
    abs_err = np.array([abs(r["predicted"] - r["observed"]) for r in rows])
    lo, hi = PLOT_RANGE
    outside = sum(not (lo <= r["observed"] <= hi and lo <= r["predicted"] <= hi) for r in rows)
    worst = sorted(rows, key=lambda r: -abs(r["predicted"] - r["observed"]))[:N_WORST]
    return {
        "label": label,
        "table": table,
        "cases": n_cases,
        "overall": {"carbons": int(len(abs_err)), "mae": float(abs_err.mean()),
                    "p95": float(np.percentile(abs_err, 95))},
        "classes": class_breakdown((r["class"], abs(r["predicted"] - r["observed"])) for r in rows),
        "outside_plot_range": int(outside),
        "worst": [dict(r, error=round(r["predicted"] - r["observed"], 2)) for r in worst],
    }


def markdown_table(summary) -> str:
    """The per-class table as Markdown (classes in CLASS_ORDER, then all carbons)."""
    who = summary["label"] + (f" (predictor: {summary['predictor']})" if summary.get("predictor") else "")
    lines = [f"{who}: {summary['cases']} cases, {summary['overall']['carbons']} carbons",
             "",
             "| carbon class | carbons | MAE (ppm) | p95 (ppm) |",
             "|---|---:|---:|---:|"]
    for c in summary["classes"]:
        lines.append(f"| {c['class']} | {c['carbons']} | {c['mae']:.2f} | {c['p95']:.2f} |")
    o = summary["overall"]
    lines.append(f"| **all** | **{o['carbons']}** | **{o['mae']:.2f}** | **{o['p95']:.2f}** |")
    return "\n".join(lines)


# ---------------------------------------------------------------------- parity plot

# 3 x 5 bitmap glyphs ('#' = ink); characters not listed are drawn blank.
_GLYPHS = {
    "0": ("###", "#.#", "#.#", "#.#", "###"), "1": (".#.", "##.", ".#.", ".#.", "###"),
    "2": ("###", "..#", "###", "#..", "###"), "3": ("###", "..#", ".##", "..#", "###"),
    "4": ("#.#", "#.#", "###", "..#", "..#"), "5": ("###", "#..", "###", "..#", "###"),
    "6": ("###", "#..", "###", "#.#", "###"), "7": ("###", "..#", "..#", ".#.", ".#."),
    "8": ("###", "#.#", "###", "#.#", "###"), "9": ("###", "#.#", "###", "..#", "###"),
    "A": (".#.", "#.#", "###", "#.#", "#.#"), "B": ("##.", "#.#", "##.", "#.#", "##."),
    "C": (".##", "#..", "#..", "#..", ".##"), "D": ("##.", "#.#", "#.#", "#.#", "##."),
    "E": ("###", "#..", "##.", "#..", "###"), "F": ("###", "#..", "##.", "#..", "#.."),
    "G": (".##", "#..", "#.#", "#.#", ".##"), "H": ("#.#", "#.#", "###", "#.#", "#.#"),
    "I": ("###", ".#.", ".#.", ".#.", "###"), "J": ("..#", "..#", "..#", "#.#", ".#."),
    "K": ("#.#", "#.#", "##.", "#.#", "#.#"), "L": ("#..", "#..", "#..", "#..", "###"),
    "M": ("#.#", "###", "#.#", "#.#", "#.#"), "N": ("##.", "#.#", "#.#", "#.#", "#.#"),
    "O": (".#.", "#.#", "#.#", "#.#", ".#."), "P": ("##.", "#.#", "##.", "#..", "#.."),
    "Q": (".#.", "#.#", "#.#", "##.", ".##"), "R": ("##.", "#.#", "##.", "#.#", "#.#"),
    "S": (".##", "#..", ".#.", "..#", "##."), "T": ("###", ".#.", ".#.", ".#.", ".#."),
    "U": ("#.#", "#.#", "#.#", "#.#", "###"), "V": ("#.#", "#.#", "#.#", "#.#", ".#."),
    "W": ("#.#", "#.#", "###", "###", "#.#"), "X": ("#.#", "#.#", ".#.", "#.#", "#.#"),
    "Y": ("#.#", "#.#", ".#.", ".#.", ".#."), "Z": ("###", "..#", ".#.", "#..", "###"),
    "-": ("...", "...", "###", "...", "..."), ".": ("...", "...", "...", "...", ".#."),
    "(": (".#.", "#..", "#..", "#..", ".#."), ")": (".#.", "..#", "..#", "..#", ".#."),
    "/": ("..#", "..#", ".#.", "#..", "#.."), "_": ("...", "...", "...", "...", "###"),
    "=": ("...", "###", "...", "###", "..."), ":": ("...", ".#.", "...", ".#.", "..."),
    ",": ("...", "...", "...", ".#.", "#.."), "+": ("...", ".#.", "###", ".#.", "..."),
}
_SCALE = 2  # pixels per glyph dot


def text_mask(text: str, scale: int = _SCALE) -> np.ndarray:
    """Boolean ink mask of ``text`` (upper-cased) in the 3 x 5 font, one dot gap between glyphs."""
    blank = ("...",) * 5
    cols = []
    for ch in text.upper():
        g = np.array([[c == "#" for c in row] for row in _GLYPHS.get(ch, blank)])
        cols.extend([g, np.zeros((5, 1), bool)])
    mask = np.hstack(cols[:-1]) if cols else np.zeros((5, 0), bool)
    return np.kron(mask, np.ones((scale, scale), bool)).astype(bool)


def _stamp(img, mask, top, left, colour=(0, 0, 0)):
    """Paint ``mask`` into ``img`` with its top-left corner at (top, left), clipped."""
    h, w = mask.shape
    t0, l0 = max(top, 0), max(left, 0)
    t1, l1 = min(top + h, img.shape[0]), min(left + w, img.shape[1])
    if t1 <= t0 or l1 <= l0:
        return
    sub = mask[t0 - top:t1 - top, l0 - left:l1 - left]
    img[t0:t1, l0:l1][sub] = colour


def _plot_box(size):
    """(left, top, side) of the square plot area inside a ``size`` px image."""
    left, top = round(size * 0.12), round(size * 0.07)
    side = size - left - round(size * 0.05)
    return left, top, side


def ppm_to_pixel(x, y, size=IMAGE_SIZE, ppm_range=PLOT_RANGE):
    """Pixel (row, column) of the point (observed x, predicted y) in the plot area."""
    left, top, side = _plot_box(size)
    lo, hi = ppm_range
    fx = (np.asarray(x, float) - lo) / (hi - lo)
    fy = (np.asarray(y, float) - lo) / (hi - lo)
    col = left + np.minimum((fx * side).astype(int), side - 1)
    row = top + side - 1 - np.minimum((fy * side).astype(int), side - 1)
    return row, col


def parity_pixels(observed, predicted, size=IMAGE_SIZE, ppm_range=PLOT_RANGE, cell=2, title=""):
    """RGB image of a predicted-vs-observed density plot.

    Parameters
    ----------
    observed, predicted : array_like
        Shifts (ppm) of the matched carbons, same length.
    size : int
        Image width and height, px (>= 200).
    ppm_range : (float, float)
        Axis range of both axes, ppm.
    cell : int
        Side of a density cell, px.
    title : str
        Text above the plot (3 x 5 font, upper case; other characters blank).

    Returns
    -------
    numpy.ndarray
        ``(size, size, 3)`` uint8; white background, density cells from
        light to dark blue by ``log(1 + n) / log(1 + n_max)``, grey diagonal,
        black frame, ticks and tick numbers every `TICK_STEP` ppm.  Points
        outside the range are not drawn.
    """
    x = np.asarray(observed, float)
    y = np.asarray(predicted, float)
    if x.shape != y.shape or x.ndim != 1:
        raise InputError("observed and predicted shifts must be 1-D arrays of the same length")
    if size < 200 or cell < 1:
        raise InputError(f"image size {size} / cell {cell} too small; use size >= 200 and cell >= 1")
    lo, hi = ppm_range
    img = np.full((size, size, 3), 255, np.uint8)
    left, top, side = _plot_box(size)

    # diagonal predicted = observed, under the density
    t = np.linspace(lo, hi, 4 * side)
    r, c = ppm_to_pixel(t, t, size, ppm_range)
    img[r, c] = (170, 170, 170)

    keep = (x >= lo) & (x <= hi) & (y >= lo) & (y <= hi)
    if keep.any():
        r, c = ppm_to_pixel(x[keep], y[keep], size, ppm_range)
        ncell = -(-side // cell)
        counts = np.zeros((ncell, ncell), int)
        np.add.at(counts, ((r - top) // cell, (c - left) // cell), 1)
        shade = np.log1p(counts) / np.log1p(counts.max())
        light, dark = np.array([189, 215, 238]), np.array([8, 48, 107])
        rgb = light + (dark - light) * shade[..., None]
        full = np.kron(rgb, np.ones((cell, cell, 1)))[:side, :side]
        hit = np.kron(counts > 0, np.ones((cell, cell), bool))[:side, :side]
        area = img[top:top + side, left:left + side]
        area[hit] = full[hit].round().astype(np.uint8)

    # frame
    black = (0, 0, 0)
    img[top - 1, left - 1:left + side + 1] = black
    img[top + side, left - 1:left + side + 1] = black
    img[top - 1:top + side + 1, left - 1] = black
    img[top - 1:top + side + 1, left + side] = black

    # ticks and numbers every TICK_STEP ppm
    tick = 6
    ticks = np.arange(np.ceil(lo / TICK_STEP) * TICK_STEP, hi + 1e-9, TICK_STEP)
    for v in ticks:
        r, c = ppm_to_pixel(v, v, size, ppm_range)
        r, c = int(r), int(c)
        img[top + side:top + side + tick, c] = black          # x axis, below the frame
        img[r, left - tick:left] = black                       # y axis, left of the frame
        m = text_mask(f"{v:g}")
        _stamp(img, m, top + side + tick + 3, c - m.shape[1] // 2)
        _stamp(img, m, r - m.shape[0] // 2, left - tick - 3 - m.shape[1])

    # axis titles and plot title
    m = text_mask("observed 13C shift (ppm)")
    _stamp(img, m, top + side + tick + 20, left + (side - m.shape[1]) // 2)
    m = np.rot90(text_mask("predicted 13C shift (ppm)"))
    _stamp(img, m, top + (side - m.shape[0]) // 2, left - tick - 3 - 3 * 8 - 16 - m.shape[1])
    if title:
        m = text_mask(title)
        _stamp(img, m, (top - m.shape[0]) // 2, left)
    return img


# ------------------------------------------------------------------------------ CLI

def run(cases_path, table=None, label=None, png=None, json_path=None, every=1, predictor="auto", trees=None):
    """Evaluate, print the Markdown table, write the optional PNG and JSON; returns the summary."""
    if isinstance(every, bool) or not isinstance(every, int) or every < 1:
        raise InputError(f"--every must be a positive integer, got {every!r}; use 1 to keep every case")
    cases = read_cases(cases_path, required=("answer", "peaks"), every=every)
    model = load_model(table, trees, predictor)
    rows = [row for case in cases for row in case_rows(model, case)]
    label = label or (Path(table).stem if table else "shipped model")
    summary = summarize(rows, label, str(table) if table else "shipped", len(cases))
    summary["predictor"] = model.name
    print(markdown_table(summary))
    if png:
        o = summary["overall"]
        title = f"{label}  n {o['carbons']}  mae {o['mae']:.2f} ppm"
        write_png(png, parity_pixels([r["observed"] for r in rows],
                                     [r["predicted"] for r in rows], title=title))
        print(f"\nparity plot: {png}", file=sys.stderr)
    if json_path:
        Path(json_path).write_text(json.dumps(summary, indent=2) + "\n", encoding="utf-8")
    return summary


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(
        description="13C predictor errors per carbon class (Markdown table on stdout); "
                    "optional parity plot (x observed, y predicted, 0-230 ppm both axes) and JSON.")
    parser.add_argument("cases", help="JSON-lines case file with 'answer' SMILES and 'peaks'")
    parser.add_argument("--table", default=None, help="shift table .npz (default: the shipped one)")
    parser.add_argument("--predictor", choices=("auto", "table", "table+trees"), default="auto",
                        help="table alone, table corrected by the learned trees, or auto (trees when shipped)")
    parser.add_argument("--trees", default=None, help="learned correction .npz (default: the shipped one)")
    parser.add_argument("--label", default=None, help="name shown in the table and plot title")
    parser.add_argument("--png", default=None,
                        help="write a 600x600 parity plot here: x observed, y predicted, 0-230 ppm, "
                             "ticks every 50 ppm, log-density colour, grey diagonal")
    parser.add_argument("--json", dest="json_path", default=None, help="write the summary as JSON here")
    parser.add_argument("--every", type=int, default=1,
                        help="keep every n-th case per heavy-atom band (a quicker stratified sample)")
    args = parser.parse_args(argv)
    try:
        run(args.cases, args.table, args.label, args.png, args.json_path, args.every, args.predictor, args.trees)
    except InputError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main())
