"""Self-contained HTML report of a solve result, printable to PDF.

The report is rendered from the plain-data result only (the dictionary of
:func:`elucidate.report.serialize.result_to_dict`, or the same dictionary
read back from a saved JSON file), so ``elucidate report RESULT.json
--format html`` re-renders a result without solving again.  Nothing here
recomputes science; the only chemistry done is a 2D depiction of each
candidate SMILES with RDKit (``rdDepictor.Compute2DCoords`` and
``rdMolDraw2D.MolDraw2DSVG``).

One file, no network: styles are inline, pictures are inline SVG, and a
Content-Security-Policy forbids loading anything from elsewhere (and running
scripts).  A ``@media print`` block keeps each candidate on its own page.

Contents
--------
* a header to file and sign: sample ID, date and time of the run (UTC),
  elucidate and shift-table versions (the result's ``run`` block), and
  sign-off lines (name, signature, date) for the analyst and the reviewer;
* the cautions (results are hypotheses) at the top and the bottom;
* the ranked table, a small structure drawing per row, and one line each on
  the score, the probability and the chance that the answer is not listed;
* inputs echoed: formula, DBE, solvent, the measured spectrum with the lines
  used marked (when the result carries a ``spectrum_trace``), observed
  lines, peak-picking settings when the lines came from a spectrum, search
  settings in plain words;
* the completeness statement and the constraint log (counts before/after);
* for each candidate: a 2D depiction with carbon numbers, a stick spectrum
  (observed lines up, predicted lines down, a connector for each assigned
  pair, chemical shift decreasing from left to right as usual in NMR), the
  assignment table and the predicted shift of every carbon;
* a footer saying whether the page was rendered straight from the run or
  re-rendered from a saved result file.

Atom numbers are 1-based positions in the candidate SMILES as written (the
JSON's 0-based ``atoms`` plus one), which is also the atom numbering of the
molfile records written by :mod:`elucidate.report.sdf`.

Colours are from the Okabe & Ito colour-blind-safe palette (Okabe & Ito,
"Color Universal Design", 2002; from memory): blue #0072B2 for observed
lines, vermillion #D55E00 for predicted lines; shapes and labels carry the
same information, so the report also reads in grey print.
"""

from __future__ import annotations

import html
import math
import re
from typing import Any

from ..errors import InputError
from .text import unlisted_sentence

__all__ = ["render_html", "check_result_data", "depiction_svg", "stick_spectrum_svg", "trace_svg"]

OBSERVED_COLOUR = "#0072B2"
PREDICTED_COLOUR = "#D55E00"
CONNECTOR_COLOUR = "#555555"

_REQUIRED = ("formula", "candidates")
_DEFAULT_CAUTION = (
    "Results are hypotheses, not identifications: confirm with reference standards and "
    "orthogonal methods; forensic and QC decisions follow the lab's accredited procedures."
)


def check_result_data(data: Any) -> dict:
    """Check that ``data`` looks like a serialised solve or check result.

    Parameters
    ----------
    data : dict
        Output of :func:`elucidate.report.serialize.result_to_dict` (or the
        same read from JSON), or of the check workflow (``"workflow":
        "check"``, with ``smiles`` and ``assignment``).

    Returns
    -------
    dict
        ``data`` itself.

    Raises
    ------
    InputError
        When keys the renderers need are missing or have the wrong type.
    """
    hint = "give the JSON written by 'elucidate solve --format json'"
    if not isinstance(data, dict):
        raise InputError(f"result must be a JSON object, got {type(data).__name__}; {hint}")
    if data.get("workflow") == "check":
        for key, kind in (("formula", str), ("smiles", str), ("assignment", list)):
            if not isinstance(data.get(key), kind):
                raise InputError(f"check result has no valid {key!r}; give the JSON written by the check "
                                 "workflow")
        return data
    missing = [k for k in _REQUIRED if k not in data]
    if missing:
        raise InputError(f"result has no {', '.join(repr(k) for k in missing)}; {hint}")
    if not isinstance(data["candidates"], list):
        raise InputError(f"result 'candidates' must be a list; {hint}")
    for i, cand in enumerate(data["candidates"], 1):
        if not isinstance(cand, dict) or not isinstance(cand.get("smiles"), str):
            raise InputError(f"result candidate {i} has no 'smiles' text; {hint}")
        if not isinstance(cand.get("assignment", []), list):
            raise InputError(f"result candidate {i}: 'assignment' must be a list; {hint}")
    if data.get("spectrum_trace") is not None:
        _trace_points(data["spectrum_trace"])
    if data.get("run") is not None and not isinstance(data["run"], dict):
        raise InputError(f"result 'run' must be an object (time, versions, sample ID); {hint}")
    return data


# ----------------------------------------------------------------- depiction
#: Colours of the drawn 2D correlations by status (Okabe-Ito: bluish green,
#: orange, vermillion), and their dash patterns, so they read apart without colour too.
_ARROW_STYLE = {"satisfied": ("#009E73", ""), "long range": ("#E69F00", "5,3"), "violated": ("#D55E00", "2,3")}


def depiction_svg(smiles: str, *, width: int = 340, height: int = 260, numbered: bool = True,
                  css_class: str = "structure", arrows=()) -> str:
    """2D depiction of ``smiles`` as an inline SVG, with carbon numbers by default.

    Coordinates from RDKit's ``Compute2DCoords`` (deterministic); each carbon
    carries its 1-based position in the SMILES as an atom note.

    Parameters
    ----------
    smiles : str
    width, height : int
        Size in pixels.
    numbered : bool
        Write the carbon numbers (off for the small pictures of the ranked table).
    css_class : str
        Class of the ``<svg>`` element (``structure``; ``thumb`` in the ranked table).
    arrows : sequence of (atom, atom, status)
        2D correlations drawn as curved arrows from the carbon carrying the
        proton to the correlated carbon (atom indices in the SMILES order;
        status ``satisfied``, ``long range`` or ``violated`` sets colour
        and dashes).

    Returns
    -------
    str
        An ``<svg>`` element (no XML declaration).

    Raises
    ------
    InputError
        When RDKit cannot read ``smiles``.
    """
    from rdkit import Chem
    from rdkit.Chem import rdDepictor
    from rdkit.Chem.Draw import rdMolDraw2D

    mol = Chem.MolFromSmiles(smiles) if isinstance(smiles, str) else None
    if mol is None:
        raise InputError(f"cannot read candidate SMILES {smiles!r}; the result file may be damaged")
    if numbered:
        for atom in mol.GetAtoms():
            if atom.GetSymbol() == "C":
                atom.SetProp("atomNote", str(atom.GetIdx() + 1))
    rdDepictor.Compute2DCoords(mol)
    drawer = rdMolDraw2D.MolDraw2DSVG(width, height)
    opts = drawer.drawOptions()
    opts.annotationFontScale = 0.6
    opts.atomNoteColour = (0.0, 0.447, 0.698)  # Okabe-Ito blue: numbers read apart from element labels
    opts.clearBackground = False
    drawer.DrawMolecule(mol)
    ends = [(drawer.GetDrawCoords(int(a)), drawer.GetDrawCoords(int(b)), st) for a, b, st in arrows
            if 0 <= int(a) < mol.GetNumAtoms() and 0 <= int(b) < mol.GetNumAtoms() and a != b]
    drawer.FinishDrawing()
    svg = drawer.GetDrawingText()
    svg = re.sub(r"<\?xml[^>]*\?>\s*", "", svg)
    if ends:
        svg = svg.replace("</svg>", _arrow_paths(ends) + "</svg>")
    # Accessible name for screen readers; the class lets the print CSS size it.
    label = f"2D structure of {smiles}" + (" with carbon numbers" if numbered else "")
    svg = svg.replace(
        "<svg ",
        f"<svg role=\"img\" aria-label=\"{html.escape(label, quote=True)}\" "
        f"class=\"{html.escape(css_class, quote=True)}\" ",
        1,
    )
    return svg


