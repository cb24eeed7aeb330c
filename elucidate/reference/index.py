"""Reference spectra: library entries, a compact searchable index and its query.

A :class:`ReferenceIndex` holds many assigned 13C spectra (each a list of
lines with multiplicity and carbon count) of known constitutions.  Several
spectra may belong to one constitution (repeat measurements, other
solvents, stereoisomers); every spectrum is kept and queried, and a query
reports each constitution once, with its best-matching spectrum.

:meth:`ReferenceIndex.nearest` returns the reference constitutions whose
spectra are most similar to an observed peak list, by the line-matching
similarity of :mod:`elucidate.reference.similarity`, provably the same
answer as scoring every spectrum: an upper bound of the similarity is
computed for all spectra at once and the exact score only for spectra whose
bound can still reach the list.

The index shipped with the package (``elucidate/data/reference_spectra.npz``)
is built by ``elucidate build-table`` from the open nmrshiftdb2 data
(Steinbeck, Krause, Kuhn, *J. Chem. Inf. Comput. Sci.* 2003, 43, 1733 — from
memory); see docs/reference-library.md for its terms.  Neighbours are
context for the chemist and seeds for a search, never answers: a compound
absent from the library cannot be found by looking it up.
"""

from __future__ import annotations

import io
import json
import math
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Iterable, Sequence

import numpy as np

from ..errors import InputError
from ..formula import Formula, parse_formula
from ..spectrum.peaks import Peak, PeakList
from .similarity import DEFAULT_TOLERANCE, UNKNOWN, batch_scores, match_lines, upper_bounds

__all__ = [
    "ReferenceEntry",
    "ReferenceHit",
    "ReferenceIndex",
    "INDEX_FORMAT",
    "DEFAULT_FORMULA_BONUS",
    "default_index_path",
    "default_index",
    "nearest_spectra",
]

#: Format tag written into every index file.
INDEX_FORMAT = "elucidate-reference-index/1"

#: Ranking bonus of a reference with the query's formula, on the similarity
#: scale: ``score = (similarity + bonus * same_formula) / (1 + bonus)``.
#: 0.05 lets an equal formula outweigh about one line in twenty.
DEFAULT_FORMULA_BONUS = 0.05

#: Largest number of neighbours one query may ask for.
MAX_K = 1000

#: Shifts are stored in hundredths of a ppm (int16), so this window is hard.
SHIFT_WINDOW = (-300.0, 320.0)

_NAMES = {0: "C", 1: "CH", 2: "CH2", 3: "CH3", None: "?"}
_CHUNK = 512        # first batch of exact scores; later batches double
_BLOCK = 256        # rows per padded block inside a batch
_EPS = 1e-9


