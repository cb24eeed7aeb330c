"""Reading 13C spectra and peak tables from JCAMP-DX files.

JCAMP-DX is the IUPAC open exchange format for spectra: R. S. McDonald and
P. A. Wilks, Appl. Spectrosc. 1988, 42, 151 (the format and its ASCII
compression, "ASDF"), and for NMR A. N. Davies and P. Lampen, Appl.
Spectrosc. 1993, 47, 1093 (citations from memory).

What is read
------------
* ``##PEAK TABLE=(XY..XY)`` (also ``(XYW..XYW)``): a list of lines.
* ``##XYDATA=(X++(Y..Y))``: an evenly sampled spectrum, with the ordinates
  in any of the forms the standard defines: AFFN (plain numbers), PAC
  (numbers separated by their signs), SQZ (first digit and sign folded into
  a letter), DIF (differences to the previous ordinate, with the Y-value
  check at the start of the next line) and DUP (repeat counts).
* ``##XYPOINTS=(XY..XY)``: an unevenly sampled spectrum as x,y pairs.
* ``##NTUPLES`` blocks: the real page ``##DATA TABLE=(X++(R..R)), XYDATA``
  (axis from the ``##FIRST``/``##LAST``/``##FACTOR``/``##VAR_DIM``/``##UNITS``
  columns of the X and R variables).
* ``##FIRSTX``, ``##LASTX`` (or ``##DELTAX``), ``##NPOINTS``, ``##XFACTOR``, ``##YFACTOR``,
  ``##XUNITS`` (PPM or HZ; Hz are converted with ``##.OBSERVE FREQUENCY``
  in MHz) and ``##.OBSERVE NUCLEUS`` (must be 13C when present).

Labels are compared ignoring case, blanks, dashes, slashes and underscores,
as the standard prescribes; ``$$`` starts a comment.  Linked/compound
files are split into their ``##TITLE ... ##END`` blocks.

:func:`peaks_from_jcamp` turns a 13C file (plus optional DEPT-135/DEPT-90
files, or one compound file holding them) into a
:class:`~elucidate.spectrum.peaks.PeakList`, picking lines with
:mod:`elucidate.spectrum.picking` and reading multiplicities with
:mod:`elucidate.spectrum.dept`.
"""

from __future__ import annotations

import dataclasses
import math
import os
import re
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .dept import classify_multiplicities, dept_sign_warnings
from .peaklist import Peak, PeakList
from .peaklist import merge_lines as _merge
from .picking import PickedPeaks, PickSettings, pick_peaks

__all__ = [
    "JcampSpectrum",
    "read_jcamp",
    "read_jcamp_blocks",
    "parse_jcamp",
    "decode_xydata_lines",
    "peaks_from_jcamp",
    # re-exported for convenience (defined in .picking)
    "PickSettings",
    "PickedPeaks",
    "pick_peaks",
]

# ----------------------------------------------------------------------------
# ASDF character tables (McDonald & Wilks 1988)

_SQZ = {"@": 0, **{c: i + 1 for i, c in enumerate("ABCDEFGHI")}, **{c: -(i + 1) for i, c in enumerate("abcdefghi")}}
_DIF = {"%": 0, **{c: i + 1 for i, c in enumerate("JKLMNOPQR")}, **{c: -(i + 1) for i, c in enumerate("jklmnopqr")}}
_DUP = {c: i + 1 for i, c in enumerate("STUVWXYZs")}

_TOKEN_RE = re.compile(
    r"(?P<affn>[+-]?(?:\d+\.?\d*|\.\d+)(?:[Ee][+-]\d+)?)"
    r"|(?P<sqz>[@A-Ia-i][0-9.]*)"
    r"|(?P<dif>[%J-Rj-r][0-9.]*)"
    r"|(?P<dup>[S-Zs][0-9]*)"
    r"|(?P<sep>[\s,;]+)"
    r"|(?P<bad>.)"
)


def _letter_value(table: dict[str, int], tok: str) -> float:
    d = table[tok[0]]
    text = f"{abs(d)}{tok[1:]}"
    try:
        v = float(text)
    except ValueError:
        raise InputError(f"malformed compressed value {tok!r}") from None
    return -v if d < 0 else v