# ----------------------------------------------------------------- stick spectrum
def _arrow_paths(ends) -> str:
    """SVG curves (bowed to one side, with an arrow head) for drawn correlations."""
    out = ['<defs>']
    for k, (colour, _dash) in enumerate(_ARROW_STYLE.values()):
        out.append(f'<marker id="corr-head-{k}" viewBox="0 0 6 6" refX="5" refY="3" markerWidth="5" '
                   f'markerHeight="5" orient="auto"><path d="M0,0 L6,3 L0,6 z" fill="{colour}"/></marker>')
    out.append('</defs><g class="correlations" fill="none" stroke-width="1.6" opacity="0.85">')
    keys = list(_ARROW_STYLE)
    for p, q, status in ends:
        status = status if status in _ARROW_STYLE else "violated"
        k = keys.index(status)
        colour, dash = _ARROW_STYLE[status]
        mx, my = (p.x + q.x) / 2, (p.y + q.y) / 2
        dx, dy = q.x - p.x, q.y - p.y
        cx, cy = mx - 0.25 * dy, my + 0.25 * dx  # bow the curve to the left of its direction
        dash_attr = f' stroke-dasharray="{dash}"' if dash else ""
        out.append(f'<path d="M{p.x:.1f},{p.y:.1f} Q{cx:.1f},{cy:.1f} {q.x:.1f},{q.y:.1f}" stroke="{colour}"'
                   f'{dash_attr} marker-end="url(#corr-head-{k})"><title>{html.escape(status)}</title></path>')
    out.append('</g>')
    return "".join(out)


def _nice_step(span: float) -> float:
    raw = span / 8.0
    mag = 10 ** math.floor(math.log10(raw))
    for m in (1, 2, 5, 10):
        if raw <= m * mag:
            return m * mag
    return 10 * mag  # pragma: no cover


def stick_spectrum_svg(
    peaks: list[dict],
    assignment: list[dict],
    *,
    width: int = 640,
    height: int = 250,
    title: str = "",
) -> str:
    """Observed-versus-predicted stick spectrum as an inline SVG.

    Observed lines point up, predicted lines (one per assigned carbon class)
    point down, and a grey connector joins the two ends of every assigned
    pair.  The chemical-shift axis decreases from left to right, as NMR
    spectra are drawn (common practice, no source).  Observed lines without
    any carbon are drawn dashed and labelled "?".

    Parameters
    ----------
    peaks : list of dict
        Observed lines (``shift``; optional ``mult``).
    assignment : list of dict
        Entries with ``peak_index``, ``observed``, ``predicted``, ``atoms``
        (0-based) and optional ``kind``.
    width, height : int
    title : str
        Accessible title.

    Returns
    -------
    str
        An ``<svg>`` element.
    """
    obs = [float(p["shift"]) for p in peaks if p.get("shift") is not None]
    pred = [float(e["predicted"]) for e in assignment if e.get("predicted") is not None]
    values = obs + pred or [0.0, 200.0]
    lo, hi = min(values), max(values)
    span = max(hi - lo, 10.0)
    step = _nice_step(span * 1.1)
    left_ppm = math.ceil((hi + 0.05 * span) / step) * step
    right_ppm = math.floor((lo - 0.05 * span) / step) * step
    m_left, m_right = 30.0, 20.0
    plot_w = width - m_left - m_right

    def x_of(ppm: float) -> float:
        return m_left + (left_ppm - ppm) / (left_ppm - right_ppm) * plot_w

    top, obs_base, pred_base, bottom = 40.0, 110.0, 150.0, 205.0
    axis_y = bottom + 8.0
    parts = [
        f'<svg xmlns="http://www.w3.org/2000/svg" class="sticks" role="img" width="{width}" '
        f'height="{height}" viewBox="0 0 {width} {height}" data-left-ppm="{left_ppm:g}" '
        f'data-right-ppm="{right_ppm:g}">',
        f"<title>{html.escape(title or 'observed and predicted 13C lines')}</title>",
        f'<text class="lab" transform="translate(14 {obs_base:.0f}) rotate(-90)" '
        f'fill="{OBSERVED_COLOUR}">observed</text>',
        f'<text class="lab" transform="translate(14 {bottom:.0f}) rotate(-90)" '
        f'fill="{PREDICTED_COLOUR}">predicted</text>',
        f'<line x1="{m_left}" y1="{obs_base}" x2="{width - m_right}" y2="{obs_base}" stroke="#999" '
        'stroke-width="0.5"/>',
        f'<line x1="{m_left}" y1="{pred_base}" x2="{width - m_right}" y2="{pred_base}" stroke="#999" '
        'stroke-width="0.5"/>',
    ]
    # connectors first, so sticks are drawn over them
    for e in assignment:
        if e.get("observed") is None or e.get("predicted") is None:
            continue
        parts.append(
            f'<line class="pair" x1="{x_of(float(e["observed"])):.1f}" y1="{obs_base}" '
            f'x2="{x_of(float(e["predicted"])):.1f}" y2="{pred_base}" stroke="{CONNECTOR_COLOUR}" '
            'stroke-width="1" stroke-dasharray="3 2"/>'
        )
    assigned = {e.get("peak_index") for e in assignment}
    # crowded labels are stacked on up to three levels
    level: dict[int, int] = {}
    last_x = [-1e9, -1e9, -1e9]
    for i in sorted((i for i, p in enumerate(peaks) if p.get("shift") is not None),
                    key=lambda i: (-float(peaks[i]["shift"]), i)):
        x = x_of(float(peaks[i]["shift"]))
        k = next((k for k in range(3) if x - last_x[k] >= 14), min(range(3), key=lambda k: last_x[k]))
        level[i] = k
        last_x[k] = x
    for i, p in enumerate(peaks):
        if p.get("shift") is None:
            continue
        x = x_of(float(p["shift"]))
        count = p.get("count") or 1
        h = (obs_base - top) * min(1.0, 0.55 + 0.15 * count)
        dash = "" if i in assigned else ' stroke-dasharray="4 3"'
        label = str(i + 1) if i in assigned else f"{i + 1}?"
        parts.append(
            f'<line class="obs" data-ppm="{float(p["shift"]):g}" x1="{x:.1f}" y1="{obs_base}" '
            f'x2="{x:.1f}" y2="{obs_base - h:.1f}" stroke="{OBSERVED_COLOUR}" stroke-width="2"{dash}>'
            f"<title>line {i + 1}: {float(p['shift']):.2f} ppm {html.escape(str(p.get('mult') or ''))}"
            "</title></line>"
        )
        parts.append(
            f'<text class="lab" x="{x:.1f}" y="{obs_base - h - 3 - 10 * level[i]:.1f}" text-anchor="middle" '
            f'fill="{OBSERVED_COLOUR}">{html.escape(label)}</text>'
        )
    seen = set()
    for e in assignment:
        atoms = tuple(e.get("atoms") or ())
        if e.get("predicted") is None or atoms in seen:
            continue
        seen.add(atoms)
        x = x_of(float(e["predicted"]))
        h = (bottom - pred_base) * min(1.0, 0.55 + 0.15 * max(1, len(atoms)))
        names = ",".join(f"C{a + 1}" for a in atoms)
        parts.append(
            f'<line class="pred" data-ppm="{float(e["predicted"]):g}" x1="{x:.1f}" y1="{pred_base}" '
            f'x2="{x:.1f}" y2="{pred_base + h:.1f}" stroke="{PREDICTED_COLOUR}" stroke-width="2">'
            f"<title>{names}: predicted {float(e['predicted']):.2f} ppm</title></line>"
        )
    # axis
    parts.append(
        f'<line x1="{m_left}" y1="{axis_y}" x2="{width - m_right}" y2="{axis_y}" stroke="#222" '
        'stroke-width="1"/>'
    )
    n_ticks = int(round((left_ppm - right_ppm) / step))
    for k in range(n_ticks + 1):
        ppm = left_ppm - k * step
        x = x_of(ppm)
        parts.append(
            f'<line x1="{x:.1f}" y1="{axis_y}" x2="{x:.1f}" y2="{axis_y + 4}" stroke="#222"/>'
            f'<text class="tick" x="{x:.1f}" y="{axis_y + 16}" text-anchor="middle">{ppm:g}</text>'
        )
    parts.append(
        f'<text class="tick" x="{width - m_right}" y="{axis_y + 32}" text-anchor="end">'
        "\u03b4 13C / ppm</text>"
    )
    parts.append("</svg>")
    return "".join(parts)


