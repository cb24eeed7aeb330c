"""13C peak lists: parsing, merging of duplicate lines and checks against a formula.

A peak list is what a chemist reads off a processed 13C spectrum: one line
per resolved signal with its chemical shift in ppm, optionally the number of
attached hydrogens from DEPT (or from an off-resonance/multiplicity-edited
experiment: s/d/t/q) and optionally the number of carbons under the line.

Accepted text forms
-------------------
Inline, separated by commas, semicolons or newlines::

    206.9 C, 45.2 CH2, 29.9 CH3

A plain file, one peak per line, ``shift [multiplicity] [count]``, with ``#``
comments and blank lines ignored::

    # sample QC-0142, CDCl3
    128.4  CH   2
    77.2   ?

CSV or TSV with a header line naming the columns (case-insensitive):
``shift`` (also ``ppm``, ``delta``), ``mult``/``multiplicity`` (also
``dept``) and ``count`` (also ``n``, ``carbons``); other columns are ignored
with a warning.

Decimal commas
--------------
A shift such as ``171,1`` (decimal comma) is read as 171.1 only where the
comma cannot be a separator, and is otherwise rejected with a one-line error
saying how to rewrite it; a comma is never silently read the wrong way.

* Plain text (inline or a file): a comma between two whole numbers
  (``171,1``) is a decimal comma when the lines are separated by ``;`` or
  newlines, no comma in the text separates lines, and every such number is
  the shift (first field) of its line::

      171,1 C; 60,5 CH2; 21,0 CH3      -> 171.1, 60.5, 21.0
      128,4 CH 2                       (one per line in a file) -> 128.4 x2

  Everything else with such a comma is ambiguous and rejected:
  ``"128,4"`` or ``"58,18"`` on one line (128.4, or the lines 128 and 4?),
  ``"171,1 C, 60,5 CH2"`` (the comma used both ways: whitespace is no safe
  guide, it is lost or added when text is copied), ``"10,20,30"`` (whole
  numbers joined by commas), ``"128,4 CH 2,5"`` (a comma outside the shift).
  Fixes: decimal points; ``;`` or newlines between lines; a space after a
  separating comma (``"10, 20, 30"``).  A comma next to a decimal point or a
  letter is a separator as before (``"171.1,60.5"``, ``"45.2 CH2,29.9"``).
* Tables: in ``;``-, tab- or space-separated tables a field ``128,4`` is a
  decimal comma; in comma-separated tables a quoted field ``"128,4"`` is
  (spreadsheet export).  An unquoted whole-number shift followed by a
  whole-number field (``128,4`` under ``shift,count``) is rejected unless
  other shifts of the table carry a decimal point.
* A multi-line text whose every line is the same number (two or more) of
  bare numbers or empty fields joined by ``,`` or ``;`` without spaces
  (``128.4,2`` / ``77.2,``) is taken for a table without its header and
  rejected: the second column may be a count or an intensity, not a shift.
  A single such line cannot be told from two shifts and is read as shifts.

Multiplicity tokens (case-insensitive): ``C``, ``CH``, ``CH2``, ``CH3``; the
off-resonance letters ``s``, ``d``, ``t``, ``q``; ``CH0`` and ``Cq`` for a
carbon without hydrogen; ``?`` (or nothing) for unknown.  A count may be
written ``2``, ``2C`` or ``x2``.

Identical lines (same shift and multiplicity) are merged into one line with
a warning; their counts add when every copy carries a count.  Copies of
which some carry a count and others not are rejected (the total is unknown).

All problems raise :class:`elucidate.errors.InputError` with a one-line
message naming the peak (1-based), the value received and how to fix it.
"""

from __future__ import annotations

import csv
import io
import math
import os
import re
from dataclasses import dataclass

from ..errors import InputError
from .jcamp import peaks_from_jcamp
from .peaklist import SHIFT_RANGE, Peak, PeakList
from .peaklist import merge_lines as _merge
from .textfile import read_utf8

__all__ = [
    "Peak",
    "PeakList",
    "parse_peaks",
    "read_peaks",
    "check_against_formula",
    "peaks_from_records",
    "MULTIPLICITY_TOKENS",
    "SHIFT_RANGE",
]

