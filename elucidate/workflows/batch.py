"""Run many samples from a CSV file: solve each unknown, check each expected structure.

Sample sheet (CSV, UTF-8, comma separated, header required)::

    id,formula,peaks,expected,solvent
    QC-101,C4H8O,qc101.txt,CCC(C)=O,CDCl3
    QC-102,C4H8O2,"171.1 C, 60.4 CH2, 21.0 CH3, 14.2 CH3",,

``id``, ``formula`` and ``peaks`` are required columns; ``peaks`` is a file
path relative to the CSV or inline peak text.  A row with ``expected`` runs
the check workflow (:mod:`.check`; an empty formula then defaults to the
expected structure's), otherwise the solve pipeline.

Execution: one task per sample, run in parallel processes
(:class:`concurrent.futures.ProcessPoolExecutor`) or submitted to a Dask
distributed scheduler (``cluster=ADDRESS``, optional extra
``elucidate[cluster]``).  The same top-level function :func:`run_sample`
does the work everywhere, so results do not depend on where a sample ran
(except for searches that reach their time limit, which depend on the
machine's speed and load).

Outputs in the output folder: ``<id>.json`` per sample (the solve or check
JSON plus a ``sample`` block), optionally ``<id>.html``, and
``summary.csv``.  Files are written atomically as samples finish, so an
interrupted batch resumes where it stopped: samples whose JSON exists with
status ``ok`` and the same inputs and settings are skipped unless
``force``.  A malformed row or a failing sample is reported in the summary
and never stops the batch.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import os
import re
import time
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Callable

from ..errors import InputError

__all__ = [
    "Sample",
    "BatchOptions",
    "BatchReport",
    "read_samples",
    "run_sample",
    "run_batch",
    "SUMMARY_COLUMNS",
]

SUMMARY_COLUMNS = ("id", "status", "workflow", "verdict", "top_candidate", "probability", "complete",
                   "elapsed_s", "message")
_REQUIRED = ("id", "formula", "peaks")
_OPTIONAL = ("expected", "solvent")
_SAFE = re.compile(r"[^A-Za-z0-9._-]+")


@dataclass(frozen=True)
class Sample:
    """One row of the sample sheet, with its peaks resolved.

    ``peaks`` is an absolute file path or inline peak text; ``problem`` says
    what is wrong with a malformed row (the row is then reported, not run).
    """

    id: str
    row: int
    formula: str
    peaks: str
    expected: str | None = None
    solvent: str | None = None
    problem: str | None = None

    @property
    def workflow(self) -> str:
        return "check" if self.expected else "solve"

    @property
    def filename(self) -> str:
        return _SAFE.sub("_", self.id).strip("._") or f"row-{self.row}"


@dataclass(frozen=True)
class BatchOptions:
    """Settings shared by every sample of a batch."""

    time_limit: float = 60.0
    top: int = 10
    alternatives: int = 5
    html: bool = False
    analyst: str | None = None  # names for the reports' sign-off blocks; they do not change results
    reviewer: str | None = None

    def __post_init__(self):
        from ..report.runinfo import RunInfo

        names = RunInfo.now(None, self.analyst, self.reviewer)  # checks and trims the names
        object.__setattr__(self, "analyst", names.analyst)
        object.__setattr__(self, "reviewer", names.reviewer)
        if not (isinstance(self.time_limit, (int, float)) and self.time_limit > 0):
            raise InputError(f"--time-limit must be a positive number of seconds, got {self.time_limit!r}")
        if not isinstance(self.top, int) or self.top < 1:
            raise InputError(f"--top must be at least 1, got {self.top!r}")
        if not isinstance(self.alternatives, int) or self.alternatives < 0:
            raise InputError(f"--alternatives must be zero or more, got {self.alternatives!r}")


@dataclass(frozen=True)
class BatchReport:
    """What a batch run did: rows of ``summary.csv`` and counts."""

    output: Path
    rows: tuple[dict, ...]
    ran: int
    skipped: int
    failed: int
    elapsed_s: float


def read_samples(path) -> list[Sample]:
    """Read a sample sheet; malformed rows become samples with a ``problem``.

    Raises
    ------
    InputError
        If the file cannot be read or lacks a required column.
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputError(f"sample sheet {str(path)!r} not found; give a CSV file with header "
                         "id,formula,peaks[,expected,solvent]") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read sample sheet {str(path)!r} ({exc}); save it as UTF-8 CSV") from None
    reader = csv.reader(io.StringIO(text))
    try:
        header = next(reader)
    except StopIteration:
        raise InputError(f"sample sheet {str(path)!r} is empty; the first line must be the header "
                         "id,formula,peaks[,expected,solvent]") from None
    cols = [h.strip().lower() for h in header]
    missing = [c for c in _REQUIRED if c not in cols]
    if missing:
        raise InputError(f"sample sheet {str(path)!r} lacks column(s) {', '.join(missing)}; the header "
                         f"must name id, formula, peaks (optional: expected, solvent), got {', '.join(cols)}")
    unknown = [c for c in cols if c and c not in _REQUIRED + _OPTIONAL]
    if unknown:
        raise InputError(f"sample sheet {str(path)!r}: unknown column(s) {', '.join(unknown)}; "
                         "allowed are id, formula, peaks, expected, solvent")
    base = p.resolve().parent
    samples: list[Sample] = []
    seen: set[str] = set()
    for lineno, values in enumerate(reader, start=2):
        if not any(v.strip() for v in values):
            continue
        rec = {c: (values[i].strip() if i < len(values) else "") for i, c in enumerate(cols) if c}
        sid = rec.get("id", "") or f"row-{lineno}"
        problem = None
        if len(values) > len(cols):
            problem = (f"row {lineno} has {len(values)} fields but the header {len(cols)}; quote inline "
                       "peak text that contains commas")
        elif not rec.get("id"):
            problem = f"row {lineno} has no id; give every sample a unique id"
        elif not rec.get("formula") and not rec.get("expected"):
            problem = f"row {lineno} ({sid}) has no formula; give the molecular formula, e.g. C8H8O2"
        elif not rec.get("peaks"):
            problem = f"row {lineno} ({sid}) has no peaks; give a peak file (relative to the CSV) or inline text"
        key = Sample(sid, lineno, "", "").filename.lower()
        if problem is None and key in seen:
            problem = f"row {lineno}: id {sid!r} repeats an earlier sample; ids must be unique"
        seen.add(key)
        peaks = rec.get("peaks", "")
        candidate = base / peaks if peaks else None
        if candidate is not None and "\n" not in peaks and len(peaks) < 4096 and candidate.is_file():
            peaks = str(candidate)
        elif problem is None and _looks_like_missing_file(peaks):
            problem = (f"row {lineno} ({sid}): peak file {peaks!r} not found next to the sample sheet; "
                       "paths are relative to the CSV")
        samples.append(Sample(sid, lineno, rec.get("formula", ""), peaks, rec.get("expected") or None,
                              rec.get("solvent") or None, problem))
    if not samples:
        raise InputError(f"sample sheet {str(path)!r} has a header but no samples")
    return samples