def _decode_line(line: str, where: str) -> tuple[list[float], bool]:
    """Decode one ASDF data line into numbers (first = abscissa).

    Returns the values and whether the last ordinate came from a DIF token
    (then the next line starts with a Y-value check).
    """
    values: list[float] = []
    last_kind: str | None = None  # "abs" or "dif"
    last_delta = 0.0
    for m in _TOKEN_RE.finditer(line):
        kind = m.lastgroup
        tok = m.group()
        if kind == "sep":
            continue
        if kind == "bad":
            if tok == "?":
                raise InputError(f"{where}: the data hold an unknown value '?'; this spectrum cannot be read")
            raise InputError(f"{where}: unexpected character {tok!r} in the data")
        if kind == "affn":
            values.append(float(tok))
            last_kind = "abs"
        elif kind == "sqz":
            values.append(_letter_value(_SQZ, tok))
            last_kind = "abs"
        elif kind == "dif":
            if len(values) < 2:
                raise InputError(
                    f"{where}: a difference (DIF) value {tok!r} without an ordinate before it on the line"
                )
            last_delta = _letter_value(_DIF, tok)
            values.append(values[-1] + last_delta)
            last_kind = "dif"
        else:  # dup
            if last_kind is None or len(values) < 2:
                raise InputError(f"{where}: a repeat count (DUP) {tok!r} with nothing to repeat")
            n = int(_letter_value(_DUP, tok))
            for _ in range(n - 1):
                values.append(values[-1] + last_delta if last_kind == "dif" else values[-1])
    return values, last_kind == "dif"


def decode_xydata_lines(lines, *, start_line: int = 1) -> list[tuple[float, list[float], bool]]:
    """Decode ``(X++(Y..Y))`` data lines.

    Parameters
    ----------
    lines : iterable of str
        The data lines after ``##XYDATA=(X++(Y..Y))``.
    start_line : int
        Line number of the first line, for messages.

    Returns
    -------
    list of (x, ys, has_check)
        Per line: the abscissa (still divided by XFACTOR), its ordinates
        (still divided by YFACTOR, the Y-check value already removed) and
        whether the line began with a Y-value check.
    """
    out = []
    prev_dif = False
    prev_last: float | None = None
    for k, raw in enumerate(lines):
        line = raw.split("$$", 1)[0].strip()
        if not line:
            continue
        where = f"XYDATA line {start_line + k}"
        vals, ends_dif = _decode_line(line, where)
        if len(vals) < 1:
            continue
        x, ys = vals[0], vals[1:]
        check = False
        if prev_dif and ys:
            if prev_last is not None and abs(ys[0] - prev_last) > 1e-6 * max(1.0, abs(prev_last)):
                raise InputError(
                    f"{where}: Y-value check failed ({ys[0]:g} but the previous line ended at "
                    f"{prev_last:g}); the file is damaged or not valid DIF data"
                )
            ys = ys[1:]
            check = True
        if ys:
            prev_last = ys[-1]
        prev_dif = ends_dif
        out.append((x, ys, check))
    return out


# ----------------------------------------------------------------------------
# labelled data records


def _norm_label(label: str) -> str:
    return re.sub(r"[\s\-/_]", "", label).upper()


@dataclass(frozen=True)
class _Block:
    records: tuple[tuple[str, str, tuple[str, ...], int], ...]  # label, value, data lines, line no

    def get(self, label: str) -> str | None:
        for lab, val, _, _ in self.records:
            if lab == label:
                return val.strip()
        return None

    def data(self, label: str):
        for lab, val, lines, no in self.records:
            if lab == label:
                return val.strip(), lines, no
        return None


def _blocks(text: str, name: str) -> list[_Block]:
    blocks: list[_Block] = []
    current: list[tuple[str, str, list[str], int]] | None = None
    for no, raw in enumerate(text.splitlines(), start=1):
        line = raw.rstrip()
        stripped = line.lstrip()
        if stripped.startswith("##"):
            body = stripped[2:]
            if "=" in body:
                label, value = body.split("=", 1)
            else:
                label, value = body, ""
            value = value.split("$$", 1)[0]
            label = _norm_label(label)
            if label == "TITLE":
                if current is not None and any(r[0] != "TITLE" for r in current):
                    blocks.append(_freeze(current))
                current = []
            if current is None:
                current = []
            if label == "END":
                blocks.append(_freeze(current))
                current = None
                continue
            current.append((label, value, [], no))
        elif current is not None and current:
            current[-1][2].append(line)
    if current:
        blocks.append(_freeze(current))
    if not blocks or not any(b.records for b in blocks):
        raise InputError(f"{name} is not a JCAMP-DX file (no ##TITLE= ... ##END= records)")
    return blocks


