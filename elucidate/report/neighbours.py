"""Text and HTML blocks listing the reference spectra most similar to the sample's.

Input is plain data only: a list of neighbour dictionaries as written by
:meth:`elucidate.reference.ReferenceHit.to_dict` (or read back from a saved
JSON result), with the keys ``smiles``, ``formula``, ``similarity``,
``matched_lines`` and optionally ``query_lines``, ``reference_lines``,
``mean_deviation_ppm``, ``same_formula``, ``source``, ``origin``,
``solvent``, ``spectra``.  Nothing is recomputed; the HTML block draws each
structure with :func:`elucidate.report.html.depiction_svg`.

Neighbours are context: a similar reference spectrum points at similar
structural features, it does not identify the sample.
"""

from __future__ import annotations

import html
import math

from ..errors import InputError
from .html import depiction_svg

__all__ = ["render_neighbours_text", "render_neighbours_html", "NEIGHBOURS_NOTE", "NMRSHIFTDB2_CREDIT"]

#: One sentence on what the similarity means and what it does not.
NEIGHBOURS_NOTE = (
    "Similarity: share of the lines of the larger spectrum with a close partner in the other "
    "(multiplicities respected where both are known; full weight at equal shift, none at 4 ppm or more). "
    "A similar reference spectrum points at similar structural features; it does not identify the sample: "
    "confirm any structure with reference standards and orthogonal methods."
)

#: Credit line shown whenever a neighbour comes from the shipped index.
NMRSHIFTDB2_CREDIT = (
    "Reference spectra marked nmrshiftdb2 come from the open nmrshiftdb2 database (Steinbeck, Krause, Kuhn, "
    "J. Chem. Inf. Comput. Sci. 2003, 43, 1733; open content, see docs/reference-library.md for the terms)."
)


def _check(neighbours) -> list[dict]:
    if not isinstance(neighbours, (list, tuple)):
        raise InputError("neighbours must be a list of objects with smiles, formula and similarity")
    for k, n in enumerate(neighbours, start=1):
        if not isinstance(n, dict) or not isinstance(n.get("smiles"), str) or not n["smiles"].strip():
            raise InputError(f"neighbour {k}: expected an object with a 'smiles' text; the result file "
                             "may be damaged")
    return list(neighbours)


def _num(x, nd: int) -> str:
    if isinstance(x, bool) or not isinstance(x, (int, float)) or not math.isfinite(x):
        return "\u2013"
    return f"{x:.{nd}f}"


def _lines(n: dict) -> str:
    m = n.get("matched_lines")
    if not isinstance(m, int) or isinstance(m, bool):
        return "\u2013"
    q, r = n.get("query_lines"), n.get("reference_lines")
    if isinstance(q, int) and isinstance(r, int):
        return f"{m} of {q}/{r}"
    return str(m)


def _source(n: dict) -> str:
    src = n.get("source") or " ".join(str(x) for x in (n.get("origin"), n.get("source_id")) if x)
    extra = []
    if n.get("solvent"):
        extra.append(str(n["solvent"]))
    spectra = n.get("spectra")
    if isinstance(spectra, int) and spectra > 1:
        extra.append(f"best of {spectra} spectra")
    return str(src or "\u2013") + (f" ({'; '.join(extra)})" if extra else "")


def _formula(n: dict) -> str:
    f = str(n.get("formula") or "\u2013")
    return f + (" =" if n.get("same_formula") is True else "")


def _credit_needed(neighbours: list[dict]) -> bool:
    return any("nmrshiftdb2" in str(n.get("origin") or n.get("source") or "") for n in neighbours)