def _trace_points(trace: Any) -> tuple[list[float], list[float]]:
    """Checked ``(ppm, intensity)`` lists of a result's ``spectrum_trace``."""
    hint = "the result file may be damaged; re-run the solve or drop the 'spectrum_trace' key"
    if not isinstance(trace, dict):
        raise InputError(f"result 'spectrum_trace' must be an object; {hint}")
    ppm, inten = trace.get("ppm"), trace.get("intensity")
    if not (isinstance(ppm, list) and isinstance(inten, list) and len(ppm) == len(inten) >= 2):
        raise InputError(f"result 'spectrum_trace' needs 'ppm' and 'intensity' lists of equal length; {hint}")
    try:
        xs = [float(v) for v in ppm]
        ys = [float(v) for v in inten]
    except (TypeError, ValueError):
        raise InputError(f"result 'spectrum_trace' holds values that are not numbers; {hint}") from None
    if not all(math.isfinite(v) for v in xs + ys) or max(xs) <= min(xs):
        raise InputError(f"result 'spectrum_trace' needs finite numbers spanning a shift range; {hint}")
    return xs, ys


def trace_svg(trace: dict, peaks: list[dict], *, width: int = 640, height: int = 230, title: str = "") -> str:
    """The measured spectrum (decimated trace) with the lines used marked, as an inline SVG.

    The shift axis decreases from left to right, as NMR spectra are drawn
    (common practice, no source).  Each observed line of ``peaks`` gets a
    small triangle above the tallest point of the trace near it and its line
    number; peaks of the trace without a mark were not used (solvent lines,
    noise below the picking threshold).

    Parameters
    ----------
    trace : dict
        A result's ``spectrum_trace`` (``ppm`` and ``intensity`` lists).
    peaks : list of dict
        Observed lines (``shift``).
    width, height : int
    title : str
        Accessible title.

    Returns
    -------
    str
        An ``<svg>`` element.

    Raises
    ------
    InputError
        When the trace is damaged.
    """
    xs, ys = _trace_points(trace)
    left_ppm, right_ppm = max(xs), min(xs)
    m_left, m_right, top, bottom = 14.0, 14.0, 36.0, height - 40.0
    plot_w = width - m_left - m_right
    lo, hi = min(0.0, min(ys)), max(ys)
    if hi <= lo:
        hi = lo + 1.0

    def x_of(ppm: float) -> float:
        return m_left + (left_ppm - ppm) / (left_ppm - right_ppm) * plot_w

    def y_of(v: float) -> float:
        return bottom - (v - lo) / (hi - lo) * (bottom - top)

    pts = " ".join(f"{x_of(x):.1f},{y_of(y):.1f}" for x, y in zip(xs, ys))
    parts = [
        f'<svg xmlns="http://www.w3.org/2000/svg" class="trace" role="img" width="{width}" '
        f'height="{height}" viewBox="0 0 {width} {height}" data-left-ppm="{left_ppm:g}" '
        f'data-right-ppm="{right_ppm:g}" data-points="{len(xs)}">',
        f"<title>{html.escape(title or 'measured 13C spectrum with the lines used marked')}</title>",
        f'<polyline class="spectrum" points="{pts}" fill="none" stroke="#222" stroke-width="0.8" '
        'stroke-linejoin="round"/>',
    ]
    # marks: above the tallest trace point within half a ppm-step of each line
    spacing = (left_ppm - right_ppm) / max(len(xs) - 1, 1)
    window = max(0.15, 3 * spacing)
    marks = []
    for i, p in enumerate(peaks):
        if p.get("shift") is None:
            continue
        shift = float(p["shift"])
        near = [y for x, y in zip(xs, ys) if abs(x - shift) <= window]
        marks.append((i, shift, max(near) if near else 0.0))
    last_x = [-1e9, -1e9, -1e9]
    for i, shift, peak_y in sorted(marks, key=lambda m: (-m[1], m[0])):
        x = x_of(shift)
        k = next((k for k in range(3) if x - last_x[k] >= 14), min(range(3), key=lambda k: last_x[k]))
        last_x[k] = x
        y = max(top - 4.0, y_of(max(peak_y, lo)) - 4.0)
        label_y = max(10.0, y - 9.0 - 10 * k)
        parts.append(
            f'<path class="mark" data-ppm="{shift:g}" d="M{x:.1f},{y:.1f} l-3.5,-6 h7 z" '
            f'fill="{OBSERVED_COLOUR}"><title>line {i + 1}: {shift:.2f} ppm</title></path>'
            f'<text class="lab" x="{x:.1f}" y="{label_y:.1f}" text-anchor="middle" '
            f'fill="{OBSERVED_COLOUR}">{i + 1}</text>'
        )
    axis_y = bottom + 6.0
    parts.append(
        f'<line x1="{m_left}" y1="{axis_y}" x2="{width - m_right}" y2="{axis_y}" stroke="#222" '
        'stroke-width="1"/>'
    )
    step = _nice_step((left_ppm - right_ppm) * 1.1)
    tick = math.floor(left_ppm / step) * step
    while tick >= right_ppm - 1e-9:
        x = x_of(tick)
        parts.append(
            f'<line x1="{x:.1f}" y1="{axis_y}" x2="{x:.1f}" y2="{axis_y + 4}" stroke="#222"/>'
            f'<text class="tick" x="{x:.1f}" y="{axis_y + 16}" text-anchor="middle">{tick:g}</text>'
        )
        tick -= step
    parts.append(
        f'<text class="tick" x="{width - m_right}" y="{axis_y + 32}" text-anchor="end">'
        "\u03b4 13C / ppm</text>"
    )
    parts.append("</svg>")
    return "".join(parts)