def _freeze(records) -> _Block:
    return _Block(tuple((lab, val, tuple(lines), no) for lab, val, lines, no in records))


def _num(block: _Block, label: str, name: str, default: float | None = None) -> float | None:
    text = block.get(label)
    if text is None or text == "":
        return default
    try:
        v = float(text.split()[0])
    except (ValueError, IndexError):
        raise InputError(f"{name}: ##{label}={text!r} is not a number; fix the header record") from None
    if not math.isfinite(v):
        raise InputError(f"{name}: ##{label}={text!r} is not a finite number")
    return v


# ----------------------------------------------------------------------------
# spectrum object


@dataclass(frozen=True, eq=False)
class JcampSpectrum:
    """One block of a JCAMP-DX file: a sampled spectrum or a peak table.

    Attributes
    ----------
    title : str
    data_type : str
        The ``##DATA TYPE`` text (e.g. ``NMR SPECTRUM``, ``NMR PEAK TABLE``).
    nucleus : str or None
        Observe nucleus as written (``^13C``), when given.
    observe_mhz : float or None
        ``##.OBSERVE FREQUENCY`` in MHz, when given.
    x : numpy.ndarray
        Abscissae in ppm (spectrum points, or line positions of a peak table).
    y : numpy.ndarray
        Ordinates (intensities), YFACTOR applied.
    is_peak_table : bool
        True when the block is a ``##PEAK TABLE``.
    source : str
        The file it came from.
    warnings : tuple of str
    """

    title: str
    data_type: str
    nucleus: str | None
    observe_mhz: float | None
    x: np.ndarray = field(repr=False)
    y: np.ndarray = field(repr=False)
    is_peak_table: bool = False
    source: str = ""
    warnings: tuple[str, ...] = ()
    pulse_sequence: str | None = None

    @property
    def experiment(self) -> str:
        """``"dept135"``, ``"dept90"``, ``"dept45"`` or ``"c13"``, read from the
        title, data type and pulse-sequence records (best effort)."""
        text = " ".join(t for t in (self.title, self.data_type, self.pulse_sequence or "") if t).upper()
        m = _DEPT_LABEL.search(text)
        if m:
            return "dept" + m.group(1)
        return "c13"

    @property
    def dept_labels(self) -> dict[str, str]:
        """Every DEPT experiment the header names, with where it says so:
        ``{"dept90": "title 'sample 7 DEPT-90'"}``; empty when silent."""
        out: dict[str, str] = {}
        for what, text in (("title", self.title), ("data type", self.data_type),
                           ("pulse sequence", self.pulse_sequence)):
            for m in _DEPT_LABEL.finditer((text or "").upper()):
                out.setdefault("dept" + m.group(1), f"{what} {text.strip()!r}")
        return out

    def __post_init__(self) -> None:
        x = np.asarray(self.x, dtype=float)
        y = np.asarray(self.y, dtype=float)
        if x.ndim != 1 or x.shape != y.shape:
            raise InputError(f"spectrum {self.title!r}: x and y must be 1-D and of equal length")
        if not (np.all(np.isfinite(x)) and np.all(np.isfinite(y))):
            raise InputError(f"spectrum {self.title!r}: x and y must be finite numbers")
        x.flags.writeable = False
        y.flags.writeable = False
        object.__setattr__(self, "x", x)
        object.__setattr__(self, "y", y)

    @property
    def npoints(self) -> int:
        return int(self.x.size)


def _to_ppm(x: np.ndarray, block: _Block, name: str, mhz: float | None, units: str | None = None) -> np.ndarray:
    if units is None:
        units = block.get("XUNITS") or "PPM"
    units = units.strip().upper()
    if units in ("PPM", "PPM.", "DELTA"):
        return x
    if units in ("HZ", "HERTZ"):
        if not mhz or mhz <= 0:
            raise InputError(
                f"{name}: ##XUNITS=HZ but no ##.OBSERVE FREQUENCY (MHz) to convert Hz to ppm; "
                "add the record or export the spectrum in ppm"
            )
        return x / mhz
    raise InputError(
        f"{name}: ##XUNITS={units} is not supported; export the 13C axis in PPM or HZ"
    )