# ---------------------------------------------------------------------------
# domain objects
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class ReferenceEntry:
    """One reference spectrum of a known constitution.

    Attributes
    ----------
    smiles : str
        Stereo-free canonical SMILES (RDKit) of the constitution.
    formula : str
        Molecular formula (Hill order as RDKit writes it, charges kept; an
        index stores it as :func:`elucidate.formula.parse_formula` writes it
        when that can read it).
    lines : tuple of (float, int or None, int)
        ``(shift ppm, attached hydrogens 0-3 or None, carbons under the
        line)``, highest shift first; identical (shift, multiplicity) lines
        are merged into one line with their carbons added.
    source_id : str
        Identifier of the spectrum in its origin (database number, lab
        record id or ``record N``).
    origin : str
        Name of the library, e.g. ``nmrshiftdb2`` or a lab file name.
    solvent : str or None
        Solvent label when the source gave one.
    """

    smiles: str
    formula: str
    lines: tuple[tuple[float, int | None, int], ...]
    source_id: str
    origin: str
    solvent: str | None = None

    def __post_init__(self) -> None:
        for name in ("smiles", "formula", "source_id", "origin"):
            value = getattr(self, name)
            if not isinstance(value, str) or not value.strip():
                raise InputError(f"reference entry: {name} {value!r} must be non-empty text")
        if self.solvent is not None and not isinstance(self.solvent, str):
            raise InputError(f"reference entry {self.source_id}: solvent {self.solvent!r} must be text or None")
        if not self.lines:
            raise InputError(f"reference entry {self.source_id}: no 13C lines; give at least one shift")
        for line in self.lines:
            if not (isinstance(line, tuple) and len(line) == 3):
                raise InputError(f"reference entry {self.source_id}: line {line!r} must be "
                                 "(shift, hydrogens or None, count)")
            shift, hyd, count = line
            if isinstance(shift, bool) or not isinstance(shift, (int, float)) or not math.isfinite(shift) \
                    or not SHIFT_WINDOW[0] <= shift <= SHIFT_WINDOW[1]:
                raise InputError(f"reference entry {self.source_id}: shift {shift!r} is not a number "
                                 f"between {SHIFT_WINDOW[0]:g} and {SHIFT_WINDOW[1]:g} ppm")
            if hyd is not None and (isinstance(hyd, bool) or not isinstance(hyd, int) or not 0 <= hyd <= 3):
                raise InputError(f"reference entry {self.source_id}: hydrogens {hyd!r} must be 0-3 or None")
            if isinstance(count, bool) or not isinstance(count, int) or not 1 <= count <= 10000:
                raise InputError(f"reference entry {self.source_id}: count {count!r} must be a positive integer")

    @property
    def n_carbons(self) -> int:
        """Carbons covered by the lines."""
        return sum(c for _, _, c in self.lines)

    def to_peaks(self) -> PeakList:
        """The entry's lines as a peak list (with multiplicities and counts)."""
        return PeakList(tuple(Peak(float(s), h, c) for s, h, c in self.lines))

    def to_dict(self) -> dict:
        """Plain data: smiles, formula, lines ``[[shift, mult, count], ...]``, ids."""
        return {
            "smiles": self.smiles, "formula": self.formula,
            "lines": [[s, _NAMES[h] if h is not None else None, c] for s, h, c in self.lines],
            "source_id": self.source_id, "origin": self.origin, "solvent": self.solvent,
        }


@dataclass(frozen=True)
class ReferenceHit:
    """A reference constitution whose spectrum resembles the observed one.

    Attributes
    ----------
    entry : ReferenceEntry
        The best-matching spectrum of this constitution.
    similarity : float
        Line-matching similarity in [0, 1] (see
        :mod:`elucidate.reference.similarity`).
    score : float
        Ranking score in [0, 1]: the similarity plus the formula bonus,
        ``(similarity + bonus * same_formula) / (1 + bonus)``; equal to the
        similarity when no formula was given.
    same_formula : bool or None
        Whether the reference has the query's formula (None: no formula
        given).
    matched_lines : int
        Lines paired within the tolerance.
    query_lines, reference_lines : int
        Line counts of the two spectra.
    mean_deviation_ppm : float or None
        Mean absolute shift difference of the paired lines.
    spectra : int
        Spectra of this constitution in the library (the best one is shown).
    """

    entry: ReferenceEntry
    similarity: float
    score: float
    same_formula: bool | None
    matched_lines: int
    query_lines: int
    reference_lines: int
    mean_deviation_ppm: float | None
    spectra: int

    @property
    def smiles(self) -> str:
        return self.entry.smiles

    @property
    def formula(self) -> str:
        return self.entry.formula

    def to_dict(self) -> dict:
        """Plain data for the JSON result and the renderers."""
        e = self.entry
        return {
            "smiles": e.smiles,
            "formula": e.formula,
            "similarity": self.similarity,
            "score": self.score,
            "same_formula": self.same_formula,
            "matched_lines": self.matched_lines,
            "query_lines": self.query_lines,
            "reference_lines": self.reference_lines,
            "mean_deviation_ppm": self.mean_deviation_ppm,
            "source": f"{e.origin} {e.source_id}",
            "origin": e.origin,
            "source_id": e.source_id,
            "solvent": e.solvent,
            "spectra": self.spectra,
            "lines": [[s, _NAMES[h] if h is not None else None, c] for s, h, c in e.lines],
        }


# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------

def _norm_formula(text: str) -> str:
    """Hill formula when elucidate can read it, else the text without blanks."""
    try:
        return parse_formula(text).hill
    except InputError:
        return "".join(text.split())


def _query_formula(formula) -> str | None:
    if formula is None:
        return None
    if isinstance(formula, Formula):
        return formula.hill
    if isinstance(formula, str):
        return parse_formula(formula).hill
    raise InputError(f"formula {formula!r} must be text such as C8H8O2 or a Formula")