#: Multiplicity token (lower case) -> number of attached hydrogens; ``None``
#: means unknown.
MULTIPLICITY_TOKENS: dict[str, int | None] = {
    "c": 0,
    "s": 0,
    "ch0": 0,
    "cq": 0,
    "ch": 1,
    "d": 1,
    "ch1": 1,
    "ch2": 2,
    "t": 2,
    "ch3": 3,
    "q": 3,
    "?": None,
}

_ACCEPTED = "C, CH, CH2, CH3, s, d, t, q, Cq, ?"
_SUBSCRIPTS = str.maketrans("₀₁₂₃", "0123")
_PATH_SUFFIXES = (".txt", ".csv", ".tsv", ".jdx", ".dx", ".jcamp", ".dat")
_JCAMP_SUFFIXES = (".jdx", ".dx", ".jcamp")


# ----------------------------------------------------------------------------
# token readers


def _read_shift(token: str, where: str) -> float:
    tok = token.strip().strip("()")
    try:
        value = float(tok)
    except ValueError:
        hint = ""
        if tok.lower().translate(_SUBSCRIPTS) in MULTIPLICITY_TOKENS:
            hint = (
                "; it looks like a multiplicity: a CSV/TSV file needs a header line "
                "naming its columns (shift,mult,count)"
            )
        elif "," in tok:
            hint = "; use a decimal point, not a comma"
        raise InputError(
            f"{where}: shift {token!r} is not a number; write the shift in ppm, e.g. 128.4{hint}"
        ) from None
    if not math.isfinite(value):
        raise InputError(f"{where}: shift {token!r} is not a finite number; write the shift in ppm")
    lo, hi = SHIFT_RANGE
    if not lo <= value <= hi:
        raise InputError(
            f"{where}: shift {value:g} ppm is outside {lo:g}...{hi:g} ppm; check for a typo "
            "or a value given in Hz instead of ppm"
        )
    return value


def _read_mult(token: str, where: str) -> int | None:
    key = token.strip().strip("()").lower().translate(_SUBSCRIPTS)
    if key == "":
        return None
    if key not in MULTIPLICITY_TOKENS:
        raise InputError(
            f"{where}: unknown multiplicity {token!r}; use one of {_ACCEPTED} (? = unknown)"
        )
    return MULTIPLICITY_TOKENS[key]


_COUNT_RE = re.compile(r"^(?:[x×*]\s*)?(\d+)\s*c?$", re.IGNORECASE)


def _read_count(token: str, where: str) -> int | None:
    tok = token.strip().strip("()").strip()
    if tok == "":
        return None
    m = _COUNT_RE.match(tok)
    if not m or int(m.group(1)) < 1:
        raise InputError(
            f"{where}: count {token!r} is not a positive integer; give the number of "
            "carbons under the line (1, 2, ...) or leave it out"
        )
    return int(m.group(1))


def _looks_like_count(token: str) -> bool:
    return bool(_COUNT_RE.match(token.strip().strip("()").strip()))


def _peak_from_tokens(tokens: list[str], where: str) -> Peak:
    shift = _read_shift(tokens[0], where)
    rest = tokens[1:]
    hydrogens: int | None = None
    count: int | None = None
    if len(rest) > 2:
        raise InputError(
            f"{where}: too many fields {' '.join(tokens)!r}; write 'shift [multiplicity] [count]'"
        )
    if len(rest) == 2:
        hydrogens = _read_mult(rest[0], where)
        count = _read_count(rest[1], where)
    elif len(rest) == 1:
        # A lone field is a count if it reads as one, else a multiplicity.
        if _looks_like_count(rest[0]) and rest[0].strip().lower() not in MULTIPLICITY_TOKENS:
            count = _read_count(rest[0], where)
        else:
            hydrogens = _read_mult(rest[0], where)
    return Peak(shift, hydrogens, count)


_SPLIT_SHIFT_MULT = re.compile(r"^([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\(([^)]*)\)(.*)$")


def _tokenize(item: str) -> list[str]:
    """Whitespace tokens; ``128.4(CH)`` is split into ``128.4`` and ``CH``."""
    tokens: list[str] = []
    for tok in item.split():
        m = _SPLIT_SHIFT_MULT.match(tok)
        if m:
            tokens.append(m.group(1))
            tokens.append(m.group(2))
            if m.group(3):
                tokens.append(m.group(3))
        else:
            tokens.append(tok)
    return tokens