def _looks_like_missing_file(text: str) -> bool:
    return bool(re.fullmatch(r"[^\s,;]+\.(txt|csv|tsv|jdx|dx|jcamp|dat)", text, flags=re.I))


def _fingerprint(sample: Sample, options: BatchOptions) -> str:
    """Hash of everything that determines a sample's result (inputs, settings, version)."""
    from .. import __version__

    peaks = sample.peaks
    path = Path(peaks)
    if os.path.isabs(peaks) and path.is_file():
        peaks = hashlib.sha256(path.read_bytes()).hexdigest()
    # html and the sign-off names do not change results
    settings = {k: v for k, v in asdict(options).items() if k not in ("html", "analyst", "reviewer")}
    blob = json.dumps([__version__, sample.formula, peaks, sample.expected, sample.solvent, settings],
                      sort_keys=True)
    return hashlib.sha256(blob.encode()).hexdigest()[:16]


def run_sample(sample: Sample, options: BatchOptions) -> dict:
    """Solve or check one sample; never raises for bad input.

    Returns the JSON document written as ``<id>.json``: the workflow's result
    plus a ``sample`` block (``id``, ``row``, ``status`` "ok" or "error",
    ``error``, ``elapsed_s``, ``fingerprint``) and, when it ran, the ``run``
    block (date and time, versions, the id as sample ID, sign-off names; see
    :mod:`elucidate.report.runinfo`).
    """
    from datetime import datetime, timezone

    start = time.monotonic()
    started = datetime.now(timezone.utc)
    info = {"id": sample.id, "row": sample.row, "workflow": sample.workflow, "status": "ok",
            "error": None, "fingerprint": _fingerprint(sample, options) if not sample.problem else None}
    data: dict = {}
    try:
        if sample.problem:
            raise InputError(sample.problem)
        from ..report.runinfo import RunInfo

        run = RunInfo(started, sample.id, options.analyst, options.reviewer)
        if sample.expected:
            from .check import check_structure, check_to_dict

            result = check_structure(sample.expected, sample.peaks, formula=sample.formula or None,
                                     solvent=sample.solvent, time_limit=options.time_limit,
                                     alternatives=options.alternatives)
            data = {"run": run.to_dict(), **check_to_dict(result)}
        else:
            from ..api import solve, to_dict
            from ..spectrum.trace import trace_for_peaks

            result = solve(sample.formula, sample.peaks, solvent=sample.solvent, time_limit=options.time_limit,
                           top=options.top)
            data = to_dict(result, sample_id=run.sample_id, analyst=run.analyst, reviewer=run.reviewer,
                           run_at=run.timestamp, spectrum=trace_for_peaks(sample.peaks))
    except InputError as exc:
        info.update(status="error", error=" ".join(str(exc).split()))
    except Exception as exc:  # a bug in one sample must not stop the batch
        info.update(status="error", error=f"internal error ({type(exc).__name__}: {exc}); please report it")
    info["elapsed_s"] = round(time.monotonic() - start, 3)
    return {"sample": info, **data}