# ----------------------------------------------------------------- page
_CSS = """
:root { --ink:#1a1a1a; --muted:#555; --rule:#c8c8c8; --obs:%(obs)s; --pred:%(pred)s; --warn:#8a4b00; }
* { box-sizing: border-box; }
body { font-family: system-ui, "DejaVu Sans", Arial, sans-serif; color: var(--ink); background:#fff;
       margin: 0 auto; max-width: 60rem; padding: 1.5rem; line-height: 1.45; font-size: 15px; }
h1 { font-size: 1.5rem; margin: 0 0 .25rem; }
h2 { font-size: 1.15rem; border-bottom: 2px solid var(--ink); padding-bottom: .15rem; margin-top: 2rem; }
h3 { font-size: 1.05rem; margin: 0 0 .4rem; }
.sub { color: var(--muted); margin: 0 0 1rem; }
.caution { border: 2px solid var(--warn); background: #fff7ec; padding: .6rem .9rem; margin: 1rem 0; }
.caution strong { color: var(--warn); }
.status-ok { font-weight: 600; }
.status-cut { font-weight: 600; color: var(--warn); }
table { border-collapse: collapse; margin: .4rem 0 1rem; font-size: .92rem; }
th, td { border-bottom: 1px solid var(--rule); padding: .2rem .6rem; text-align: left; vertical-align: top; }
th { background: #f1f1f1; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: .15rem 1rem; margin: .3rem 0 1rem; }
dl.facts dt { font-weight: 600; }
dl.facts dd { margin: 0; }
caption { caption-side: top; text-align: left; font-size: .85rem; color: var(--muted); padding: .2rem 0; }
td .smiles { white-space: nowrap; }
code, .smiles { font-family: "DejaVu Sans Mono", Consolas, monospace; overflow-wrap: anywhere; }
.cand { border-top: 1px solid var(--rule); padding-top: 1rem; margin-top: 1.5rem; }
.figs { display: flex; flex-wrap: wrap; gap: 1rem; align-items: flex-start; }
.figs figure { margin: 0; }
figcaption { font-size: .85rem; color: var(--muted); }
svg.sticks text.lab, svg.trace text.lab { font-size: 10px; }
svg.sticks text.tick, svg.trace text.tick { font-size: 11px; fill: #222; }
svg.thumb { display: block; }
.ident { display: flex; flex-wrap: wrap; gap: .5rem 2.5rem; align-items: flex-start; }
.ident dl.facts { margin: 0; }
table.signoff { margin: 0; border-collapse: separate; border-spacing: .9rem 0; margin-left: -.9rem; }
table.signoff th { background: none; border-bottom: none; padding-left: 0; }
table.signoff caption { font-weight: 600; color: var(--ink); font-size: .92rem; padding-left: .9rem; }
table.signoff th[scope="row"] { vertical-align: bottom; }
table.signoff td.line { border-bottom: 1px solid var(--ink); height: 2.6em; min-width: 10rem;
                        vertical-align: bottom; padding: 0 .2rem .1rem; }
figure.spectrum { margin: 0 0 1rem; }
svg.trace { max-width: 100%%; height: auto; }
table.ranked td.pic { padding: 0 .3rem; }
table.ranked td .smiles { white-space: normal; word-break: break-all; }
ul.key { font-size: .85rem; color: var(--muted); margin: -.5rem 0 1rem; padding-left: 1.2rem; }
ul.warn li { color: var(--warn); }
.legend span { display: inline-block; margin-right: 1rem; }
.key-obs { color: var(--obs); font-weight: 600; }
.key-pred { color: var(--pred); font-weight: 600; }
footer { margin-top: 2rem; font-size: .85rem; color: var(--muted); }
@media print {
  body { max-width: none; padding: 0; font-size: 10pt; }
  @page { size: A4; margin: 15mm; }
  .cand { break-before: page; border-top: none; }
  table, figure, .caution, .ident { break-inside: avoid; }
  table.ranked { break-inside: auto; }
  table.ranked tr { break-inside: avoid; }
  h2, h3 { break-after: avoid; }
  * { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
""" % {"obs": OBSERVED_COLOUR, "pred": PREDICTED_COLOUR}

_CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:"


def _e(x) -> str:
    return html.escape("" if x is None else str(x))


def _f(x, nd: int = 2) -> str:
    if x is None:
        return "\u2013"
    try:
        return f"{float(x):.{nd}f}"
    except (TypeError, ValueError):
        return _e(x)


def _table(head: list[str], rows: list[list[str]], num: set[int] = frozenset(), caption: str = "",
           cls: str = "", cell_cls: dict[int, str] | None = None) -> str:
    out = [f'<table class="{cls}">' if cls else "<table>"]
    if caption:
        out.append(f"<caption>{caption}</caption>")
    out.append(
        "<thead><tr>"
        + "".join(f'<th scope="col"{" class=num" if i in num else ""}>{h}</th>' for i, h in enumerate(head))
        + "</tr></thead><tbody>"
    )
    cell_cls = cell_cls or {}

    def attr(i: int) -> str:
        names = " ".join(n for n in ("num" if i in num else "", cell_cls.get(i, "")) if n)
        return f' class="{names}"' if " " in names else (f" class={names}" if names else "")

    for r in rows:
        out.append("<tr>" + "".join(f"<td{attr(i)}>{c}</td>" for i, c in enumerate(r)) + "</tr>")
    out.append("</tbody></table>")
    return "".join(out)