# ----------------------------------------------------------------------------
# text parsing

_SHIFT_COLS = {"shift", "shifts", "shiftppm", "ppm", "delta", "deltappm", "δ", "δppm", "cshift", "13c"}
_MULT_COLS = {"mult", "multiplicity", "dept", "mult.", "multiplicities"}
_COUNT_COLS = {"count", "counts", "n", "carbons", "nc", "ncarbons", "numc"}


def _norm_col(name: str) -> str:
    return re.sub(r"[\s_\-()\[\]]", "", name.strip().lower())


def _content_lines(text: str) -> list[tuple[int, str]]:
    lines = []
    for n, raw in enumerate(text.splitlines(), start=1):
        line = raw.split("#", 1)[0].strip()
        if line:
            lines.append((n, line))
    return lines


def _is_shift_col(c: str) -> bool:
    return c in _SHIFT_COLS or "shift" in c or c.startswith(("ppm", "δ"))


def _is_mult_col(c: str) -> bool:
    return c in _MULT_COLS or c.startswith("multiplicit")


def _is_header(line: str) -> bool:
    """A header is a first row of words, none a number or a multiplicity."""
    fields = [f.strip() for f in re.split(r"[,\t;]", line) if f.strip()]
    words = [w for w in re.split(r"[,\t;\s]+", line) if w]
    for w in words:
        try:
            float(w.strip("()"))
            return False
        except ValueError:
            pass
    norms = [_norm_col(w) for w in words]
    if any(_is_shift_col(c) or _is_mult_col(c) or c in _COUNT_COLS for c in norms):
        # "C" alone or "128 CH" never get here; a row of multiplicity
        # tokens only is not a header either.
        return not all(c.translate(_SUBSCRIPTS) in MULTIPLICITY_TOKENS for c in norms)
    return len(fields) >= 2 and all(
        re.search(r"[^\W\d_]", f) and _norm_col(f).translate(_SUBSCRIPTS) not in MULTIPLICITY_TOKENS
        for f in fields
    )


def _reject_split_decimal_commas(rows, shift_i: int) -> None:
    """In a comma-separated table, reject ``128,4`` read as shift 128 and a next field 4.

    An unquoted whole-number shift followed by a whole-number field may be
    a decimal comma that the delimiter split; it is accepted only when other
    rows write their shifts with a decimal point.
    """
    if any("." in fields[shift_i] for _, _, _, fields in rows if shift_i < len(fields)):
        return
    for k, lineno, line, fields in rows:
        if '"' in line or shift_i + 1 >= len(fields):
            continue
        a, b = fields[shift_i], fields[shift_i + 1]
        if re.fullmatch(r"[+-]?\d+", a) and re.fullmatch(r"\d+", b):
            raise InputError(
                f"peak {k} (line {lineno}): '{a},{b}' may be the decimal comma {a}.{b} split over two "
                f"columns, or the shift {a} followed by {b}; write shifts with a decimal point "
                f"({a}.{b} or {a}.0), quote decimal-comma values (\"{a},{b}\") or separate the "
                "columns with ';'"
            )


