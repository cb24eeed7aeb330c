"""A laboratory's own reference library: SD files and JSON lines into a ReferenceIndex.

Two file layouts are read (details and examples in docs/reference-library.md):

**SD file** (``.sdf``, ``.sd``, optionally ``.gz``): one molfile record per
reference compound; the 13C spectrum in one of three data items (the first
present wins, in this order):

``13C_SHIFTS``
    Assigned shifts, one line per line of the spectrum: the molfile atom
    numbers (1-based, comma-separated) of the carbons under the line, then
    the shift in ppm, e.g. ``2,6 128.4``.  Every carbon must be listed; the
    multiplicity comes from the structure.
``NMREDATA_1D_13C`` (with ``NMREDATA_ASSIGNMENT``)
    The NMReDATA tags (Pupier et al., *Magn. Reson. Chem.* 2018, 56, 703 —
    tag syntax from memory) as :mod:`elucidate.report.sdf` writes them:
    signal lines ``shift, L=label[, S=s|d|t|q][, N=count]``, assignment lines
    ``label, shift, atom, atom ...``.  A labelled signal takes its carbons
    (and so its multiplicity) from the assignment; an unlabelled one its
    multiplicity from ``S=`` and its count from ``N=``.
``13C_PEAKS``
    An unassigned peak list in elucidate's peak syntax, one line per peak:
    ``shift [C|CH|CH2|CH3|?] [count]``.

Optional items: ``ID`` (or ``SOURCE_ID``) for the record's identifier
(default: the title line, else ``record N``), ``SOLVENT`` (or
``NMREDATA_SOLVENT``; ``unknown`` counts as no label).

**JSON lines** (``.jsonl``, ``.ndjson``, optionally ``.gz``): one object per
line as in the nmrshiftdb2 training file, ``{"smiles": ..., "shifts": [[ppm,
"CH2"], ...]}`` with optional ``formula`` (checked against the SMILES),
``source_id`` (or ``id``), ``solvent``; a shift item may carry a third field,
the carbons under the line (default 1); the multiplicity may be ``null`` or
``"?"`` when unknown.

Every record is checked: the structure parses, shifts are numbers within
-50...300 ppm, multiplicities are known tokens, and the spectrum does not
claim more carbons (of each multiplicity) than the structure has.  The
first bad record stops the load with one :class:`~elucidate.errors.InputError`
line naming the file, the record and the problem.
"""

from __future__ import annotations

import gzip
import json
import math
import re
from pathlib import Path
from typing import Iterator

from ..errors import InputError
from ..spectrum.peaks import MULTIPLICITY_TOKENS, parse_peaks
from .index import ReferenceEntry, ReferenceIndex

__all__ = [
    "LIBRARY_SHIFT_RANGE",
    "SDF_SHIFTS_TAG",
    "SDF_PEAKS_TAG",
    "load_reference_library",
    "load_reference_libraries",
    "read_reference_entries",
    "read_jsonl_entries",
    "read_sdf_entries",
]

#: Shifts accepted in a library file (ppm).  Wider than the window for typed
#: peak lists so that carbene and metal-bound carbons fit (common practice,
#: no source).
LIBRARY_SHIFT_RANGE: tuple[float, float] = (-50.0, 300.0)

#: SD data item with assigned shifts (``atoms shift`` per line).
SDF_SHIFTS_TAG = "13C_SHIFTS"
#: SD data item with an unassigned peak list (elucidate peak syntax).
SDF_PEAKS_TAG = "13C_PEAKS"

_SDF_SUFFIXES = (".sdf", ".sd", ".sdf.gz", ".sd.gz")
_JSONL_SUFFIXES = (".jsonl", ".ndjson", ".jsonl.gz", ".ndjson.gz")
_NAMES = {0: "C", 1: "CH", 2: "CH2", 3: "CH3"}
_NMREDATA_MULT = {"s": 0, "d": 1, "t": 2, "q": 3}


# ---------------------------------------------------------------------------
# shared checks
# ---------------------------------------------------------------------------