def _pairs(lines, arity: int, name: str, label: str) -> np.ndarray:
    nums = []
    for raw in lines:
        line = raw.split("$$", 1)[0]
        for tok in re.split(r"[\s,;]+", line.strip()):
            if not tok:
                continue
            try:
                nums.append(float(tok))
            except ValueError:
                raise InputError(f"{name}: ##{label} holds {tok!r}, which is not a number") from None
    if len(nums) % arity:
        raise InputError(
            f"{name}: ##{label} has {len(nums)} numbers, not a multiple of {arity}; the table is incomplete"
        )
    return np.asarray(nums, dtype=float).reshape(-1, arity) if nums else np.zeros((0, arity))


def _spectrum_from_block(block: _Block, name: str) -> JcampSpectrum | None:
    title = block.get("TITLE") or ""
    data_type = (block.get("DATATYPE") or "").strip()
    nucleus = block.get(".OBSERVENUCLEUS")
    mhz = _num(block, ".OBSERVEFREQUENCY", name)
    if mhz is None:
        mhz = _num(block, "$SF", name)  # a common vendor-specific record
    if nucleus is not None:
        nuc = re.sub(r"[\^\s]", "", nucleus).upper()
        if nuc and nuc not in ("13C", "C13"):
            raise InputError(
                f"{name}: the observe nucleus is {nucleus.strip()}, not 13C; give a 13C (or DEPT) spectrum"
            )
    xfactor = _num(block, "XFACTOR", name, 1.0)
    yfactor = _num(block, "YFACTOR", name, 1.0)
    warnings: list[str] = []
    if block.get("NTUPLES") is not None and block.data("XYDATA") is None and block.data("PEAKTABLE") is None:
        return _ntuples_real_page(block, name, title, data_type, nucleus, mhz)
    peak = block.data("PEAKTABLE")
    if peak is not None:
        form, lines, _no = peak
        f = form.replace(" ", "").upper()
        arity = {"(XY..XY)": 2, "(XYW..XYW)": 3, "(XYM..XYM)": 3}.get(f)
        if arity is None:
            raise InputError(f"{name}: ##PEAK TABLE={form} is not supported; use (XY..XY)")
        arr = _pairs(lines, arity, name, "PEAK TABLE")
        x = _to_ppm(arr[:, 0] * xfactor, block, name, mhz)
        y = arr[:, 1] * yfactor
        return JcampSpectrum(title, data_type, nucleus, mhz, x, y, True, name, tuple(warnings))
    pts = block.data("XYPOINTS")
    if pts is not None:
        form, lines, _no = pts
        if form.replace(" ", "").upper() != "(XY..XY)":
            raise InputError(f"{name}: ##XYPOINTS={form} is not supported; use (XY..XY)")
        arr = _pairs(lines, 2, name, "XYPOINTS")
        x = _to_ppm(arr[:, 0] * xfactor, block, name, mhz)
        return JcampSpectrum(title, data_type, nucleus, mhz, x, arr[:, 1] * yfactor, False, name, ())
    xy = block.data("XYDATA")
    if xy is None:
        return None
    form, lines, no = xy
    if form.replace(" ", "").upper() != "(X++(Y..Y))":
        raise InputError(f"{name}: ##XYDATA={form} is not supported; use (X++(Y..Y))")
    first = _num(block, "FIRSTX", name)
    last = _num(block, "LASTX", name)
    npts = _num(block, "NPOINTS", name)
    delta = _num(block, "DELTAX", name)
    if last is None and first is not None and npts is not None and delta is not None:
        last = first + (npts - 1) * delta
    if first is None or last is None or npts is None:
        raise InputError(f"{name}: ##XYDATA needs ##FIRSTX, ##LASTX and ##NPOINTS; add the missing records")
    x, y, warnings = _sampled(lines, no, first, last, npts, xfactor, yfactor, name)
    x = _to_ppm(x, block, name, mhz)
    return JcampSpectrum(title, data_type, nucleus, mhz, x, y, False, name, tuple(warnings))