def _notes(c: dict) -> str:
    notes = []
    if c.get("overlapped_lines"):
        notes.append(f"{c['overlapped_lines']} line(s) hold more than one carbon class")
    if c.get("split_classes"):
        notes.append(f"{c['split_classes']} carbon class(es) split over two lines")
    if c.get("unfilled_lines"):
        notes.append(f"{len(c['unfilled_lines'])} line(s) unexplained")
    if c.get("max_error_ppm") is not None and float(c["max_error_ppm"]) > 10:
        notes.append("a deviation above 10 ppm")
    if c.get("set_aside"):
        notes.append("near alternative, not rated (it does not meet every constraint): " + str(c["set_aside"]))
    for note in c.get("notes", []) or []:
        notes.append(str(note))
    return "; ".join(notes)


def _inputs(data: dict) -> str:
    s = data.get("settings") or {}
    facts = [
        ("Molecular formula", _e(data["formula"])),
        ("DBE (rings + double bonds)", _e(data["dbe"]) if data.get("dbe") is not None else "not recorded"),
        ("Solvent", _e(s.get("solvent") or ("not given (no solvent lines removed)" if s else "not recorded"))),
        ("Observed lines", _e(len(data.get("peaks") or []))),
    ]
    if data.get("observe_mhz"):
        facts.append(("13C observe frequency", f"{float(data['observe_mhz']):g} MHz"))
    out = ['<dl class="facts">'] + [f"<dt>{k}</dt><dd>{v}</dd>" for k, v in facts] + ["</dl>"]
    peaks = data.get("peaks") or []
    trace = data.get("spectrum_trace")
    if trace is not None:
        shown, total = len(trace.get("ppm") or []), trace.get("points")
        of = f" of {_e(f'{total:,}')}" if isinstance(total, int) and total > shown else ""
        out.append(
            '<figure class="spectrum">'
            + trace_svg(trace, peaks, width=840, title="measured 13C spectrum with the lines used marked")
            + f"<figcaption>Measured 13C spectrum <code>{_e(trace.get('source') or '')}</code> "
            f"({_e(f'{shown:,}')}{of} points: the lowest and highest point of each interval, so every line "
            'keeps its height). <span class="key-obs">&#9660; numbered marks</span>: the lines used for the '
            "search; peaks without a mark were not used (solvent lines are listed under warnings).</figcaption>"
            "</figure>"
        )
    if peaks:
        rows = [[str(i + 1), _f(p.get("shift")), _e(p.get("mult") or "?"), _e(p.get("count") or "")]
                for i, p in enumerate(peaks)]
        out.append(_table(["line", "shift / ppm", "multiplicity", "carbons"], rows, {0, 1, 3},
                          "Observed 13C lines used for the search (after solvent removal)"))
    prov = data.get("peaks_provenance") or []
    if prov:
        out.append("<h3>Peak picking (from the spectrum files)</h3><ul>")
        out += [f"<li>{_e(p)}</li>" for p in prov]
        out.append("</ul>")
    if s:
        rows = [[_e(_setting_label(key)), _e(_setting_value(key, s[key]))] for key in _setting_order(s)]
        out.append(_table(["setting", "value"], rows, caption="Search settings and structural constraints"))
    return "".join(out)


#: Plain-language names of the search settings (the JSON keeps the raw keys), in display order.
SETTING_LABELS = {
    "solvent": "Solvent whose lines were removed",
    "time_limit": "Time limit of the search",
    "top": "Candidates reported (max)",
    "valences": "Allowed valences",
    "charged_nitrogen": "Charge-separated N+/O\u2212 pairs built",
    "allow_all": "Implausible motifs kept",
    "require": "Required substructures (SMARTS)",
    "forbid": "Forbidden substructures (SMARTS)",
    "scaffold": "Required ring system (SMILES)",
    "max_rings": "Rings (max)",
    "min_ring_size": "Ring size (min)",
    "max_ring_size": "Ring size (max)",
    "symmetry_overlap": "Accidental overlaps allowed (max; carbon classes beyond the line count)",
    "symmetry_split": "Split lines allowed (max; lines beyond the carbon classes)",
}
_NONE_TEXT = {"solvent": "none given", "scaffold": "none", "time_limit": "none"}


def _setting_order(settings: dict) -> list[str]:
    known = [k for k in SETTING_LABELS if k in settings]
    return known + sorted(k for k in settings if k not in SETTING_LABELS)


def _setting_label(key: str) -> str:
    return SETTING_LABELS.get(key) or str(key).replace("_", " ").capitalize()


def _setting_value(key: str, val) -> str:
    if key == "valences" and isinstance(val, dict):
        return ", ".join(f"{el} {'/'.join(str(v) for v in vs)}" for el, vs in val.items())
    if isinstance(val, bool):
        return "yes" if val else "no"
    if isinstance(val, list):
        return ", ".join(str(v) for v in val) or "none"
    if val is None:
        return _NONE_TEXT.get(key, "no limit")
    if key == "time_limit" and isinstance(val, (int, float)):
        return f"{val:g} s"
    return str(val)


def _search(data: dict) -> str:
    out = []
    complete = data.get("complete")
    comp = data.get("completeness") if isinstance(data.get("completeness"), dict) else {}
    status = comp.get("status")
    css = "status-ok" if status in ("complete", "complete up to cost") else "status-cut"
    if comp.get("how"):
        out.append(f"<p>{_e(comp['how'])}</p>")
    if comp.get("statement"):
        out.append(f'<p class="{css}">{_e(comp["statement"])}</p>')
    elif complete is True:
        out.append('<p class="status-ok">The search was exhaustive under the stated constraints: every '
                   "constitution consistent with them was generated and ranked.</p>")
    elif status == "complete up to cost" and comp.get("cost_bound") is not None:
        out.append('<p class="status-ok">The search was exhaustive up to an approximate cost of '
                   f"{_e(comp['cost_bound'])}: every structure not listed fits the lines worse than that by its "
                   "carbon environments (the approximate cost adds how rare each atom environment is and the "
                   "cheapest placement of the carbons under the lines).</p>")
    elif complete is False:
        out.append('<p class="status-cut">The search was cut short (time limit): structures may be missing '
                   "from this list.</p>")
    else:
        out.append('<p class="status-cut">Completeness of the search is not recorded in this result.</p>')
    if comp.get("assumptions"):
        out.append("<p>This holds under these assumptions:</p><ul>"
                   + "".join(f"<li>{_e(a)}</li>" for a in comp["assumptions"]) + "</ul>")
    if data.get("unlisted_probability") is not None:
        out.append(f"<p>{_e(unlisted_sentence(data['unlisted_probability'], data.get('unlisted_basis')))}</p>")
    facts = []
    if data.get("candidates_generated") is not None:
        facts.append(("Structures ranked", _e(f"{data['candidates_generated']:,}")))
    if data.get("elapsed_s") is not None:
        facts.append(("Search time", f"{_f(data['elapsed_s'], 1)} s"))
    facts.append(("Candidates shown", _e(len(data["candidates"]))))
    out += ['<dl class="facts">'] + [f"<dt>{k}</dt><dd>{v}</dd>" for k, v in facts] + ["</dl>"]
    log = data.get("constraint_log") or []
    if log:
        rows = [[_e(r.get("constraint")), _e(f"{r.get('before', 0):,}"), _e(f"{r.get('after', 0):,}")]
                for r in log]
        out.append(_table(["constraint", "before", "after"], rows, {1, 2},
                          "Constraint log: counts before and after each constraint"))
    out.append(_search_warnings(data))
    return "".join(out)