def _summary_row(doc: dict) -> dict:
    s = doc["sample"]
    row = {c: "" for c in SUMMARY_COLUMNS}
    row.update(id=s["id"], status=s["status"], workflow=s["workflow"], elapsed_s=s.get("elapsed_s", ""))
    if s["status"] != "ok":
        row["message"] = s.get("error") or ""
        return row
    if s["workflow"] == "check":
        row["verdict"] = doc["verdict"]
        row["top_candidate"] = (doc["alternatives"][0]["smiles"] if doc["alternatives"]
                                else doc["canonical_smiles"])
        better = doc["alternatives"][0]["pairwise_probability"] if doc["alternatives"] else None
        row["probability"] = "" if better is None else round(1.0 - better, 4)
        row["complete"] = doc["search"]["complete"]
        row["message"] = "; ".join(doc["reasons"])
    else:
        cands = doc.get("candidates") or []
        if cands:
            row["top_candidate"] = cands[0]["smiles"]
            row["probability"] = cands[0]["probability"]
        row["complete"] = doc["complete"]
        row["message"] = "; ".join(doc.get("warnings") or [])
    return row


def _write_atomic(path: Path, text: str) -> None:
    tmp = path.with_name(path.name + ".part")
    tmp.write_text(text, encoding="utf-8")
    os.replace(tmp, path)


def _load_done(path: Path, fingerprint: str) -> dict | None:
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    s = doc.get("sample") if isinstance(doc, dict) else None
    if not s or s.get("status") != "ok" or s.get("fingerprint") != fingerprint:
        return None
    return doc


def _html_renderer():
    try:
        from ..report.html import render_html
    except ImportError:
        return None
    return render_html