def _query_lines(peaks) -> tuple[np.ndarray, np.ndarray]:
    if isinstance(peaks, PeakList):
        items = peaks.peaks
    elif isinstance(peaks, (list, tuple)) and all(isinstance(p, Peak) for p in peaks):
        items = tuple(peaks)
    else:
        raise InputError("peaks must be a PeakList (elucidate.spectrum.peaks.parse_peaks) or a list of Peak")
    if not items:
        raise InputError("the peak list is empty; give at least one 13C line")
    shift = np.array([float(p.shift) for p in items])
    if not np.all((shift >= SHIFT_WINDOW[0]) & (shift <= SHIFT_WINDOW[1])):
        bad = float(shift[(shift < SHIFT_WINDOW[0]) | (shift > SHIFT_WINDOW[1])][0])
        raise InputError(f"peak at {bad:g} ppm is outside {SHIFT_WINDOW[0]:g}..{SHIFT_WINDOW[1]:g} ppm; "
                         "check the shift")
    chan = np.array([UNKNOWN if p.hydrogens is None else p.hydrogens for p in items], dtype=np.int8)
    return shift, chan


def _canonical_constitution(smiles: str, where: str) -> str:
    from rdkit import Chem, rdBase

    with rdBase.BlockLogs():  # our error names the record instead of RDKit's parser log
        mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        raise InputError(f"{where}: RDKit cannot read SMILES {smiles!r}; check the structure")
    return Chem.MolToSmiles(mol, isomericSmiles=False)


def _text_array(items: Sequence[str]) -> np.ndarray:
    for s in items:
        if "\n" in s:
            raise InputError(f"text {s!r} contains a line break; remove it")
    return np.frombuffer("\n".join(items).encode("utf-8"), dtype=np.uint8)


def _text_list(arr: np.ndarray) -> tuple[str, ...]:
    data = arr.tobytes()
    return tuple(data.decode("utf-8").split("\n")) if data else ()