def _parse_table(lines: list[tuple[int, str]]) -> PeakList:
    header_line = lines[0][1]
    delimiter = "\t" if "\t" in header_line else (";" if ";" in header_line and "," not in header_line else ",")
    if delimiter == "," and "," not in header_line:
        delimiter = None  # whitespace-separated columns
    def split(line: str) -> list[str]:
        if delimiter is None:
            return line.split()
        return [f.strip() for f in next(csv.reader(io.StringIO(line), delimiter=delimiter))]

    header = split(header_line)
    cols = [_norm_col(h) for h in header]
    shift_i = mult_i = count_i = None
    ignored = []
    for i, c in enumerate(cols):
        if _is_shift_col(c):
            shift_i = i if shift_i is None else shift_i
        elif _is_mult_col(c):
            mult_i = i if mult_i is None else mult_i
        elif c in _COUNT_COLS:
            count_i = i if count_i is None else count_i
        else:
            ignored.append(header[i])
    if shift_i is None:
        raise InputError(
            f"table header {header_line!r} (line {lines[0][0]}) has no shift column; "
            "name the columns shift,mult,count (mult and count optional)"
        )
    warnings = []
    if ignored:
        warnings.append("peak table columns ignored: " + ", ".join(repr(c) for c in ignored))
    rows = [(k, lineno, line, split(line)) for k, (lineno, line) in enumerate(lines[1:], start=1)]
    if delimiter == ",":
        _reject_split_decimal_commas(rows, shift_i)
    peaks = []
    for k, lineno, line, fields in rows:
        where = f"peak {k} (line {lineno})"
        if len(fields) > len(header) and any(f for f in fields[len(header):]):
            hint = ""
            if delimiter == "," and re.search(r"(?<![\d.])\d+,\d+(?![\d.])", line):
                hint = "; a decimal comma such as 128,4 must be quoted (\"128,4\") or the columns separated by ';'"
            raise InputError(
                f"{where}: {len(fields)} fields but the header names {len(header)}; "
                f"check the delimiter and the header{hint}"
            )
        def get(i):
            return fields[i] if i is not None and i < len(fields) else ""
        if get(shift_i) == "":
            raise InputError(f"{where}: the shift field is empty; every row needs a shift in ppm")
        raw_shift = get(shift_i)
        if re.fullmatch(r"[+-]?\d+,\d+", raw_shift):
            # One field holding '128,4' is a decimal comma: in ';'-, tab- or space-separated
            # tables the comma cannot separate columns, and in comma-separated ones the
            # field was quoted (spreadsheet export).
            raw_shift = raw_shift.replace(",", ".")
        shift = _read_shift(raw_shift, where)
        peaks.append(Peak(shift, _read_mult(get(mult_i), where), _read_count(get(count_i), where)))
    if not peaks:
        raise InputError("peak table has a header but no rows; add one row per peak below the header")
    return _merge(tuple(peaks), tuple(warnings), strict=True)


_DIGITS = "0123456789"


@dataclass(frozen=True)
class _DigitComma:
    """A comma joining two whole numbers (``171,1``): decimal mark or separator."""

    lineno: int
    line: str
    start: int  # first character of the number before the comma (its sign included)
    comma: int  # index of the comma
    end: int  # one past the last digit after the comma
    chained: bool  # another comma joins on directly (``10,20,30``)
    leading: bool  # the number is the first field of its ';'-separated item

    @property
    def pair(self) -> tuple[str, str]:
        """The whole numbers before and after the comma."""
        return self.line[self.start:self.comma], self.line[self.comma + 1:self.end]

    @property
    def run(self) -> str:
        """The whole run of numbers and commas around it (``10,20,30``)."""
        head = re.search(r"[+-]?[\d,.]*$", self.line[:self.comma]).group(0)
        tail = re.match(r"[\d,.]*", self.line[self.comma + 1:]).group(0)
        return (head + "," + tail).strip(",.")


def _digit_comma(lineno: int, line: str, i: int) -> _DigitComma | None:
    """The comma at ``line[i]`` if it could be a decimal comma, else None.

    It could be one when whole numbers stand on both sides: digits not
    preceded by a decimal point or a letter (``CH2,77``, ``x2,77``) and not
    followed by a decimal point (``2,77.2``).
    """
    if not (0 < i < len(line) - 1 and line[i - 1] in _DIGITS and line[i + 1] in _DIGITS):
        return None
    j = i - 1
    while j > 0 and line[j - 1] in _DIGITS:
        j -= 1
    k = i + 1
    while k < len(line) and line[k] in _DIGITS:
        k += 1
    before = line[j - 1] if j > 0 else ""
    after = line[k] if k < len(line) else ""
    if before == "." or before.isalpha() or before == "_" or after == ".":
        return None  # a decimal point or a letter glued to a number: the comma separates
    start = j - 1 if before and before in "+-" else j
    chained = before == "," or after == ","
    head = line[:start]
    head = head[head.rfind(";") + 1:]
    return _DigitComma(lineno, line, start, i, k, chained, head.strip() == "")


