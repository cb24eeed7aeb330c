"""SDF export of ranked candidates, with NMReDATA tags where they fit.

Each candidate becomes one molfile record (V2000, 2D coordinates from
RDKit's ``Compute2DCoords``, heavy atoms only, atom *n* of the molfile is
atom *n - 1* of the candidate SMILES as written) followed by data items.
The export reads only the plain-data result of
:func:`elucidate.report.serialize.result_to_dict`; no science is redone.

NMReDATA tags (Pupier et al., Magn. Reson. Chem. 2018, 56, 703; tag syntax
from memory): every line of a tag's value ends with a backslash, fields are
separated by commas, atom numbers refer to the molfile (1-based).

``NMREDATA_VERSION``
    ``1.1``.
``NMREDATA_FORMULA``, ``NMREDATA_SMILES``, ``NMREDATA_SOLVENT``
    The molecular formula, the candidate SMILES and the solvent (when given).
``NMREDATA_ASSIGNMENT``
    One line per observed line and carbon class placed under it:
    ``label, observed shift, atom, atom ...`` with labels ``s<line>``
    (``s3`` = third observed line); a class split over two lines appears
    under both.  The assignment is the hypothesis of this candidate.
``NMREDATA_1D_13C``
    ``Larmor=<MHz>`` when the observe frequency is known, then one line per
    observed line ``shift, L=label`` (plus ``S=`` the DEPT multiplicity as
    ``s``/``d``/``t``/``q`` when known).

Properties that NMReDATA has no tag for use an ``ELUCIDATE_`` prefix:
``ELUCIDATE_RANK``, ``ELUCIDATE_SCORE``, ``ELUCIDATE_PROBABILITY``,
``ELUCIDATE_MAE_PPM``, ``ELUCIDATE_MAX_ERROR_PPM``,
``ELUCIDATE_SEARCH_COMPLETE``, ``ELUCIDATE_UNLISTED_PROBABILITY`` (calibrated
chance that the answer is none of the listed structures; the same in every
record), ``ELUCIDATE_PREDICTED_13C`` (one line per
carbon: ``atom, hydrogens, predicted shift, uncertainty``) and
``ELUCIDATE_CAUTION``.  Missing numbers are written as ``nan``.
"""

from __future__ import annotations

import io
import math

from ..errors import InputError
from .html import check_result_data

__all__ = ["render_sdf", "NMREDATA_VERSION"]

NMREDATA_VERSION = "1.1"
_MULT_LETTER = {"C": "s", "CH": "d", "CH2": "t", "CH3": "q"}


def _num(x, nd: int) -> str:
    if x is None:
        return "nan"
    try:
        v = float(x)
    except (TypeError, ValueError):
        return "nan"
    return f"{v:.{nd}f}" if math.isfinite(v) else "nan"


def _lines(rows: list[str]) -> str:
    return "\n".join(r + "\\" for r in rows)


def render_sdf(data: dict, *, top: int | None = None) -> str:
    """Write the candidates of a serialised result as SD file text.

    Parameters
    ----------
    data : dict
        A serialised solve result (see :mod:`elucidate.report.serialize`).
    top : int, optional
        Export only the first ``top`` candidates (default: all).

    Returns
    -------
    str
        SD file text, one record per candidate, best first; an empty string
        when there is no candidate.

    Raises
    ------
    InputError
        When ``data`` is not a solve result, a SMILES cannot be read or an
        assignment names an atom that does not exist.
    """
    from rdkit import Chem
    from rdkit.Chem import rdDepictor

    check_result_data(data)
    if "candidates" not in data:
        raise InputError("the SDF export takes a solve result (with 'candidates'); give the JSON written by "
                         "'elucidate solve --format json'")
    if top is not None and (isinstance(top, bool) or not isinstance(top, int) or top < 1):
        raise InputError(f"top must be a positive integer, got {top!r}")
    cands = data["candidates"][:top] if top else data["candidates"]
    peaks = data.get("peaks") or []
    solvent = (data.get("settings") or {}).get("solvent")
    caution = data.get("caution") or ""

    spectrum = []
    if data.get("observe_mhz"):
        spectrum.append(f"Larmor={float(data['observe_mhz']):g}")
    for i, p in enumerate(peaks):
        fields = [_num(p.get("shift"), 2)]
        letter = _MULT_LETTER.get(p.get("mult") or "")
        if letter:
            fields.append(f"S={letter}")
        fields.append(f"L=s{i + 1}")
        spectrum.append(", ".join(fields))

    buf = io.StringIO()
    writer = Chem.SDWriter(buf)
    writer.SetForceV3000(False)
    for c in cands:
        mol = Chem.MolFromSmiles(c["smiles"])
        if mol is None:
            raise InputError(f"cannot read candidate SMILES {c['smiles']!r}; the result file may be damaged")
        n = mol.GetNumAtoms()
        rdDepictor.Compute2DCoords(mol)
        mol.SetProp("_Name", f"elucidate candidate {c.get('rank', '')} (hypothesis)")
        assignment = []
        for e in sorted(c.get("assignment") or [], key=lambda e: (e.get("peak_index", 0), e.get("atoms"))):
            atoms = list(e.get("atoms") or [])
            if any(not isinstance(a, int) or not 0 <= a < n for a in atoms):
                raise InputError(
                    f"candidate {c.get('rank')} assigns atoms {atoms} but {c['smiles']} has {n} atoms; "
                    "the result file may be damaged"
                )
            assignment.append(", ".join([f"s{e['peak_index'] + 1}", _num(e.get("observed"), 2)]
                                        + [str(a + 1) for a in atoms]))
        predicted = [
            ", ".join([str(p["atom"] + 1), str(p.get("hydrogens", "")), _num(p.get("shift"), 2),
                       _num(p.get("sigma"), 2)])
            for p in c.get("predicted_shifts") or []
        ]
        props = [
            ("NMREDATA_VERSION", NMREDATA_VERSION),
            ("NMREDATA_FORMULA", str(data["formula"])),
            ("NMREDATA_SMILES", c["smiles"]),
        ]
        if solvent:
            props.append(("NMREDATA_SOLVENT", str(solvent)))
        if assignment:
            props.append(("NMREDATA_ASSIGNMENT", _lines(assignment)))
        if spectrum:
            props.append(("NMREDATA_1D_13C", _lines(spectrum)))
        props += [
            ("ELUCIDATE_RANK", str(c.get("rank", ""))),
            ("ELUCIDATE_SCORE", _num(c.get("score"), 4)),
            ("ELUCIDATE_PROBABILITY", _num(c.get("probability"), 4)),
            ("ELUCIDATE_MAE_PPM", _num(c.get("mae_ppm"), 2)),
            ("ELUCIDATE_MAX_ERROR_PPM", _num(c.get("max_error_ppm"), 2)),
        ]
        if c.get("set_aside"):
            props.append(("ELUCIDATE_SET_ASIDE", str(c["set_aside"])))
        if "complete" in data:
            props.append(("ELUCIDATE_SEARCH_COMPLETE", "yes" if data["complete"] else "no"))
        if data.get("unlisted_probability") is not None:
            props.append(("ELUCIDATE_UNLISTED_PROBABILITY", _num(data["unlisted_probability"], 4)))
        if predicted:
            props.append(("ELUCIDATE_PREDICTED_13C", _lines(predicted)))
        if caution:
            props.append(("ELUCIDATE_CAUTION", caution))
        for key, value in props:
            mol.SetProp(key, value)
        writer.write(mol)
    writer.close()
    return buf.getvalue()