def render_neighbours_text(neighbours, *, heading: str = "Reference spectra most similar to the sample's") -> str:
    """A plain-text block: two lines per neighbour, then what the numbers mean.

    Parameters
    ----------
    neighbours : list of dict
        Best first (as returned by the query).
    heading : str
        First line of the block.

    Returns
    -------
    str
        Lines ending in a newline: per neighbour a row (rank, similarity,
        matched lines, mean deviation, formula, SMILES; ``=`` after the
        formula marks the sample's formula) and an indented source line.

    Examples
    --------
    >>> print(render_neighbours_text([{"smiles": "CCOC(C)=O", "formula": "C4H8O2", "similarity": 0.93,
    ...        "matched_lines": 4, "query_lines": 4, "reference_lines": 4, "mean_deviation_ppm": 0.4,
    ...        "same_formula": True, "source": "QC-lab refs ST-0042", "solvent": "CDCl3"}]))
    Reference spectra most similar to the sample's
       #  simil.  lines      dev/ppm  formula    SMILES
       1   0.930  4 of 4/4      0.40  C4H8O2 =   CCOC(C)=O
                  source: QC-lab refs ST-0042 (CDCl3)
    ...
    """
    items = _check(neighbours)
    out = [heading]
    if not items:
        out.append("  none above the similarity threshold")
        return "\n".join(out) + "\n"
    fw = max(9, max(len(_formula(n)) for n in items))
    out.append(f"{'#':>4}  {'simil.':>6}  {'lines':<9}  {'dev/ppm':>7}  {'formula':<{fw}}  SMILES")
    for k, n in enumerate(items, start=1):
        out.append(f"{k:>4}  {_num(n.get('similarity'), 3):>6}  {_lines(n):<9}  "
                   f"{_num(n.get('mean_deviation_ppm'), 2):>7}  {_formula(n):<{fw}}  {n['smiles']}")
        out.append(f"{'':14}source: {_source(n)}")
    out.append("  lines: matched of sample/reference lines; dev: mean shift difference of the matched lines; "
               "'=': the sample's formula.")
    out.append("  " + NEIGHBOURS_NOTE)
    if _credit_needed(items):
        out.append("  " + NMRSHIFTDB2_CREDIT)
    return "\n".join(out) + "\n"


def render_neighbours_html(neighbours, *, heading: str = "Similar reference spectra", level: int = 2,
                           width: int = 200, height: int = 150) -> str:
    """An HTML fragment (a ``<section>``) with a table of neighbours and small structure drawings.

    Parameters
    ----------
    neighbours : list of dict
        Best first.
    heading : str
        Section title.
    level : int
        Heading level (2 = ``<h2>``).
    width, height : int
        Size of each structure drawing in pixels.

    Returns
    -------
    str
        Self-contained markup (inline SVG, no scripts, no external links),
        to be placed inside the report page.
    """
    items = _check(neighbours)
    if not isinstance(level, int) or not 1 <= level <= 6:
        raise InputError(f"level={level!r}: give a heading level from 1 to 6")
    e = html.escape
    out = [f'<section class="neighbours"><h{level}>{e(heading)}</h{level}>']
    if not items:
        out.append("<p>No reference spectrum above the similarity threshold.</p></section>")
        return "".join(out)
    out.append("<table><caption>Reference compounds whose 13C spectra resemble the sample&rsquo;s, most "
               "similar first. Context for interpretation, not identifications.</caption><thead><tr>"
               '<th scope="col" class="num">#</th><th scope="col">structure</th>'
               '<th scope="col" class="num">similarity</th><th scope="col">matched lines</th>'
               '<th scope="col" class="num">mean dev. / ppm</th><th scope="col">formula</th>'
               '<th scope="col">source</th></tr></thead><tbody>')
    for k, n in enumerate(items, start=1):
        smiles = n["smiles"]
        try:
            pic = depiction_svg(smiles, width=width, height=height, numbered=False, css_class="neighbour")
        except InputError:
            pic = "<em>structure not drawable</em>"
        formula = e(str(n.get("formula") or "\u2013"))
        if n.get("same_formula") is True:
            formula += " <small>(same as the sample)</small>"
        out.append(
            f'<tr><td class="num">{k}</td><td>{pic}<br><span class="smiles">{e(smiles)}</span></td>'
            f'<td class="num">{_num(n.get("similarity"), 3)}</td><td>{e(_lines(n))}</td>'
            f'<td class="num">{_num(n.get("mean_deviation_ppm"), 2)}</td><td>{formula}</td>'
            f"<td>{e(_source(n))}</td></tr>"
        )
    out.append("</tbody></table>")
    out.append(f"<p><small>Matched lines: matched of sample/reference lines. {e(NEIGHBOURS_NOTE)}")
    if _credit_needed(items):
        out.append(" " + e(NMRSHIFTDB2_CREDIT))
    out.append("</small></p></section>")
    return "".join(out)