def _plain_items(lines: list[tuple[int, str]]) -> list[tuple[int, str]]:
    """Split plain peak text into items (one peak each), resolving decimal commas.

    See the module docstring ("Decimal commas") for the rule; ambiguous
    text raises :class:`InputError` naming the number and the fixes.
    """
    digit_commas: list[_DigitComma] = []
    separator_comma = False
    for lineno, line in lines:
        for i, ch in enumerate(line):
            if ch == ",":
                found = _digit_comma(lineno, line, i)
                if found is None:
                    separator_comma = True
                else:
                    digit_commas.append(found)
    decimal = bool(digit_commas)
    if decimal:
        _reject_ambiguous_commas(lines, digit_commas, separator_comma)
    items: list[tuple[int, str]] = []
    for lineno, line in lines:
        parts = line.replace(",", ".").split(";") if decimal else re.split(r"[,;]", line)
        items.extend((lineno, part) for part in parts if part.strip())
    _reject_headerless_table(lines, decimal)
    return items


def _reject_ambiguous_commas(lines, digit_commas: list[_DigitComma], separator_comma: bool) -> None:
    """Raise unless every comma joining whole numbers is surely a decimal comma."""
    first = digit_commas[0]
    a, b = first.pair
    if separator_comma:
        raise InputError(
            f"peak text is ambiguous: '{a},{b}' may hold a decimal comma ({a}.{b}), but commas "
            f"also separate lines here, so it could as well be the two lines {a} and {b}; "
            f"write decimal points ({a}.{b}), or separate the lines with ';' or newlines only"
        )
    chained = next((c for c in digit_commas if c.chained), None)
    if chained is not None:
        run = chained.run
        raise InputError(
            f"peak text is ambiguous: in {run!r} a comma between whole numbers may be a decimal "
            f"comma or a separator; put a space after each separating comma "
            f"({', '.join(run.split(','))!r}), or write decimal points"
        )
    inner = next((c for c in digit_commas if not c.leading), None)
    if inner is not None:
        a, b = inner.pair
        raise InputError(
            f"peak text is ambiguous: '{a},{b}' follows a shift, so its comma may be a decimal "
            f"comma or separate the next line; put a space after a separating comma ('{a}, {b}'), "
            "and write one peak per line or item as 'shift [multiplicity] [count]'"
        )
    if len(lines) == 1 and ";" not in lines[0][1]:
        raise InputError(
            f"peak text is ambiguous: '{a},{b}' may be the decimal comma {a}.{b} ppm or the two "
            f"lines {a} and {b} ppm; write {a}.{b} (decimal point) or '{a}, {b}' (two lines); "
            "decimal commas are read only when lines are separated by ';' or newlines"
        )


_BARE_NUMBER = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)"
_BARE_FIELD = re.compile(rf"(?:{_BARE_NUMBER})?")


def _reject_headerless_table(lines: list[tuple[int, str]], decimal: bool) -> None:
    """Reject rows like ``128.4,2`` on every line: a table that lost its header.

    Every line must be bare numbers (or empty fields) joined by ',' or ';'
    without spaces, all lines with the same number of fields, at least one
    line with two numbers.
    """
    if len(lines) < 2:
        return
    widths = set()
    full = False
    for _, line in lines:
        row = line.replace(",", ".") if decimal else line
        fields = re.split(r"[,;]", row)
        if len(fields) < 2 or not all(_BARE_FIELD.fullmatch(f) for f in fields):
            return
        widths.add(len(fields))
        full = full or sum(1 for f in fields if f) >= 2
    if len(widths) == 1 and full:
        n = widths.pop()
        raise InputError(
            f"every line holds {n} fields of numbers joined by ',' or ';' (line {lines[0][0]}: "
            f"{lines[0][1]!r}), like a table without its header: the later columns may be counts or "
            "intensities; add a header line naming the columns (e.g. shift,count or shift,intensity), "
            "or give one peak per line as 'shift [multiplicity] [count]'"
        )