def _summary(cands: list[dict], unlisted) -> str:
    rows = []
    for c in cands:
        rows.append([
            f'<a href="#cand-{_e(c.get("rank"))}">{_e(c.get("rank"))}</a>',
            depiction_svg(c["smiles"], width=150, height=110, numbered=False, css_class="thumb"),
            f'<span class="smiles">{_e(c["smiles"])}</span>',
            _f(c.get("probability"), 3), _f(c.get("score"), 2), _f(c.get("mae_ppm")), _f(c.get("max_error_ppm")),
            _e(c.get("found_by") or "-"),
            _e(_notes(c)),
        ])
    table = _table(["rank", "structure", "SMILES", "probability", "score", "MAE / ppm", "max / ppm", "found by",
                    "notes"],
                   rows, {0, 3, 4, 5, 6}, "Ranked candidates, best first", cls="ranked", cell_cls={1: "pic"})
    not_listed = (f"chance that the answer is none of these: <strong>{_f(unlisted, 2)}</strong>"
                  if unlisted is not None else "chance that the answer is none of these: not recorded in this result")
    key = ('<ul class="key">'
           "<li><strong>Score</strong>: calibrated misfit of the predicted against the observed shifts plus a "
           "rarity cost for unusual atom environments; lower is better.</li>"
           "<li><strong>Probability</strong>: chance that this structure is the answer, given that the answer "
           "is listed. <strong>MAE / max</strong>: mean and largest shift deviation.</li>"
           "<li><strong>Found by</strong>: the search strategy that reached the structure (see the search "
           "section for what each proves).</li>"
           f"<li><strong>Not listed</strong>: {not_listed} (see the search section).</li></ul>")
    return table + key


def _next_measurements(data: dict) -> str:
    """Table of the measurements that would best separate the top candidates."""
    rows = data.get("next_measurements") or []
    if not rows:
        return ""
    body = []
    for r in rows:
        if r["experiment"] in ("HMBC", "COSY"):
            outcome = (f"expected in rank {', '.join(map(str, r['expected_in']))}; "
                       f"not in rank {', '.join(map(str, r['not_in']))}")
        else:
            outcome = "; ".join(f"rank {k + 1}: {v}" for k, v in enumerate(r.get("by_rank") or []))
        body.append([_e(r["experiment"]), _e(" / ".join(str(x) for x in r["lines"])),
                     _e(" / ".join(f"{x:g}" for x in r["shifts"])), _e(outcome), _f(r["value"], 3)])
    return ("<h3>What to measure next</h3>"
            + _table(["experiment", "lines", "13C / ppm", "outcome by candidate", "separates"], body, {4},
                     "Measurements whose expected outcome differs among the top candidates, best first "
                     "(separates: the probability that two candidates drawn by their probabilities are told "
                     "apart)"))


def _candidate(c: dict, peaks: list[dict]) -> str:
    rank = _e(c.get("rank"))
    assignment = c.get("assignment") or []
    out = [f'<section class="cand" id="cand-{rank}"><h3>Candidate {rank}: '
           f'<span class="smiles">{_e(c["smiles"])}</span></h3>']
    facts = [("probability", _f(c.get("probability"), 3)), ("score", _f(c.get("score"), 3)),
             ("MAE", _f(c.get("mae_ppm")) + " ppm"), ("max deviation", _f(c.get("max_error_ppm")) + " ppm")]
    if c.get("prior_cost") is not None:
        facts.insert(2, ("rarity cost", _f(c.get("prior_cost"), 2)))
    if c.get("plausibility_cost") is not None:
        facts.insert(3, ("plausibility cost", _f(c.get("plausibility_cost"), 2)))
    out.append("<p>" + " &middot; ".join(f"{k} <strong>{v}</strong>" for k, v in facts) + "</p>")
    notes = _notes(c)
    if notes:
        out.append(f'<p class="status-cut">Note: {_e(notes)}.</p>')
    checks = c.get("correlations") or []
    drawn = [(ch["atoms"][0], ch["atoms"][1], ch["status"]) for ch in checks
             if ch.get("experiment") == "HMBC" and ch.get("atoms")]
    out.append('<div class="figs"><figure>')
    out.append(depiction_svg(c["smiles"], arrows=drawn))
    caption = "Structure; carbons numbered by their position in the SMILES."
    if drawn:
        caption += (" Curved arrows: HMBC, from the carbon carrying the proton to the correlated carbon; "
                    "solid green met (2-3 bonds), dashed orange long range (4 bonds), dotted red not met.")
    out.append(f"<figcaption>{caption}</figcaption></figure><figure>")
    out.append(stick_spectrum_svg(peaks, assignment, title=f"candidate {c.get('rank')}: observed and "
                                  "predicted 13C lines"))
    out.append('<figcaption class="legend"><span class="key-obs">&#9650; observed lines (numbers = line)</span>'
               '<span class="key-pred">&#9660; predicted classes</span>'
               "<span>dashed grey: assigned pairs</span></figcaption></figure></div>")
    rows = _assignment_rows(assignment, peaks, c.get("unfilled_lines") or [])
    out.append(_table(["line", "observed / ppm", "predicted / ppm", "diff / ppm", "carbons", "note"], rows,
                      {0, 1, 2, 3}, f"Assignment of the observed lines to the carbons of candidate {rank}"))
    if checks:
        rows = [[_e(ch["row"]), _e(ch["experiment"]), _f(ch["h_shift"]), _f(ch["other_shift"]),
                 _e(ch["status"]), "no path" if ch["bonds"] is None else _e(ch["bonds"]),
                 "" if not ch.get("atoms") else f"C{ch['atoms'][0] + 1} / C{ch['atoms'][1] + 1}"
                 if ch["experiment"] != "HSQC" else f"C{ch['atoms'][0] + 1}"]
                for ch in checks]
        out.append(_table(["row", "experiment", "1H / ppm", "13C or 1H / ppm", "status", "bonds", "carbons"],
                          rows, {0, 2, 3, 5}, f"2D correlations checked on candidate {rank} (bonds: proton to "
                          "carbon; COSY proton to proton)"))
    preds = c.get("predicted_shifts") or []
    if preds:
        rows = [[f"C{p['atom'] + 1}", _e(p.get("hydrogens")), _f(p.get("shift")), _f(p.get("sigma"))]
                for p in preds]
        out.append(_table(["carbon", "H", "predicted / ppm", "\u00b1 / ppm"], rows, {1, 2, 3},
                          "Predicted shift and its uncertainty for every carbon"))
    out.append("</section>")
    return "".join(out)