def run_batch(
    csv_path,
    output,
    *,
    workers: int = 1,
    force: bool = False,
    cluster=None,
    options: BatchOptions | None = None,
    progress: Callable[[int, int, str, str], None] | None = None,
) -> BatchReport:
    """Run every sample of a sheet and write per-sample JSON and ``summary.csv``.

    Parameters
    ----------
    csv_path : path
        The sample sheet (see the module docstring).
    output : path
        Output folder (created if needed).
    workers : int
        Parallel processes on this machine (ignored with ``cluster``).
    force : bool
        Re-run samples already done.
    cluster : str or dask.distributed.Client, optional
        Scheduler address (``tcp://host:8786``) or a connected client; the
        samples are submitted to the Dask cluster instead.
    options : BatchOptions
    progress : callable(done, total, sample_id, status), optional

    Returns
    -------
    BatchReport
    """
    options = options or BatchOptions()
    if not isinstance(workers, int) or isinstance(workers, bool) or workers < 1:
        raise InputError(f"--workers must be a whole number of at least 1, got {workers!r}")
    render = None
    if options.html:
        render = _html_renderer()
        if render is None:
            raise InputError("--html needs the HTML report module (elucidate.report.html), which this "
                             "installation lacks; drop --html or update elucidate")
    samples = read_samples(csv_path)
    out = Path(output)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create output folder {str(output)!r}: {exc.strerror}") from None
    start = time.monotonic()
    docs: dict[int, dict] = {}
    todo: list[Sample] = []
    skipped = 0
    for s in samples:
        if not force and not s.problem:
            done = _load_done(out / f"{s.filename}.json", _fingerprint(s, options))
            if done is not None:
                docs[s.row] = done
                skipped += 1
                html_path = out / f"{s.filename}.html"
                if render is not None and not html_path.exists():  # asked for HTML only now
                    _write_atomic(html_path, render(done, origin="file", saved_file=f"{s.filename}.json"))
                continue
        todo.append(s)
    total = len(samples)
    count = [skipped]

    def finish(doc: dict, sample: Sample) -> None:
        docs[sample.row] = doc
        if sample.problem is None:  # a malformed row has no file of its own (its id may be a duplicate)
            _write_atomic(out / f"{sample.filename}.json", json.dumps(doc, indent=1) + "\n")
        if render is not None and doc["sample"]["status"] == "ok":
            try:
                html = render(doc, origin="run")
            except Exception as exc:  # the report is optional; the JSON is already written
                doc["sample"]["html_error"] = f"{type(exc).__name__}: {exc}"
            else:
                _write_atomic(out / f"{sample.filename}.html", html)
        count[0] += 1
        if progress:
            progress(count[0], total, sample.id, doc["sample"]["status"])

    if cluster is not None:
        _run_on_cluster(todo, options, cluster, finish)
    elif workers == 1 or len(todo) <= 1:
        for s in todo:
            finish(run_sample(s, options), s)
    else:
        from concurrent.futures import ProcessPoolExecutor, as_completed

        from ..predict.model import load_default_model

        load_default_model()  # once here: forked workers inherit the loaded table
        pool = ProcessPoolExecutor(max_workers=min(workers, len(todo)))
        try:
            futures = {pool.submit(run_sample, s, options): s for s in todo}
            for fut in as_completed(futures):
                finish(fut.result(), futures[fut])
        except BaseException:  # interrupted: drop queued samples, keep the finished files
            pool.shutdown(wait=False, cancel_futures=True)
            raise
        pool.shutdown()

    rows = tuple(_summary_row(docs[s.row]) for s in samples)
    buf = io.StringIO()
    writer = csv.DictWriter(buf, fieldnames=SUMMARY_COLUMNS, lineterminator="\n")
    writer.writeheader()
    writer.writerows(rows)
    _write_atomic(out / "summary.csv", buf.getvalue())
    failed = sum(1 for r in rows if r["status"] != "ok")
    return BatchReport(out, rows, len(todo), skipped, failed, time.monotonic() - start)


def _run_on_cluster(todo, options, cluster, finish) -> None:
    try:
        from dask.distributed import Client, as_completed
    except ImportError:
        raise InputError("--cluster needs Dask distributed: pip install 'elucidate[cluster]' "
                         "(or drop --cluster to run on this machine)") from None
    own = not isinstance(cluster, Client)
    if own:
        try:
            client = Client(cluster, timeout=20)
        except (OSError, TimeoutError, ValueError) as exc:
            raise InputError(f"cannot reach the Dask scheduler at {cluster!r} ({exc}); check the "
                             "address (e.g. tcp://10.0.0.5:8786) and that the scheduler runs") from None
    else:
        client = cluster
    try:
        by_key = {}
        futures = []
        for s in todo:
            fut = client.submit(run_sample, s, options, pure=False)
            by_key[fut.key] = s
            futures.append(fut)
        for fut in as_completed(futures):
            finish(fut.result(), by_key[fut.key])
    finally:
        if own:
            client.close()