def parse_peaks(text: str) -> PeakList:
    """Parse a 13C peak list from text.

    Parameters
    ----------
    text : str
        Inline text (``"206.9 C, 45.2 CH2, 29.9 CH3"``: items separated by
        commas, semicolons or newlines), the content of a plain peak file
        (``shift [mult] [count]`` per line, ``#`` comments), or CSV/TSV with
        a header line naming ``shift``, ``mult``/``multiplicity``, ``count``.

    Returns
    -------
    PeakList
        Lines in the given order, identical lines merged (with a warning).

    Raises
    ------
    InputError
        Empty list, malformed number, unknown multiplicity, bad count,
        shift outside -20...250 ppm, header without a shift column.

    Examples
    --------
    >>> pl = parse_peaks("206.9 C, 45.2 CH2, 29.9 CH3")
    >>> [p.multiplicity for p in pl.peaks]
    ['C', 'CH2', 'CH3']
    """
    if not isinstance(text, str):
        raise InputError(f"peak list must be text, got {type(text).__name__}")
    text = text.lstrip("\ufeff")
    lines = _content_lines(text)
    if not lines:
        raise InputError(
            "peak list is empty; give at least one shift, e.g. --peaks \"128.4 CH, 77.2 C\" or a peak file"
        )
    if _is_header(lines[0][1]):
        return _parse_table(lines)
    peaks: list[Peak] = []
    multi_line = len(lines) > 1
    for k, (lineno, item) in enumerate(_plain_items(lines), start=1):
        where = f"peak {k} (line {lineno})" if multi_line else f"peak {k}"
        peaks.append(_peak_from_tokens(_tokenize(item), where))
    if not peaks:
        raise InputError("peak list is empty; give at least one shift in ppm")
    return _merge(tuple(peaks), (), strict=True)


def _looks_like_path(source: str) -> bool:
    s = source.strip()
    if "\n" in s:
        return False
    return s.lower().endswith(_PATH_SUFFIXES) or "/" in s or "\\" in s


def read_peaks(source: str, *, dept135=None, dept90=None, pick_settings=None) -> PeakList:
    """Read a peak list from a file path or from inline text.

    Parameters
    ----------
    source : str
        Path to an existing file (UTF-8 text; ``.jdx``/``.dx``/``.jcamp``
        files, or files starting with ``##``, are read as JCAMP-DX), or
        inline peak text.
    dept135, dept90 : str, optional
        Paths of DEPT-135 / DEPT-90 JCAMP-DX spectra of the same sample;
        only with a JCAMP-DX 13C ``source`` (multiplicities are then taken
        from them, see :func:`elucidate.spectrum.jcamp.peaks_from_jcamp`).
    pick_settings : PickSettings, optional
        Peak-picking settings for JCAMP-DX spectra.

    Returns
    -------
    PeakList

    Raises
    ------
    InputError
        A path-like string that does not exist ("peak file X not found"), an
        unreadable or non-UTF-8 file, or any :func:`parse_peaks` error.
    """
    if not isinstance(source, str) or not source.strip():
        raise InputError(
            "peak list is empty; give a peak file or inline peaks such as \"128.4 CH, 77.2 C\""
        )
    path = source.strip()
    exists = "\n" not in path and os.path.exists(path)
    if exists and os.path.isdir(path):
        raise InputError(f"peak file {path} is a directory; give the path of a peak file")
    text = None
    if exists and not path.lower().endswith(_JCAMP_SUFFIXES):
        text = read_utf8(path, "peak file")
    if exists and (text is None or text.lstrip().startswith("##")):
        return peaks_from_jcamp(path, dept135, dept90, pick_settings)
    if not exists and _looks_like_path(path):
        raise InputError(f"peak file {path} not found; check the path (or give the peaks inline)")
    if dept135 is not None or dept90 is not None:
        raise InputError(
            "DEPT spectra were given but the peak source is not a JCAMP-DX 13C spectrum; give the "
            "13C spectrum file (.jdx) as the peaks, or type the multiplicities into the peak list"
        )
    if text is not None:
        try:
            return parse_peaks(text)
        except InputError as exc:
            raise InputError(f"peak file {path}: {exc}") from None
    return parse_peaks(source)