def write_npz(path, arrays: dict[str, np.ndarray]) -> None:
    """Write a compressed ``.npz`` byte for byte reproducibly (fixed zip dates, sorted names)."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(path.name + ".tmp")
    with zipfile.ZipFile(tmp, "w", compression=zipfile.ZIP_DEFLATED, compresslevel=9) as zf:
        for name in sorted(arrays):
            buf = io.BytesIO()
            np.lib.format.write_array(buf, np.ascontiguousarray(arrays[name]), allow_pickle=False)
            info = zipfile.ZipInfo(name + ".npy", date_time=(1980, 1, 1, 0, 0, 0))
            info.compress_type = zipfile.ZIP_DEFLATED
            info.external_attr = 0o644 << 16
            zf.writestr(info, buf.getvalue(), compress_type=zipfile.ZIP_DEFLATED, compresslevel=9)
    tmp.replace(path)


# ---------------------------------------------------------------------------
# the index
# ---------------------------------------------------------------------------

class ReferenceIndex:
    """Many reference spectra, stored compactly and queried by similarity.

    Build one with :meth:`from_entries`, :meth:`load` (a saved index),
    :func:`elucidate.reference.load_reference_library` (a lab's SDF or JSON
    lines file) or :func:`default_index` (the shipped nmrshiftdb2 index).
    Combine several with :meth:`merge`.

    Lines are kept as int16 hundredths of a ppm, so shifts are rounded to
    0.01 ppm.
    """

    def __init__(self, *, smiles, formulas, spec_const, spec_source, spec_origin, origins,
                 spec_solvent, solvents, offsets, line_key, line_chan, line_count, header=None):
        self.smiles: tuple[str, ...] = tuple(smiles)
        self.formulas: tuple[str, ...] = tuple(formulas)
        self.spec_const = np.asarray(spec_const, dtype=np.int32)
        self.spec_source: tuple[str, ...] = tuple(spec_source)
        self.spec_origin = np.asarray(spec_origin, dtype=np.int16)
        self.origins: tuple[str, ...] = tuple(origins)
        self.spec_solvent = np.asarray(spec_solvent, dtype=np.int16)
        self.solvents: tuple[str, ...] = tuple(solvents)
        self.offsets = np.asarray(offsets, dtype=np.int64)
        self.line_key = np.asarray(line_key, dtype=np.int32)
        self.line_chan = np.asarray(line_chan, dtype=np.int8)
        self.line_count = np.asarray(line_count, dtype=np.int16)
        self.header: dict = dict(header or {})
        n_spec = len(self.spec_const)
        if not (len(self.smiles) == len(self.formulas)
                and len(self.spec_source) == n_spec == len(self.spec_origin) == len(self.spec_solvent)
                and len(self.offsets) == n_spec + 1 and self.offsets[0] == 0
                and self.offsets[-1] == len(self.line_key) == len(self.line_chan) == len(self.line_count)
                and (n_spec == 0 or int(self.spec_const.max()) < len(self.smiles))):
            raise InputError("reference index is damaged (inconsistent array sizes); rebuild it")
        if n_spec == 0:
            raise InputError("reference library is empty; give at least one spectrum")
        self._prepared = False

    # -- sizes -----------------------------------------------------------
    def __len__(self) -> int:
        """Number of spectra."""
        return len(self.spec_const)

    @property
    def n_spectra(self) -> int:
        return len(self.spec_const)

    @property
    def n_constitutions(self) -> int:
        return len(self.smiles)

    def __repr__(self) -> str:
        return (f"ReferenceIndex({self.n_spectra} spectra, {self.n_constitutions} constitutions, "
                f"origins={list(self.origins)})")

    # -- construction ----------------------------------------------------
    @classmethod
    def from_entries(cls, entries: Iterable[ReferenceEntry], header: dict | None = None) -> "ReferenceIndex":
        """Index a sequence of entries (order kept; SMILES canonicalised stereo-free).

        Raises
        ------
        InputError
            When an entry is not a ReferenceEntry or its SMILES does not parse.
        """
        smiles, formulas, const_of = [], [], {}
        canon_cache: dict[str, str] = {}
        spec_const, spec_source, spec_origin, spec_solvent = [], [], [], []
        origins: dict[str, int] = {}
        solvents: dict[str, int] = {}
        offsets = [0]
        keys, chans, counts = [], [], []
        for k, e in enumerate(entries, start=1):
            if not isinstance(e, ReferenceEntry):
                raise InputError(f"reference entry {k}: expected a ReferenceEntry, got {type(e).__name__}")
            can = canon_cache.get(e.smiles)
            if can is None:
                can = canon_cache[e.smiles] = _canonical_constitution(e.smiles, f"reference entry {e.source_id}")
            cid = const_of.get(can)
            if cid is None:
                cid = const_of[can] = len(smiles)
                smiles.append(can)
                formulas.append(_norm_formula(e.formula))
            spec_const.append(cid)
            spec_source.append(e.source_id)
            spec_origin.append(origins.setdefault(e.origin, len(origins)))
            spec_solvent.append(-1 if e.solvent is None else solvents.setdefault(e.solvent, len(solvents)))
            merged: dict[tuple[int, int], int] = {}
            for s, h, c in e.lines:
                key = (UNKNOWN if h is None else h, int(round(s * 100)))
                merged[key] = merged.get(key, 0) + c
            for (ch, kk), c in sorted(merged.items()):
                chans.append(ch)
                keys.append(kk)
                counts.append(min(c, 32767))
            offsets.append(len(keys))
        return cls(smiles=smiles, formulas=formulas, spec_const=spec_const, spec_source=spec_source,
                   spec_origin=spec_origin, origins=list(origins), spec_solvent=spec_solvent,
                   solvents=list(solvents), offsets=offsets, line_key=keys, line_chan=chans,
                   line_count=counts, header=header)

    @classmethod
    def merge(cls, indexes: Sequence["ReferenceIndex"]) -> "ReferenceIndex":
        """One index holding the spectra of several (constitutions shared by SMILES)."""
        indexes = list(indexes)
        if not indexes or not all(isinstance(x, ReferenceIndex) for x in indexes):
            raise InputError("give one or more ReferenceIndex objects to merge")
        if len(indexes) == 1:
            return indexes[0]
        smiles, formulas, const_of = [], [], {}
        origins: dict[str, int] = {}
        solvents: dict[str, int] = {}
        parts = {k: [] for k in ("const", "source", "origin", "solvent", "key", "chan", "count", "len")}
        for ix in indexes:
            cmap = np.empty(len(ix.smiles), dtype=np.int32)
            for c, (s, f) in enumerate(zip(ix.smiles, ix.formulas)):
                cid = const_of.get(s)
                if cid is None:
                    cid = const_of[s] = len(smiles)
                    smiles.append(s)
                    formulas.append(f)
                cmap[c] = cid
            omap = np.array([origins.setdefault(o, len(origins)) for o in ix.origins], dtype=np.int16)
            smap = np.array([solvents.setdefault(s, len(solvents)) for s in ix.solvents] + [-1], dtype=np.int16)
            parts["const"].append(cmap[ix.spec_const])
            parts["source"].extend(ix.spec_source)
            parts["origin"].append(omap[ix.spec_origin])
            parts["solvent"].append(smap[ix.spec_solvent])  # -1 maps to the appended -1
            parts["key"].append(ix.line_key)
            parts["chan"].append(ix.line_chan)
            parts["count"].append(ix.line_count)
            parts["len"].append(np.diff(ix.offsets))
        lengths = np.concatenate(parts["len"])
        offsets = np.concatenate([[0], np.cumsum(lengths)])
        header = {"format": INDEX_FORMAT, "merged_from": [ix.header for ix in indexes]}
        return cls(smiles=smiles, formulas=formulas, spec_const=np.concatenate(parts["const"]),
                   spec_source=parts["source"], spec_origin=np.concatenate(parts["origin"]),
                   origins=list(origins), spec_solvent=np.concatenate(parts["solvent"]),
                   solvents=list(solvents), offsets=offsets, line_key=np.concatenate(parts["key"]),
                   line_chan=np.concatenate(parts["chan"]), line_count=np.concatenate(parts["count"]),
                   header=header)

    # -- persistence -----------------------------------------------------
    def save(self, path) -> None:
        """Write the index as a compressed ``.npz`` (reproducible bytes) with a JSON header."""
        if int(self.line_key.min()) < -32768 or int(self.line_key.max()) > 32767:
            raise InputError("a shift does not fit the index file (int16 hundredths of a ppm)")
        header = dict(self.header)
        header["format"] = INDEX_FORMAT
        header["origins"] = list(self.origins)
        header["solvents"] = list(self.solvents)
        write_npz(path, {
            "header": np.frombuffer(json.dumps(header, sort_keys=True).encode("utf-8"), dtype=np.uint8),
            "smiles": _text_array(self.smiles),
            "formulas": _text_array(self.formulas),
            "spec_source": _text_array(self.spec_source),
            "spec_const": self.spec_const.astype(np.int32),
            "spec_origin": self.spec_origin.astype(np.int16),
            "spec_solvent": self.spec_solvent.astype(np.int16),
            "spec_lines": np.diff(self.offsets).astype(np.int32),
            "line_shift": self.line_key.astype(np.int16),
            "line_h": self.line_chan.astype(np.int8),
            "line_count": self.line_count.astype(np.int16),
        })

    @classmethod
    def load(cls, path) -> "ReferenceIndex":
        """Read an index written by :meth:`save`."""
        path = Path(path)
        try:
            with np.load(path, allow_pickle=False) as z:
                header = json.loads(z["header"].tobytes().decode("utf-8"))
                if header.get("format") != INDEX_FORMAT:
                    raise InputError(f"{path} is not a reference index ({header.get('format')!r}); "
                                     "rebuild it with 'elucidate build-table --only reference'")
                smiles = _text_list(z["smiles"])
                formulas = _text_list(z["formulas"])
                sources = _text_list(z["spec_source"])
                lengths = z["spec_lines"].astype(np.int64)
                arrays = {name: z[name] for name in ("spec_const", "spec_origin", "spec_solvent",
                                                     "line_shift", "line_h", "line_count")}
        except FileNotFoundError:
            raise InputError(f"reference index {path} not found") from None
        except (OSError, ValueError, KeyError, zipfile.BadZipFile) as exc:
            raise InputError(f"cannot read reference index {path}: {exc}; rebuild it") from None
        return cls(smiles=smiles, formulas=formulas, spec_const=arrays["spec_const"], spec_source=sources,
                   spec_origin=arrays["spec_origin"], origins=header.pop("origins", []),
                   spec_solvent=arrays["spec_solvent"], solvents=header.pop("solvents", []),
                   offsets=np.concatenate([[0], np.cumsum(lengths)]),
                   line_key=arrays["line_shift"].astype(np.int32), line_chan=arrays["line_h"],
                   line_count=arrays["line_count"], header=header)

    # -- entries ---------------------------------------------------------
    def entry(self, spectrum: int) -> ReferenceEntry:
        """The entry of spectrum number ``spectrum`` (0-based)."""
        if not 0 <= spectrum < self.n_spectra:
            raise InputError(f"spectrum {spectrum} is not in the index (0..{self.n_spectra - 1})")
        a, b = int(self.offsets[spectrum]), int(self.offsets[spectrum + 1])
        lines = sorted(((int(k) / 100.0, None if c == UNKNOWN else int(c), int(n))
                        for k, c, n in zip(self.line_key[a:b], self.line_chan[a:b], self.line_count[a:b])),
                       key=lambda t: (-t[0], 9 if t[1] is None else t[1]))
        cid = int(self.spec_const[spectrum])
        sv = int(self.spec_solvent[spectrum])
        return ReferenceEntry(smiles=self.smiles[cid], formula=self.formulas[cid], lines=tuple(lines),
                              source_id=self.spec_source[spectrum],
                              origin=self.origins[int(self.spec_origin[spectrum])],
                              solvent=None if sv < 0 else self.solvents[sv])

    def entries(self):
        """Every entry, in index order."""
        return (self.entry(i) for i in range(self.n_spectra))

    # -- query -----------------------------------------------------------
    def _prepare(self) -> None:
        if self._prepared:
            return
        n = np.diff(self.offsets)
        self._n_lines = n.astype(np.int64)
        self._line_spec = np.repeat(np.arange(self.n_spectra, dtype=np.int64), n)
        self._line_shift = self.line_key.astype(float) / 100.0
        unknown_lines = np.bincount(self._line_spec, weights=(self.line_chan == UNKNOWN), minlength=self.n_spectra)
        self._spec_known = unknown_lines == 0
        # line order by shift within each spectrum (for queries without full multiplicities)
        self._by_shift = np.argsort(self._line_spec * 65536 + (self.line_key.astype(np.int64) + 32768),
                                    kind="stable")
        self._grid = (int(self.line_key.min()), int(self.line_key.max()))
        self._const_spectra = np.bincount(self.spec_const, minlength=self.n_constitutions)
        fids: dict[str, int] = {}
        self._const_formula = np.array([fids.setdefault(f, len(fids)) for f in self.formulas], dtype=np.int64)
        self._formula_ids = fids
        self._prepared = True

    def _exact_totals(self, rows: np.ndarray, q_shift, q_chan, tolerance: float) -> np.ndarray:
        """Best pairing totals for the spectra ``rows`` (padded blocks of similar length).

        Channel order when the query and the reference have every
        multiplicity, shift order otherwise (see :mod:`.similarity`).
        """
        out = np.empty(len(rows))
        q_known = bool(np.all(q_chan != UNKNOWN))
        by_chan = np.lexsort((q_shift, q_chan))
        by_shift = np.lexsort((q_chan, q_shift))
        for channel_mode in (True, False):
            part = np.nonzero(self._spec_known[rows] == channel_mode if q_known else
                              np.full(len(rows), not channel_mode))[0]
            if len(part) == 0:
                continue
            qo = by_chan if channel_mode else by_shift
            perm = None if channel_mode else self._by_shift
            lengths = self._n_lines[rows[part]]
            order = part[np.argsort(lengths, kind="stable")]
            for start in range(0, len(order), _BLOCK):
                sel = order[start:start + _BLOCK]
                rr = rows[sel]
                n = self._n_lines[rr]
                L = int(n.max())
                valid = np.arange(L)[None, :] < n[:, None]
                pos = np.where(valid, self.offsets[rr][:, None] + np.arange(L)[None, :], 0)
                if perm is not None:
                    pos = perm[pos]
                shift = np.where(valid, self._line_shift[pos], 1.0e6)
                chan = np.where(valid, self.line_chan[pos], UNKNOWN)
                out[sel] = batch_scores(q_shift[qo], q_chan[qo], shift, chan, tolerance)
        return out

    def nearest(self, peaks, *, formula=None, k: int = 5, tolerance: float = DEFAULT_TOLERANCE,
                formula_bonus: float = DEFAULT_FORMULA_BONUS, min_similarity: float = 0.0,
                same_formula_only: bool = False) -> list[ReferenceHit]:
        """The ``k`` reference constitutions whose spectra best match ``peaks``.

        Parameters
        ----------
        peaks : PeakList
            Observed lines; multiplicities (DEPT) are used where known,
            carbon counts are not used.
        formula : str or Formula, optional
            The sample's formula: references with the same formula get the
            ranking bonus and are flagged ``same_formula``.
        k : int
            Number of constitutions returned (1-1000); fewer when the library
            has fewer above ``min_similarity``.
        tolerance : float
            Lines this far apart (ppm) or more never pair (default 4).
        formula_bonus : float
            Ranking bonus of an equal formula (default 0.05; 0 = rank by
            similarity alone).
        min_similarity : float
            Drop constitutions below this similarity.
        same_formula_only : bool
            Only references with the query's formula (needs ``formula``).

        Returns
        -------
        list of ReferenceHit
            Best first: score descending, then SMILES; each constitution
            once, with its best-matching spectrum.
        """
        if isinstance(k, bool) or not isinstance(k, int) or not 1 <= k <= MAX_K:
            raise InputError(f"k={k!r}: ask for 1 to {MAX_K} neighbours")
        if isinstance(tolerance, bool) or not isinstance(tolerance, (int, float)) or not 0.05 <= tolerance <= 50:
            raise InputError(f"tolerance={tolerance!r}: give a tolerance in ppm between 0.05 and 50")
        if isinstance(formula_bonus, bool) or not isinstance(formula_bonus, (int, float)) \
                or not 0 <= formula_bonus <= 1:
            raise InputError(f"formula_bonus={formula_bonus!r}: give a number between 0 and 1")
        if isinstance(min_similarity, bool) or not isinstance(min_similarity, (int, float)) \
                or not 0 <= min_similarity <= 1:
            raise InputError(f"min_similarity={min_similarity!r}: give a number between 0 and 1")
        q_formula = _query_formula(formula)
        if same_formula_only and q_formula is None:
            raise InputError("same_formula_only needs the sample's formula; pass formula=...")
        q_shift, q_chan = _query_lines(peaks)
        self._prepare()
        tolerance = float(tolerance)
        nq = len(q_shift)

        if q_formula is None:
            same_spec = None
            bonus = 0.0
        else:
            fid = self._formula_ids.get(q_formula, -1)
            same_spec = self._const_formula[self.spec_const] == fid
            bonus = float(formula_bonus)

        n_ref = self._n_lines
        denom = np.maximum(n_ref, nq).astype(float)
        lo, hi = self._grid
        bound = upper_bounds(q_shift, q_chan, self.line_key, self.line_chan, self._line_spec,
                             self.n_spectra, lo, hi, tolerance)
        bound = np.minimum(np.minimum(bound, nq), n_ref) / denom + _EPS
        rank_bound = bound if same_spec is None else (bound + bonus * same_spec) / (1.0 + bonus)
        eligible = bound >= min_similarity
        if same_formula_only:
            eligible &= same_spec
        cand = np.nonzero(eligible)[0]
        cand = cand[np.argsort(-rank_bound[cand], kind="stable")]

        best: dict[int, tuple[float, float, int]] = {}  # constitution -> (score, similarity, spectrum)
        pos, chunk = 0, _CHUNK
        while pos < len(cand):
            rows = cand[pos:pos + chunk]
            pos += len(rows)
            sim = self._exact_totals(rows, q_shift, q_chan, tolerance) / denom[rows]
            sim = np.minimum(sim, 1.0)
            score = sim if same_spec is None else (sim + bonus * same_spec[rows]) / (1.0 + bonus)
            for r, s, sc in zip(rows.tolist(), sim.tolist(), score.tolist()):
                if s < min_similarity:
                    continue
                c = int(self.spec_const[r])
                old = best.get(c)
                if old is None or sc > old[0] + 1e-12 or (abs(sc - old[0]) <= 1e-12 and r < old[2]):
                    best[c] = (sc, s, r)
            chunk *= 2
            if pos < len(cand) and len(best) >= k:
                kth = sorted((v[0] for v in best.values()), reverse=True)[k - 1]
                if kth > rank_bound[cand[pos]] + _EPS:
                    break
        ranked = sorted(best.items(), key=lambda kv: (-round(kv[1][0], 9), self.smiles[kv[0]]))[:k]
        return [self._hit(c, r, q_shift, q_chan, q_formula, bonus, tolerance) for c, (_, _, r) in ranked]

    def _hit(self, const: int, spectrum: int, q_shift, q_chan, q_formula, bonus, tolerance) -> ReferenceHit:
        a, b = int(self.offsets[spectrum]), int(self.offsets[spectrum + 1])
        ref = list(zip(self._line_shift[a:b].tolist(), self.line_chan[a:b].tolist()))
        m = match_lines(list(zip(q_shift.tolist(), q_chan.tolist())), ref, tolerance)
        same = None if q_formula is None else bool(self._const_formula[const] == self._formula_ids.get(q_formula, -1))
        score = m.similarity if same is None else (m.similarity + bonus * same) / (1.0 + bonus)
        return ReferenceHit(
            entry=self.entry(spectrum),
            similarity=round(min(m.similarity, 1.0), 6),
            score=round(min(score, 1.0), 6),
            same_formula=same,
            matched_lines=len(m.pairs),
            query_lines=len(q_shift),
            reference_lines=b - a,
            mean_deviation_ppm=None if m.mean_deviation is None else round(m.mean_deviation, 3),
            spectra=int(self._const_spectra[const]),
        )


# ---------------------------------------------------------------------------
# the shipped index
# ---------------------------------------------------------------------------

def default_index_path() -> Path:
    """Path of the reference index shipped inside the package."""
    from ..datafiles import data_file

    return data_file("reference_spectra.npz")


_DEFAULT: ReferenceIndex | None = None


def default_index() -> ReferenceIndex:
    """The shipped nmrshiftdb2 reference index, loaded once per process (lazily)."""
    global _DEFAULT
    if _DEFAULT is None:
        path = default_index_path()
        if not path.exists():
            raise InputError(f"the reference index {path} is missing; reinstall the package or rebuild it "
                             "with 'elucidate build-table --data TRAIN.jsonl.gz --only reference'")
        _DEFAULT = ReferenceIndex.load(path)
    return _DEFAULT


def nearest_spectra(peaks, *, formula=None, k: int = 5, library=None, tolerance: float = DEFAULT_TOLERANCE,
                    formula_bonus: float = DEFAULT_FORMULA_BONUS, min_similarity: float = 0.0,
                    same_formula_only: bool = False) -> list[ReferenceHit]:
    """The ``k`` reference constitutions whose 13C spectra best match ``peaks``.

    Parameters
    ----------
    peaks : PeakList
        Observed lines (shift, multiplicity or unknown, count ignored).
    formula : str or Formula, optional
        The sample's formula (ranking bonus and ``same_formula`` flag).
    k : int
        Number of neighbours (1-1000).
    library : ReferenceIndex or sequence of ReferenceIndex, optional
        Where to look; default the shipped nmrshiftdb2 index.  A sequence is
        merged on every call: merge once with `ReferenceIndex.merge` for
        repeated queries.
    tolerance, formula_bonus, min_similarity, same_formula_only
        See `ReferenceIndex.nearest`.

    Returns
    -------
    list of ReferenceHit
        Score descending, then SMILES.  Neighbours are context and search
        seeds, not identifications: confirm any structure with reference
        standards and orthogonal methods.

    Examples
    --------
    >>> from elucidate.spectrum.peaks import parse_peaks
    >>> lib = ReferenceIndex.from_entries([
    ...     ReferenceEntry("CCOC(C)=O", "C4H8O2", ((171.1, 0, 1), (60.4, 2, 1), (21.0, 3, 1), (14.2, 3, 1)),
    ...                    "lab-1", "demo"),
    ...     ReferenceEntry("CCOC(=O)CC", "C5H10O2",
    ...                    ((174.6, 0, 1), (60.3, 2, 1), (27.6, 2, 1), (14.2, 3, 1), (9.2, 3, 1)), "lab-2", "demo")])
    >>> hits = nearest_spectra(parse_peaks("171.0 C, 60.5 CH2, 21.1 CH3, 14.3 CH3"), library=lib, k=2)
    >>> [(h.smiles, round(h.similarity, 3), h.matched_lines) for h in hits]
    [('CCOC(C)=O', 0.999, 4), ('CCOC(=O)CC', 0.406, 3)]
    """
    if library is None:
        index = default_index()
    elif isinstance(library, ReferenceIndex):
        index = library
    elif isinstance(library, (list, tuple)):
        index = ReferenceIndex.merge(library)
    else:
        raise InputError("library must be a ReferenceIndex (see load_reference_library) or a list of them")
    return index.nearest(peaks, formula=formula, k=k, tolerance=tolerance, formula_bonus=formula_bonus,
                         min_similarity=min_similarity, same_formula_only=same_formula_only)