def _sampled(lines, no, first, last, npts, xfactor, yfactor, name):
    """Decode evenly sampled ``(X++(Y..Y))`` lines into x (file units) and y."""
    warnings: list[str] = []
    n = int(npts)
    if n != npts or n < 2:
        raise InputError(f"{name}: ##NPOINTS={npts:g} must be an integer of at least 2")
    decoded = decode_xydata_lines(lines, start_line=no + 1)
    ys: list[float] = []
    dx = (last - first) / (n - 1)
    worst = 0.0
    for x_line, line_ys, check in decoded:
        index = len(ys) - 1 if check else len(ys)
        expect = first + index * dx
        worst = max(worst, abs(x_line * xfactor - expect))
        ys.extend(line_ys)
    if len(ys) < n:
        raise InputError(
            f"{name}: ##XYDATA holds {len(ys)} points but ##NPOINTS={n}; the file is truncated or damaged"
        )
    if len(ys) > n:
        warnings.append(f"{name}: {len(ys) - n} ordinate(s) beyond ##NPOINTS={n} ignored")
        ys = ys[:n]
    if worst > abs(dx) * 1.5 + abs(xfactor):
        warnings.append(
            f"{name}: line abscissae deviate from ##FIRSTX/##LASTX by up to {worst:g} "
            "(X check); the axis was taken from ##FIRSTX/##LASTX"
        )
    return np.linspace(first, last, n), np.asarray(ys, dtype=float) * yfactor, warnings


def _list(block: _Block, label: str) -> list[str]:
    text = block.get(label)
    return [] if text is None else [t.strip() for t in text.split(",")]


def _ntuples_real_page(block: _Block, name, title, data_type, nucleus, mhz) -> JcampSpectrum:
    """The real (R) page of an NTUPLES block, the processed spectrum.

    The variables are described column-wise by ``##SYMBOL``, ``##UNITS``,
    ``##FIRST``, ``##LAST``, ``##FACTOR`` and ``##VAR_DIM``; the page is
    ``##DATA TABLE=(X++(R..R)), XYDATA``.
    """
    symbols = [s.upper() for s in _list(block, "SYMBOL")]
    table = None
    for lab, val, lines, no in block.records:
        if lab == "DATATABLE" and re.sub(r"\s", "", val).upper().startswith("(X++(R..R))"):
            table = (lines, no)
            break
    if table is None or "X" not in symbols or "R" not in symbols:
        raise InputError(
            f"{name}: NTUPLES block without a real page ##DATA TABLE=(X++(R..R)); export the processed "
            "spectrum as ##XYDATA=(X++(Y..Y)) or a ##PEAK TABLE"
        )
    ix, ir = symbols.index("X"), symbols.index("R")

    def pick(label, i, default=None):
        vals = _list(block, label)
        if i >= len(vals) or vals[i] == "":
            if default is None:
                raise InputError(f"{name}: NTUPLES ##{label} has no value for variable {symbols[i]}")
            return default
        try:
            return float(vals[i])
        except ValueError:
            raise InputError(f"{name}: NTUPLES ##{label} value {vals[i]!r} is not a number") from None

    first, last = pick("FIRST", ix), pick("LAST", ix)
    npts = pick("VARDIM", ix)
    xfactor, yfactor = pick("FACTOR", ix, 1.0), pick("FACTOR", ir, 1.0)
    units = _list(block, "UNITS")
    xunits = units[ix] if ix < len(units) and units[ix] else "PPM"
    x, y, warnings = _sampled(table[0], table[1], first, last, npts, xfactor, yfactor, name)
    x = _to_ppm(x, block, name, mhz, xunits)
    return JcampSpectrum(title, data_type, nucleus, mhz, x, y, False, name, tuple(warnings))


#: A DEPT experiment named in a header: DEPT-135, DEPT 90, dept135, DEPT_45.
_DEPT_LABEL = re.compile(r"DEPT[\W_]*(135|90|45)(?!\d)")

_PULSE_LABELS = (".PULSESEQUENCE", "PULSESEQUENCE", "$PULPROG", "$PULSEPROGRAM", ".PULSEPROGRAM")