def peaks_from_records(records) -> PeakList:
    """Build a peak list from records ``{"shift", "mult", "count"}``.

    Parameters
    ----------
    records : iterable of dict
        ``shift`` (number, required), ``mult`` (a multiplicity token or
        None/absent = unknown), ``count`` (positive int or None/absent).

    Returns
    -------
    PeakList
        Identical lines merged with a warning.
    """
    if isinstance(records, (str, bytes)) or not hasattr(records, "__iter__"):
        raise InputError("peak records must be a list of objects with shift, mult and count")
    peaks = []
    for k, rec in enumerate(records, start=1):
        where = f"peak record {k}"
        if not isinstance(rec, dict):
            raise InputError(f"{where}: expected an object with shift/mult/count, got {rec!r}")
        if "shift" not in rec or rec["shift"] is None:
            raise InputError(f"{where}: no shift; every record needs a 'shift' in ppm")
        shift = rec["shift"]
        if isinstance(shift, bool) or not isinstance(shift, (int, float, str)):
            raise InputError(f"{where}: shift {shift!r} is not a number; give the shift in ppm")
        shift_v = _read_shift(str(shift), where)
        mult = rec.get("mult", rec.get("multiplicity"))
        if mult is not None and not isinstance(mult, str):
            raise InputError(f"{where}: multiplicity {mult!r} must be text such as CH2 or null")
        hyd = None if mult is None else _read_mult(mult, where)
        count = rec.get("count")
        if count is not None:
            if isinstance(count, bool) or not isinstance(count, int) or count < 1:
                raise InputError(
                    f"{where}: count {count!r} is not a positive integer; give the number of carbons or null"
                )
        peaks.append(Peak(shift_v, hyd, count))
    if not peaks:
        raise InputError("peak list is empty; give at least one peak record")
    return _merge(tuple(peaks), (), "record", strict=True)


# ----------------------------------------------------------------------------
# consistency with the formula

_H_BEARING_HETERO = ("N", "O", "S", "P", "Si", "B", "Se")


def check_against_formula(peaks: PeakList, formula) -> PeakList:
    """Check a peak list against a molecular formula.

    Checks (each failure raises :class:`InputError`):

    * no more lines than carbons;
    * the carbons implied (count, or 1 per line without count) do not exceed
      the formula's carbons; when every line has a count they must equal it;
    * the hydrogens implied by the multiplicities (H per line x count) do
      not exceed the formula's H; when every line has both a multiplicity
      and a count, the H left over must be placeable on N/O/S/P/Si/B/Se.

    Parameters
    ----------
    peaks : PeakList
    formula : Formula or str

    Returns
    -------
    PeakList
        The same lines with informative warnings appended.
    """
    from ..formula import Formula, parse_formula

    if isinstance(formula, str):
        formula = parse_formula(formula)
    if not isinstance(formula, Formula):
        raise InputError(f"formula must be a Formula or text, got {type(formula).__name__}")
    if not isinstance(peaks, PeakList):
        raise InputError(f"peaks must be a PeakList, got {type(peaks).__name__}")
    if not peaks.peaks:
        raise InputError("peak list is empty; give at least one shift")
    nc, nh, f = formula.carbons, formula.hydrogens, formula.hill
    if peaks.n_lines > nc:
        raise InputError(
            f"{peaks.n_lines} peak lines but formula {f} has only {nc} carbons; remove solvent "
            "or impurity lines (see --solvent) or check the formula"
        )
    if peaks.has_counts:
        total = peaks.min_carbons
        if total != nc:
            raise InputError(
                f"peak counts add up to {total} carbons but formula {f} has {nc}; correct the "
                "counts (or leave counts out where unsure)"
            )
    elif peaks.min_carbons > nc:
        raise InputError(
            f"peak counts (a line without count = 1) add up to {peaks.min_carbons} carbons but "
            f"formula {f} has only {nc}; correct the counts"
        )
    h_c = peaks.min_carbon_hydrogens
    if h_c > nh:
        raise InputError(
            f"the multiplicities imply at least {h_c} H on carbon but formula {f} has {nh} H; "
            "check the DEPT assignments (C/CH/CH2/CH3), the counts or the formula"
        )
    warnings: list[str] = []
    if peaks.has_counts and peaks.has_multiplicities:
        rest = nh - h_c
        hosts = [el for el in _H_BEARING_HETERO if formula.count(el)]
        if rest > 0 and not hosts:
            raise InputError(
                f"the multiplicities put {h_c} H on carbon but formula {f} has {nh} H and no atom "
                "(N, O, S, ...) that could carry the other "
                f"{rest}; check the DEPT assignments or the formula"
            )
        if rest > 0:
            warnings.append(
                f"{rest} H not on carbon by the DEPT data: expect OH/NH/SH-type hydrogens"
            )
    return peaks.with_warnings(*warnings) if warnings else peaks