def _identification(data: dict) -> str:
    """Sample ID, date and time of the run, versions, and the sign-off block.

    The sign-off lines (name, signature, date) are always there for the
    analyst and the reviewer; names given at the run are printed in them.
    """
    run = data.get("run") if isinstance(data.get("run"), dict) else {}
    missing = "not recorded in this result"
    stamp = run.get("timestamp_utc")
    facts = [
        ("Sample ID", _e(run.get("sample_id")) if run.get("sample_id") else ("not given" if run else missing)),
        ("Date and time of the run", f"{_e(stamp)} (UTC)" if stamp else missing),
        ("Software", f"elucidate {_e(run['elucidate_version'])}" if run.get("elucidate_version") else missing),
        ("Shift table", (f"{_e(run['shift_table_version'])} (build date + training-data checksum)"
                         if run.get("shift_table_version") else missing)),
        ("Shift predictor", _e(run["shift_predictor"]) if run.get("shift_predictor") else missing),
    ]
    dl = ('<dl class="facts">' + "".join(f"<dt>{k}</dt><dd>{v}</dd>" for k, v in facts) + "</dl>")
    rows = []
    for role, key in (("Analyst", "analyst"), ("Reviewer", "reviewer")):
        name = run.get(key)
        rows.append(f'<tr><th scope="row">{role}</th><td class="line">{_e(name) if name else "&nbsp;"}</td>'
                    '<td class="line">&nbsp;</td><td class="line">&nbsp;</td></tr>')
    signoff = ('<table class="signoff"><caption>Sign-off</caption><thead><tr><th scope="col">role</th>'
               '<th scope="col">name</th><th scope="col">signature</th><th scope="col">date</th></tr></thead>'
               "<tbody>" + "".join(rows) + "</tbody></table>")
    return f'<section class="ident" aria-label="sample, run and sign-off">{dl}{signoff}</section>'


def _sample(data: dict) -> str:
    """The ``sample`` block a batch run adds (id, row, status ...), if any."""
    sample = data.get("sample")
    if not isinstance(sample, dict):
        return ""
    rows = [(k, v) for k, v in sample.items()
            if k != "fingerprint" and v not in (None, "") and not isinstance(v, (dict, list))]
    if not rows:
        return ""
    return ('<h2>Batch sample</h2><dl class="facts">'
            + "".join(f"<dt>{_e(k)}</dt><dd>{_e(v)}</dd>" for k, v in rows) + "</dl>")


def _assignment_rows(assignment: list[dict], peaks: list[dict], unfilled=()) -> list[list[str]]:
    rows = []
    for e in sorted(assignment, key=lambda e: (e.get("peak_index", 0), tuple(e.get("atoms") or ()))):
        obs, prd = e.get("observed"), e.get("predicted")
        diff = (float(prd) - float(obs)) if obs is not None and prd is not None else None
        note = [] if e.get("kind") in (None, "primary") else [str(e["kind"])]
        if e.get("flag"):
            note.append(str(e["flag"]))
        rows.append([
            _e((e.get("peak_index") or 0) + 1), _f(obs), _f(prd),
            ("\u2013" if diff is None else f"{diff:+.2f}"),
            _e(", ".join(f"C{a + 1}" for a in e.get("atoms") or [])), _e("; ".join(note)),
        ])
    for i in unfilled or []:
        shift = peaks[i].get("shift") if 0 <= i < len(peaks) else None
        rows.append([_e(i + 1), _f(shift), "\u2013", "\u2013", "none", "unexplained line"])
    return rows


def _render_check(data: dict, title: str | None, footer: str) -> str:
    """Page for a check result: one expected structure against the lines."""
    peaks = data.get("peaks") or []
    title = title or f"elucidate check report: {data['smiles']}"
    fit = data.get("fit") or {}
    verdict = str(data.get("verdict") or "not recorded")
    body = [
        f"<h1>{_e(title)}</h1>",
        f'<p class="sub">Does the expected structure {_e(data["smiles"])} ({_e(data["formula"])}) explain '
        "the observed 13C lines? The verdict is a hypothesis, not an identification.</p>",
        _identification(data),
        f'<div class="caution" role="note"><strong>Caution.</strong> {_e(data.get("caution") or _DEFAULT_CAUTION)}'
        "</div>",
        _sample(data),
        f"<h2>Verdict: {_e(verdict)}</h2>",
    ]
    reasons = data.get("reasons") or []
    if reasons:
        body.append("<ul>" + "".join(f"<li>{_e(r)}</li>" for r in reasons) + "</ul>")
    labels = {"mae_ppm": "MAE / ppm", "max_error_ppm": "largest deviation / ppm",
              "gross_deviations": "gross deviations", "unexplained_lines": "unexplained lines",
              "carbons_without_own_line": "carbons without a line of their own"}
    facts = [(labels[k], _f(fit[k]) if k.endswith("ppm") else _e(fit[k])) for k in labels if k in fit]
    if facts:
        body.append('<dl class="facts">' + "".join(f"<dt>{_e(k)}</dt><dd>{v}</dd>" for k, v in facts) + "</dl>")
    body.append('<div class="figs"><figure>' + depiction_svg(data["smiles"])
                + "<figcaption>Expected structure; carbons numbered by their position in the SMILES."
                "</figcaption></figure><figure>"
                + stick_spectrum_svg(peaks, data["assignment"], title="expected structure: observed and "
                                     "predicted 13C lines")
                + '<figcaption class="legend"><span class="key-obs">&#9650; observed lines</span>'
                '<span class="key-pred">&#9660; predicted classes</span><span>dashed grey: assigned pairs'
                "</span></figcaption></figure></div>")
    body.append(_table(["line", "observed / ppm", "predicted / ppm", "diff / ppm", "carbons", "note"],
                       _assignment_rows(data["assignment"], peaks), {0, 1, 2, 3},
                       "Assignment of the observed lines to the carbons of the expected structure"))
    alts = data.get("alternatives") or []
    body.append("<h2>Isomers that fit better</h2>")
    if alts:
        rows = [[_e(a.get("rank")), f'<span class="smiles">{_e(a.get("smiles"))}</span>', _f(a.get("mae_ppm")),
                 _f(a.get("max_error_ppm")), _f(a.get("pairwise_probability"), 3),
                 "yes" if a.get("clearly_better") else "no"] for a in alts]
        body.append(_table(["rank", "SMILES", "MAE / ppm", "max / ppm", "pairwise probability",
                            "clearly better"], rows, {0, 2, 3, 4}))
    else:
        body.append("<p>None found among the isomers searched.</p>")
    search = data.get("search") or {}
    if search.get("complete") is True:
        body.append('<p class="status-ok">The isomer search was exhaustive under its constraints.</p>')
    elif search.get("complete") is False:
        body.append('<p class="status-cut">The isomer search was cut short: better-fitting isomers may '
                    "exist that are not listed.</p>")
    stages = search.get("stages") or []
    if stages:
        rows = [[_e(st.get("stage")), _e(st.get("ranked")), "yes" if st.get("complete") else "no",
                 _f(st.get("seconds"), 1)] for st in stages]
        body.append(_table(["stage", "structures ranked", "complete", "seconds"], rows, {1, 3},
                           "Isomer search stages"))
    body.append("<h2>Inputs</h2>" + _inputs(data) + _search_warnings(data))
    return _page(title, body, footer)