def parse_jcamp(text: str, name: str = "JCAMP-DX text") -> tuple[JcampSpectrum, ...]:
    """Parse JCAMP-DX text into its data blocks (spectra and peak tables).

    Raises
    ------
    InputError
        Not JCAMP-DX, no data block, unsupported form, damaged data.
    """
    if not isinstance(text, str):
        raise InputError(f"{name}: JCAMP-DX content must be text")
    out = []
    for block in _blocks(text.lstrip("\ufeff"), name):
        spec = _spectrum_from_block(block, name)
        if spec is not None:
            pulse = next((block.get(lab) for lab in _PULSE_LABELS if block.get(lab)), None)
            if pulse:
                spec = dataclasses.replace(spec, pulse_sequence=pulse.strip().strip("<>"))
            out.append(spec)
    if not out:
        raise InputError(
            f"{name} has no ##XYDATA, ##XYPOINTS or ##PEAK TABLE block; export the processed "
            "13C spectrum or its peak table"
        )
    return tuple(out)


def _read_text(path: str) -> str:
    if not isinstance(path, (str, os.PathLike)):
        raise InputError(f"JCAMP-DX path must be text, got {type(path).__name__}")
    path = os.fspath(path)
    if not os.path.exists(path):
        raise InputError(f"JCAMP-DX file {path} not found; check the path")
    if os.path.isdir(path):
        raise InputError(f"JCAMP-DX file {path} is a directory; give the path of a .jdx/.dx file")
    try:
        with open(path, "rb") as fh:
            data = fh.read()
    except OSError as exc:
        raise InputError(f"cannot read JCAMP-DX file {path}: {exc.strerror or exc}") from None
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        # JCAMP-DX is ASCII; Latin-1 comments from older instruments are common.
        return data.decode("latin-1")


def read_jcamp_blocks(path) -> tuple[JcampSpectrum, ...]:
    """Every data block of a JCAMP-DX file (compound files hold several)."""
    return parse_jcamp(_read_text(path), os.fspath(path))


def read_jcamp(path) -> JcampSpectrum:
    """Read the first data block (spectrum or peak table) of a JCAMP-DX file.

    Parameters
    ----------
    path : str or os.PathLike

    Returns
    -------
    JcampSpectrum

    Raises
    ------
    InputError
        Missing/unreadable file, not JCAMP-DX, unsupported or damaged data.
    """
    return read_jcamp_blocks(path)[0]


# ----------------------------------------------------------------------------
# 13C + DEPT -> peak list


def _load(path, role: str) -> JcampSpectrum:
    if isinstance(path, JcampSpectrum):
        return path
    try:
        return read_jcamp(path)
    except InputError as exc:
        raise InputError(f"{role}: {exc}") from None


def _split_compound(blocks):
    """Roles of the blocks of a compound file: (c13, dept135, dept90, notes)."""
    by_kind: dict[str, JcampSpectrum] = {}
    for b in blocks:
        by_kind.setdefault(b.experiment, b)
    if "c13" not in by_kind:
        raise InputError(
            f"{blocks[0].source} holds {len(blocks)} spectra but none is a plain 13C spectrum "
            "(titles mention DEPT only); give the 13C spectrum file"
        )
    used = [by_kind.get(k) for k in ("c13", "dept135", "dept90")]
    notes = []
    if used[1] is not None or used[2] is not None:
        found = ", ".join(f"{k.upper()} '{by_kind[k].title}'" for k in ("dept135", "dept90") if k in by_kind)
        notes.append(f"compound file {blocks[0].source}: 13C '{used[0].title}' with {found} (by block titles)")
    ignored = len(blocks) - sum(u is not None for u in used)
    if ignored:
        notes.append(f"compound file {blocks[0].source}: {ignored} further block(s) ignored")
    return used[0], used[1], used[2], notes


def _check_dept_header(spec: JcampSpectrum, role: str) -> None:
    """Refuse a DEPT file whose header names another DEPT experiment.

    Only a header that names exactly one DEPT experiment, a different one,
    is a contradiction; a silent header (or one naming several) is accepted
    as given, without guessing.
    """
    labels = spec.dept_labels
    wanted = role.replace("-", "").lower()
    if len(labels) != 1 or wanted in labels:
        return
    kind, where = next(iter(labels.items()))
    named = "DEPT-" + kind[4:]
    option = f" (--{kind} on the command line)" if kind in ("dept135", "dept90") else ""
    raise InputError(
        f"the {role} spectrum {spec.source} is a {named} spectrum by its header ({where}); "
        f"give it as the {named} spectrum{option}, or check the files"
    )