def _rdkit():
    from rdkit import Chem
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    return Chem, CalcMolFormula


def _quiet(parse, *args, **kwargs):
    """``parse(*args, **kwargs)`` with RDKit's log blocked for that call only
    (our error naming the record replaces its parser messages)."""
    from rdkit import rdBase

    with rdBase.BlockLogs():
        return parse(*args, **kwargs)


def _shift(value, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise InputError(f"{where}: shift {value!r} is not a number; give the shift in ppm")
    try:
        v = float(value)
    except ValueError:
        raise InputError(f"{where}: shift {value!r} is not a number; give the shift in ppm") from None
    lo, hi = LIBRARY_SHIFT_RANGE
    if not math.isfinite(v) or not lo <= v <= hi:
        raise InputError(f"{where}: shift {value!r} is outside {lo:g}...{hi:g} ppm; check for a typo")
    return v


def _mult(value, where: str) -> int | None:
    if value is None:
        return None
    if not isinstance(value, str) or value.strip().lower() not in MULTIPLICITY_TOKENS:
        raise InputError(f"{where}: multiplicity {value!r} is unknown; use C, CH, CH2, CH3 or ? (null)")
    return MULTIPLICITY_TOKENS[value.strip().lower()]


def _carbon_hydrogens(mol) -> dict[int, int]:
    """RDKit atom index -> attached hydrogens, for every carbon."""
    return {a.GetIdx(): a.GetTotalNumHs(includeNeighbors=True)
            for a in mol.GetAtoms() if a.GetSymbol() == "C"}


def _check_against_structure(lines, carbons: dict[int, int], where: str) -> None:
    """The lines may not claim more carbons (per multiplicity) than the structure has."""
    total = sum(c for _, _, c in lines)
    if total > len(carbons):
        raise InputError(f"{where}: the spectrum has {total} carbons but the structure only {len(carbons)}; "
                         "check the counts or the structure")
    have: dict[int, int] = {}
    for h in carbons.values():
        have[h] = have.get(h, 0) + 1
    claim: dict[int, int] = {}
    for _, h, c in lines:
        if h is not None:
            claim[h] = claim.get(h, 0) + c
    for h, n in sorted(claim.items()):
        if n > have.get(h, 0):
            raise InputError(f"{where}: {n} {_NAMES[h]} carbon(s) in the spectrum but {have.get(h, 0)} in the "
                             "structure; check the multiplicities or the structure")


def _merge_lines(raw) -> tuple[tuple[float, int | None, int], ...]:
    merged: dict[tuple[float, int | None], int] = {}
    for s, h, c in raw:
        key = (round(s, 2), h)
        merged[key] = merged.get(key, 0) + c
    return tuple(sorted(((s, h, c) for (s, h), c in merged.items()),
                        key=lambda t: (-t[0], 9 if t[1] is None else t[1])))


def _constitution(mol) -> str:
    Chem, _ = _rdkit()
    return Chem.MolToSmiles(Chem.RemoveHs(mol), isomericSmiles=False)


def _open_text(path: Path):
    try:
        if path.name.lower().endswith(".gz"):
            return gzip.open(path, "rt", encoding="utf-8")
        return open(path, "r", encoding="utf-8")
    except FileNotFoundError:
        raise InputError(f"reference library {str(path)!r} not found; check the path") from None
    except OSError as exc:
        raise InputError(f"cannot read reference library {str(path)!r}: {exc.strerror}") from None


def _solvent_label(text) -> str | None:
    """Solvent label with blanks tidied; empty, 'unknown' and 'none' mean no label."""
    label = " ".join(str(text or "").split())
    return None if label.lower() in ("", "unknown", "none", "null", "n/a") else label


def _source_text(value, where: str) -> str:
    if isinstance(value, bool) or not isinstance(value, (str, int)):
        raise InputError(f"{where}: source_id {value!r} must be text or an integer")
    text = " ".join(str(value).split())
    if not text:
        raise InputError(f"{where}: source_id is empty; give an identifier or leave it out")
    return text


# ---------------------------------------------------------------------------
# JSON lines
# ---------------------------------------------------------------------------

def read_jsonl_entries(path, *, origin: str | None = None, limit: int | None = None,
                       skip_empty: bool = False) -> Iterator[ReferenceEntry]:
    """Entries of a JSON-lines library (the layout of ``train_spectra.jsonl.gz``).

    Parameters
    ----------
    path : path-like
        ``.jsonl`` / ``.ndjson`` file, optionally gzip-compressed.
    origin : str, optional
        Library name written into each entry (default: the file name).
    limit : int, optional
        Read only the first ``limit`` records.
    skip_empty : bool
        Skip records with an empty ``shifts`` list (compounds without
        carbon in the training data) instead of rejecting them.

    Yields
    ------
    ReferenceEntry

    Raises
    ------
    InputError
        At the first bad record, naming its line number.
    """
    path = Path(path)
    origin = origin or path.name
    Chem, CalcMolFormula = _rdkit()
    n = 0
    with _open_text(path) as fh:
        try:
            for lineno, text in enumerate(fh, start=1):
                text = text.strip()
                if not text or text.startswith("#"):
                    continue
                if limit is not None and n >= limit:
                    break
                n += 1
                where = f"{path.name} line {lineno}"
                entry = _jsonl_entry(text, where, origin, lineno, Chem, CalcMolFormula, skip_empty)
                if entry is not None:
                    yield entry
        except UnicodeDecodeError:
            raise InputError(f"{path.name}: not UTF-8 text; save the library as UTF-8 JSON lines") from None
        except (OSError, EOFError) as exc:  # damaged gzip
            raise InputError(f"{path.name}: cannot read the file ({exc}); check that it is intact") from None


def _jsonl_entry(text, where, origin, lineno, Chem, CalcMolFormula, skip_empty=False):
    try:
        obj = json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(f"{where}: not valid JSON ({exc.msg}); write one JSON object per line") from None
    if not isinstance(obj, dict):
        raise InputError(f"{where}: expected a JSON object with smiles and shifts, got {type(obj).__name__}")
    smiles = obj.get("smiles")
    if not isinstance(smiles, str) or not smiles.strip():
        raise InputError(f"{where}: no 'smiles'; every record needs the structure as SMILES")
    mol = _quiet(Chem.MolFromSmiles, smiles)
    if mol is None:
        raise InputError(f"{where}: RDKit cannot read SMILES {smiles!r}; check the structure")
    formula = CalcMolFormula(mol)
    given = obj.get("formula")
    if given is not None:
        if not isinstance(given, str) or "".join(given.split()) != formula:
            raise InputError(f"{where}: formula {given!r} does not match the SMILES ({formula}); "
                             "fix one of them or leave the formula out")
    shifts = obj.get("shifts")
    if skip_empty and shifts == []:
        return None
    if not isinstance(shifts, list) or not shifts:
        raise InputError(f"{where}: 'shifts' must be a non-empty list such as [[128.4, \"CH\"], ...]")
    raw = []
    for k, item in enumerate(shifts, start=1):
        w = f"{where} shift {k}"
        if not isinstance(item, list) or not 2 <= len(item) <= 3:
            raise InputError(f"{w}: {item!r} must be [ppm, multiplicity] or [ppm, multiplicity, count]")
        count = 1
        if len(item) == 3:
            count = item[2]
            if isinstance(count, bool) or not isinstance(count, int) or count < 1:
                raise InputError(f"{w}: count {count!r} must be a positive integer")
        raw.append((_shift(item[0], w), _mult(item[1], w), count))
    lines = _merge_lines(raw)
    _check_against_structure(lines, _carbon_hydrogens(mol), where)
    source = obj.get("source_id", obj.get("id"))
    source = f"line {lineno}" if source is None else _source_text(source, where)
    solvent = obj.get("solvent")
    if solvent is not None and not isinstance(solvent, str):
        raise InputError(f"{where}: solvent {solvent!r} must be text or null")
    solvent = _solvent_label(solvent)
    return ReferenceEntry(smiles=Chem.MolToSmiles(mol, isomericSmiles=False), formula=formula, lines=lines,
                          source_id=source, origin=origin, solvent=solvent)


# ---------------------------------------------------------------------------
# SD files
# ---------------------------------------------------------------------------

_ITEM_HEADER = re.compile(r"^>.*<([^>]+)>")


def _sdf_records(fh) -> Iterator[tuple[int, int, str, dict[str, str]]]:
    """(record number, first line, molblock, data items) per record."""
    block: list[str] = []
    start = 1
    k = 0
    for lineno, line in enumerate(fh, start=1):
        line = line.rstrip("\r\n")
        if line.strip() == "$$$$":
            k += 1
            yield (k, start) + _split_record(block)
            block = []
            start = lineno + 1
        else:
            block.append(line)
    if any(x.strip() for x in block):
        k += 1
        yield (k, start) + _split_record(block)


def _split_record(lines: list[str]) -> tuple[str, dict[str, str]]:
    end = None
    for i, line in enumerate(lines):
        if line.strip() == "M  END":
            end = i
            break
    if end is None:
        return "\n".join(lines), {}
    items: dict[str, str] = {}
    name, value = None, []
    for line in lines[end + 1:]:
        m = _ITEM_HEADER.match(line)
        if m and line.startswith(">"):
            if name is not None:
                items.setdefault(name, "\n".join(value).strip())
            name, value = m.group(1).strip(), []
        elif name is not None:
            if line.strip() == "" and value and value[-1].strip() == "":
                continue
            value.append(line)
    if name is not None:
        items.setdefault(name, "\n".join(value).strip())
    return "\n".join(lines[:end + 1]) + "\n", items


def read_sdf_entries(path, *, origin: str | None = None) -> Iterator[ReferenceEntry]:
    """Entries of an SD-file library (see the module docstring for the data items).

    Parameters
    ----------
    path : path-like
        ``.sdf`` / ``.sd`` file, optionally gzip-compressed.
    origin : str, optional
        Library name written into each entry (default: the file name).

    Yields
    ------
    ReferenceEntry

    Raises
    ------
    InputError
        At the first bad record, naming its number and title.
    """
    path = Path(path)
    origin = origin or path.name
    with _open_text(path) as fh:
        try:
            for k, start, molblock, items in _sdf_records(fh):
                if "ELUCIDATE_SET_ASIDE" in items:
                    # a near alternative exported by elucidate contradicts the filed spectrum's
                    # multiplicities by definition: it is no reference for that spectrum
                    continue
                title = molblock.split("\n", 1)[0].strip()
                where = f"{path.name} record {k} (line {start}{', ' + repr(title) if title else ''})"
                yield _sdf_entry(molblock, items, where, k, title, origin)
        except UnicodeDecodeError:
            raise InputError(f"{path.name}: not UTF-8 text; save the SD file as UTF-8") from None
        except (OSError, EOFError) as exc:
            raise InputError(f"{path.name}: cannot read the file ({exc}); check that it is intact") from None


def _sdf_entry(molblock: str, items: dict[str, str], where: str, k: int, title: str, origin: str):
    Chem, CalcMolFormula = _rdkit()
    if "M  END" not in molblock:
        raise InputError(f"{where}: no molfile ('M  END' missing); each record needs a molfile block")
    mol = _quiet(Chem.MolFromMolBlock, molblock, sanitize=True, removeHs=False)
    if mol is None:
        raise InputError(f"{where}: RDKit cannot read the molfile; check the atom and bond blocks")
    carbons = _carbon_hydrogens(mol)
    if SDF_SHIFTS_TAG in items:
        lines = _assigned_lines(items[SDF_SHIFTS_TAG], mol, carbons, f"{where} {SDF_SHIFTS_TAG}")
    elif "NMREDATA_1D_13C" in items:
        lines = _nmredata_lines(items["NMREDATA_1D_13C"], items.get("NMREDATA_ASSIGNMENT", ""), mol, carbons,
                                f"{where} NMREDATA_1D_13C")
    elif SDF_PEAKS_TAG in items:
        try:
            peaks = parse_peaks(items[SDF_PEAKS_TAG])
        except InputError as exc:
            raise InputError(f"{where} {SDF_PEAKS_TAG}: {exc}") from None
        lines = _merge_lines((p.shift, p.hydrogens, p.count or 1) for p in peaks.peaks)
    else:
        raise InputError(f"{where}: no 13C spectrum; add a data item <{SDF_SHIFTS_TAG}> (lines 'atoms shift'), "
                         f"<{SDF_PEAKS_TAG}> (lines 'shift mult count') or NMReDATA <NMREDATA_1D_13C>")
    _check_against_structure(lines, carbons, where)
    source = items.get("ID") or items.get("SOURCE_ID") or title or f"record {k}"
    solvent = _solvent_label((items.get("SOLVENT") or items.get("NMREDATA_SOLVENT") or "").replace("\\", " "))
    return ReferenceEntry(smiles=_constitution(mol), formula=CalcMolFormula(mol), lines=lines,
                          source_id=" ".join(source.split()), origin=origin, solvent=solvent)


def _atom_numbers(text: str, mol, where: str) -> list[int]:
    out = []
    for tok in re.split(r"[,\s]+", text.strip()):
        if not tok:
            continue
        if not tok.isdigit() or not 1 <= int(tok) <= mol.GetNumAtoms():
            raise InputError(f"{where}: atom {tok!r} is not an atom number of the molfile "
                             f"(1...{mol.GetNumAtoms()})")
        out.append(int(tok) - 1)
    return out


def _assigned_lines(text: str, mol, carbons: dict[int, int], where: str):
    raw = []
    seen: dict[int, int] = {}
    for n, line in enumerate(text.splitlines(), start=1):
        line = line.split("#", 1)[0].strip()
        if not line:
            continue
        w = f"{where} line {n}"
        parts = line.replace(",", " ").split()
        if len(parts) < 2:
            raise InputError(f"{w}: {line!r} must be 'atoms shift', e.g. '2,6 128.4'")
        shift = _shift(parts[-1], w)
        atoms = _atom_numbers(" ".join(parts[:-1]), mol, w)
        for a in atoms:
            if a not in carbons:
                raise InputError(f"{w}: atom {a + 1} is {mol.GetAtomWithIdx(a).GetSymbol()}, not a carbon")
            if a in seen:
                raise InputError(f"{w}: carbon {a + 1} already has a shift (line {seen[a]}); list each "
                                 "carbon once")
            seen[a] = n
            raw.append((shift, carbons[a], 1))
    if not raw:
        raise InputError(f"{where}: empty; give one line 'atoms shift' per line of the spectrum")
    missing = sorted(a + 1 for a in carbons if a not in seen)
    if missing:
        shown = ", ".join(map(str, missing[:8])) + (" ..." if len(missing) > 8 else "")
        raise InputError(f"{where}: carbon(s) {shown} have no shift; list every carbon (equivalent carbons "
                         f"share a line, e.g. '2,6 128.4') or give an unassigned list in <{SDF_PEAKS_TAG}>")
    return _merge_lines(raw)


def _nmredata_rows(text: str) -> list[str]:
    rows = []
    for line in text.splitlines():
        line = line.strip()
        if line.endswith("\\"):
            line = line[:-1].strip()
        if line and not line.startswith(";"):
            rows.append(line)
    return rows


def _nmredata_lines(signals: str, assignment: str, mol, carbons: dict[int, int], where: str):
    labels: dict[str, tuple[int, list[str]]] = {}  # label -> (line, atom fields); read when a signal uses it
    for n, row in enumerate(_nmredata_rows(assignment), start=1):
        fields = [f.strip() for f in row.split(",")]
        if len(fields) >= 3:
            labels.setdefault(fields[0], (n, fields[2:]))
    raw = []
    for n, row in enumerate(_nmredata_rows(signals), start=1):
        fields = [f.strip() for f in row.split(",")]
        head = fields[0]
        if "=" in head:  # Larmor=..., CorType=... and other settings
            continue
        w = f"{where} line {n}"
        if "-" in head[1:]:  # a range 'a-b': its centre
            lo, _, hi = head[1:].partition("-")
            shift = (_shift(head[0] + lo, w) + _shift(hi, w)) / 2.0
        else:
            shift = _shift(head, w)
        opts = {}
        for f in fields[1:]:
            key, eq, value = f.partition("=")
            if eq:
                opts[key.strip().upper()] = value.strip()
        label = opts.get("L")
        if label is not None and label in labels:
            line_no, atom_fields = labels[label]
            atoms = _atom_numbers(" ".join(atom_fields), mol, f"{where} NMREDATA_ASSIGNMENT line {line_no}")
            for a in atoms:
                if a not in carbons:
                    raise InputError(f"{w}: label {label!r} names atom {a + 1}, which is not a carbon")
                raw.append((shift, carbons[a], 1))
            continue
        mult = opts.get("S", "").lower()
        hyd = _NMREDATA_MULT.get(mult)
        count = opts.get("N", "1")
        if not count.isdigit() or int(count) < 1:
            raise InputError(f"{w}: N={count!r} must be a positive number of carbons")
        raw.append((shift, hyd, int(count)))
    if not raw:
        raise InputError(f"{where}: no signal lines; give lines 'shift, L=label' or 'shift, S=d'")
    return _merge_lines(raw)


# ---------------------------------------------------------------------------
# entry points
# ---------------------------------------------------------------------------

def read_reference_entries(path, *, origin: str | None = None) -> list[ReferenceEntry]:
    """Every entry of a library file, by its suffix (SD file or JSON lines).

    Raises
    ------
    InputError
        Unknown suffix, missing file, an empty library or a bad record.
    """
    if not isinstance(path, (str, Path)) or not str(path).strip():
        raise InputError(f"reference library path {path!r} must be a file name")
    p = Path(path)
    name = p.name.lower()
    if name.endswith(_SDF_SUFFIXES):
        entries = list(read_sdf_entries(p, origin=origin))
    elif name.endswith(_JSONL_SUFFIXES):
        entries = list(read_jsonl_entries(p, origin=origin))
    else:
        raise InputError(f"reference library {p.name!r}: unknown file type; give an SD file (.sdf) or "
                         "JSON lines (.jsonl), optionally gzip-compressed (.gz)")
    if not entries:
        raise InputError(f"reference library {p.name!r} has no records; add at least one compound")
    return entries


def load_reference_library(path, *, origin: str | None = None) -> ReferenceIndex:
    """Load a lab's reference library file into a searchable index.

    Parameters
    ----------
    path : path-like
        SD file (``.sdf``/``.sd``) or JSON lines (``.jsonl``/``.ndjson``),
        optionally ``.gz``; layouts in docs/reference-library.md.
    origin : str, optional
        Library name shown with each neighbour (default: the file name).

    Returns
    -------
    ReferenceIndex
        Query it with `nearest_spectra(peaks, library=index)`, or merge it
        with the shipped index: ``ReferenceIndex.merge([default_index(), index])``.

    Raises
    ------
    InputError
        One line naming the file, the record and the problem.
    """
    p = Path(path) if isinstance(path, (str, Path)) else path
    entries = read_reference_entries(p, origin=origin)
    header = {"source": f"laboratory library {Path(p).name}", "counts": {"spectra": len(entries)}}
    return ReferenceIndex.from_entries(entries, header=header)


def load_reference_libraries(paths, *, with_default: bool = False) -> ReferenceIndex | None:
    """Load and merge several library files (e.g. repeated ``--library`` options).

    Parameters
    ----------
    paths : sequence of path-like
        Library files; empty gives ``None`` unless ``with_default``.
    with_default : bool
        Put the shipped nmrshiftdb2 index first.
    """
    from .index import default_index

    if isinstance(paths, (str, Path)):
        paths = [paths]
    parts = [default_index()] if with_default else []
    parts += [load_reference_library(p) for p in paths]
    if not parts:
        return None
    return ReferenceIndex.merge(parts)