def _empty(data: dict) -> str:
    """Why no candidate is shown, without blaming the data for a search that ran out of time."""
    comp = data.get("completeness") if isinstance(data.get("completeness"), dict) else {}
    if comp.get("status") == "complete":
        return ("<p>No structure fits the constraints: the search was exhaustive under the assumptions "
                "listed under Search.</p>")
    return ("<p>No structure was found before the search stopped; this does not mean that none fits "
            "(see Search).</p>")


def _neighbours(data: dict) -> str:
    neighbours = data.get("reference_neighbours") or []
    if not neighbours:
        return ""
    from .neighbours import render_neighbours_html

    return render_neighbours_html(neighbours)


def _search_warnings(data: dict) -> str:
    warnings = data.get("warnings") or []
    if not warnings:
        return ""
    return '<h3>Warnings</h3><ul class="warn">' + "".join(f"<li>{_e(w)}</li>" for w in warnings) + "</ul>"


_ORIGINS = ("run", "file")


def _footer(data: dict, origin: str | None, saved_file: str | None) -> str:
    """Says truthfully how this page was made: straight from a run, or re-rendered from a saved file."""
    from pathlib import PurePath

    from .. import __version__

    run = data.get("run") if isinstance(data.get("run"), dict) else {}
    if origin == "run":
        how = f"Rendered by elucidate {_e(__version__)} directly from this run's result"
    elif origin == "file":
        name = f" <code>{_e(PurePath(saved_file).name)}</code>" if saved_file else ""
        how = (f"Re-rendered by elucidate {_e(__version__)} from the saved result file{name}, without "
               "solving again")
        if run.get("timestamp_utc") or run.get("elucidate_version"):
            made = " ".join(x for x in (
                f"with elucidate {_e(run['elucidate_version'])}" if run.get("elucidate_version") else "",
                f"on {_e(run['timestamp_utc'])}" if run.get("timestamp_utc") else "") if x)
            how += f" (the run was made {made})"
    else:
        how = f"Rendered by elucidate {_e(__version__)} from result data"
    return f"<footer>{how}; structure pictures drawn with RDKit.</footer>"


def _page(title: str, body: list[str], footer: str) -> str:
    body = body + [
        '<h2>Before acting on this report</h2><div class="caution" role="note"><ul>'
        "<li>These are hypotheses ranked by agreement between predicted and observed 13C shifts, "
        "not identifications. A top rank means the structure fits best among those searched.</li>"
        "<li>Confirm with a reference standard and orthogonal methods (MS/MS, 1H and 2D NMR, IR, "
        "chromatographic co-injection).</li>"
        "<li>Forensic and QC decisions follow the laboratory's accredited procedures and local "
        "regulations, never this report alone.</li>"
        "<li>An incomplete search may miss the right structure; the probabilities are calibrated "
        "estimates from held-out training compounds, not guarantees, and the chance that the answer "
        "is not listed is stated with the search.</li></ul></div>",
        footer,
    ]
    return (
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
        f'<meta http-equiv="Content-Security-Policy" content="{_CSP}">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{_e(title)}</title><style>{_CSS}</style></head>\n<body>\n"
        + "\n".join(b for b in body if b)
        + "\n</body></html>\n"
    )


def render_html(data: dict, *, top: int | None = None, title: str | None = None, origin: str | None = None,
                saved_file: str | None = None) -> str:
    """Render the plain-data result as one self-contained HTML page.

    Parameters
    ----------
    data : dict
        A serialised solve result (see :mod:`elucidate.report.serialize`);
        optional keys are shown when present (``run``, ``peaks_provenance``,
        ``observe_mhz``, ``spectrum_trace``, ``settings``, ``warnings``, a
        batch run's ``sample`` block ...).  A check-workflow result (``"workflow":
        "check"``) gets a page of its own: verdict, reasons, the expected
        structure with its stick spectrum and assignment, better-fitting
        isomers and the search stages.
    top : int, optional
        Show only the first ``top`` candidates (default: all in ``data``).
    title : str, optional
        Page title (default names the formula).
    origin : {"run", "file"}, optional
        How the page is made, for its footer: ``"run"`` straight after the
        run (``solve --format html``), ``"file"`` re-rendered from a saved
        result (``elucidate report``; name it with ``saved_file``).  Without
        it the footer only says the page was rendered from result data.
    saved_file : str, optional
        The saved result file (its name, without folders, goes into the footer).

    Returns
    -------
    str
        The HTML document (UTF-8 text), identical for identical input.

    Raises
    ------
    InputError
        When ``data`` is not a solve or check result, ``top`` is not a
        positive integer or ``origin`` is unknown.
    """
    check_result_data(data)
    if top is not None and (isinstance(top, bool) or not isinstance(top, int) or top < 1):
        raise InputError(f"top must be a positive integer, got {top!r}")
    if origin is not None and origin not in _ORIGINS:
        raise InputError(f"origin must be 'run' or 'file', got {origin!r}")
    footer = _footer(data, origin, saved_file)
    if data.get("workflow") == "check":
        return _render_check(data, title, footer)
    cands = data["candidates"][:top] if top else list(data["candidates"])
    peaks = data.get("peaks") or []
    caution = data.get("caution") or _DEFAULT_CAUTION
    title = title or f"elucidate report: {data['formula']}"
    body = [
        f"<h1>{_e(title)}</h1>",
        f'<p class="sub">Candidate structures for {_e(data["formula"])} from its 13C NMR lines: '
        "hypotheses for a chemist to test, not identifications.</p>",
        _identification(data),
        f'<div class="caution" role="note"><strong>Caution.</strong> {_e(caution)}</div>',
        _sample(data),
        "<h2>Ranked candidates</h2>",
        (_summary(cands, data.get("unlisted_probability")) if cands else _empty(data)),
        _next_measurements(data),
        _neighbours(data),
        "<h2>Inputs</h2>",
        _inputs(data),
        "<h2>Search</h2>",
        _search(data),
    ]
    if cands:
        body.append("<h2>Candidates in detail</h2>")
        body.append("<p>Atom numbers are 1-based positions in each SMILES as written (the molfile "
                    "numbering of the SDF export). The stick spectra run from high to low chemical shift.</p>")
        body += [_candidate(c, peaks) for c in cands]
    return _page(title, body, footer)