def peaks_from_jcamp(c13_path, dept135_path=None, dept90_path=None, settings: PickSettings | None = None) -> PeakList:
    """A peak list from a 13C JCAMP-DX file, with DEPT multiplicities when given.

    Parameters
    ----------
    c13_path : str or os.PathLike or JcampSpectrum
        The broadband-decoupled 13C spectrum or its peak table.
    dept135_path, dept90_path : optional
        DEPT-135 / DEPT-90 spectra (or signed peak tables) of the same sample.
        When neither is given and ``c13_path`` is a compound file with
        several blocks, the blocks are told apart by their titles or
        pulse-sequence records ("DEPT-135", "DEPT90", ...).  A DEPT file
        whose header names another DEPT experiment is refused; one whose
        line signs do not fit its experiment gives a warning.
    settings : PickSettings, optional

    Returns
    -------
    PeakList
        Lines in descending shift order, counts not given (intensities are
        not quantitative); ``provenance`` records how they were obtained and
        ``observe_mhz`` the 13C frequency when the file gives it.
    """
    if settings is None:
        settings = PickSettings()
    notes: list[str] = []
    if not isinstance(c13_path, JcampSpectrum) and dept135_path is None and dept90_path is None:
        try:
            blocks = read_jcamp_blocks(c13_path)
        except InputError as exc:
            raise InputError(f"13C spectrum: {exc}") from None
        if len(blocks) > 1:
            c13_path, dept135_path, dept90_path, notes = _split_compound(blocks)
    c13 = _load(c13_path, "13C spectrum")
    picked = pick_peaks(c13, settings)
    if not picked.shifts:
        raise InputError(
            f"no lines found in {c13.source}: nothing rises {settings.snr:g} x above the noise; "
            "lower the threshold or check the file"
        )
    shifts = list(picked.shifts)
    provenance = notes + [
        f"13C lines from peak table {c13.source}" if c13.is_peak_table else picked.describe()
    ]
    warnings = list(c13.warnings)
    dept_lines: dict[str, tuple[tuple[float, float], ...] | None] = {"DEPT-135": None, "DEPT-90": None}
    signed: dict[str, tuple[tuple[float, float], ...] | None] = {"DEPT-135": None, "DEPT-90": None}
    names: dict[str, str] = {}
    for role, path, both in (("DEPT-135", dept135_path, True), ("DEPT-90", dept90_path, False)):
        if path is None:
            continue
        spec = _load(path, f"{role} spectrum")
        _check_dept_header(spec, role)
        dp = pick_peaks(spec, settings, both_signs=both)
        provenance.append(
            f"{role} lines from peak table {spec.source}" if spec.is_peak_table else f"{role}: {dp.describe()}"
        )
        warnings.extend(spec.warnings)
        dept_lines[role] = tuple(zip(dp.shifts, dp.heights))
        # The signs tell a DEPT-135 from a DEPT-90 (dept_sign_warnings); the
        # DEPT-90 lines classified above are the positive ones only.
        if both:
            signed[role] = dept_lines[role]
        else:
            every = pick_peaks(spec, settings, both_signs=True)
            signed[role] = tuple(zip(every.shifts, every.heights))
        names[role] = f"the {role} spectrum ({spec.source})"
    warnings.extend(dept_sign_warnings(
        signed["DEPT-135"], signed["DEPT-90"],
        dept90_negative_fraction=max(0.3, settings.dept90_min_fraction),
        dept135_name=names.get("DEPT-135", ""), dept90_name=names.get("DEPT-90", ""),
    ))
    hyd, notes_dept = classify_multiplicities(
        shifts,
        dept_lines["DEPT-135"],
        dept_lines["DEPT-90"],
        match_tolerance_ppm=settings.match_tolerance_ppm,
        dept90_min_fraction=settings.dept90_min_fraction,
    )
    warnings.extend(notes_dept)
    peaks = tuple(Peak(round(s, 2), h, None) for s, h in zip(shifts, hyd))
    # Rounding can make two picked lines identical: merge them as typed lists do.
    merged = _merge(peaks, tuple(warnings))
    return PeakList(merged.peaks, merged.warnings, tuple(provenance), c13.observe_mhz)
