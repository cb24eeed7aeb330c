"""Python entry points for notebooks and pipelines.

``elucidate.solve``, ``elucidate.check`` and ``elucidate.predict`` return
the same objects the command line serialises; :func:`to_dict` turns any of
them into the JSON the CLI prints.  Every entry validates its input and
raises :class:`elucidate.errors.InputError` saying what to fix.

Results are hypotheses: confirm them with reference standards and
orthogonal methods.

Examples
--------
>>> import elucidate
>>> result = elucidate.solve("C4H8O", "209.3 C, 36.9 CH2, 29.4 CH3, 7.9 CH3", time_limit=10)
>>> result.candidates[0].smiles
'CCC(C)=O'
>>> elucidate.check("CCC(C)=O", "209.3 C, 36.9 CH2, 29.4 CH3, 7.9 CH3", time_limit=5).verdict
'consistent'
"""

from __future__ import annotations

from .errors import InputError

__all__ = ["solve", "check", "predict", "to_dict"]

_SOLVE_OPTIONS = (
    "charged_nitrogen", "allow_all", "max_rings", "min_ring_size", "max_ring_size",
    "environment_margin", "keep", "search", "chains", "libraries", "neighbours", "workers",
    "near_alternatives", "match_1h", "match_13c", "rerank",
)


def _tuple_of_str(value, name: str) -> tuple[str, ...]:
    if value is None:
        return ()
    if isinstance(value, str):
        return (value,)
    try:
        items = tuple(value)
    except TypeError:
        raise InputError(f"{name} must be a SMARTS string or a list of them, got {value!r}") from None
    if not all(isinstance(x, str) for x in items):
        raise InputError(f"{name} must hold SMARTS strings only, got {value!r}")
    return items


def _checked_solvent(solvent):
    """The ``solvent`` argument, validated as the CLI's ``--solvent`` is.

    ``None`` keeps every line; any other value must name a known solvent
    (:func:`elucidate.spectrum.solvents.resolve_solvent`).  An empty name is
    an error rather than "no solvent", so a blank field from a form or a
    spreadsheet is never silently taken to mean "keep the solvent lines".
    """
    if solvent is None:
        return None
    from .spectrum.solvents import resolve_solvent

    if not isinstance(solvent, str):
        raise InputError(f"solvent must be a solvent name such as 'CDCl3' (or None to keep every line), "
                         f"got {type(solvent).__name__} {solvent!r}")
    try:
        resolve_solvent(solvent)
    except InputError as exc:
        hint = "; or leave solvent=None to keep every line" if not solvent.strip() else ""
        raise InputError(f"solvent={solvent!r}: {exc}{hint}") from None
    return solvent


def solve(formula, peaks, *, solvent: str | None = None, time_limit: float = 60.0, top: int = 10,
          require=(), forbid=(), scaffold: str | None = None, valences: dict | None = None,
          progress=None, correlations=None, **options):
    """Rank structures for a molecular formula and a 13C peak list.

    Parameters
    ----------
    formula : str or Formula
        Molecular formula, e.g. ``"C8H8O2"``.
    peaks : str, path or PeakList
        Peak text (``"171.1 C, 60.4 CH2"``), a peak/JCAMP-DX file or a PeakList.
    solvent : str, optional
        Deuterated solvent whose lines are dropped (e.g. ``"CDCl3"``; common
        names such as ``"dmso"`` work, ``"none"`` keeps every line).  An
        empty or unknown name raises :class:`~elucidate.errors.InputError`,
        as ``--solvent`` does on the command line.
    time_limit : float
        Seconds for the search; an incomplete search is flagged.
    top : int
        Number of candidates returned.
    require, forbid : str or list of str
        SMARTS every candidate must contain / must not contain.
    scaffold : str, optional
        SMILES every candidate must contain (e.g. a starting material's ring system).
    valences : dict, optional
        Allowed valences per element, e.g. ``{"S": (2, 4, 6)}`` (others keep the default).
    progress : callable(stage, structures_scored, elapsed_s, seconds_left), optional
        Called now and then while the search runs.
    correlations : str, path or CorrelationTable, optional
        2D cross peaks (HSQC, HMBC, H2BC, COSY; one per line: experiment, 1H
        shift, 13C or second 1H shift), scored as evidence (docs/correlations.md);
        tolerances with the options ``match_1h`` and ``match_13c``.
    **options
        Further :class:`~elucidate.pipeline.SolveSettings` fields:
        ``charged_nitrogen``, ``allow_all``, ``max_rings``, ``min_ring_size``,
        ``max_ring_size``, ``environment_margin``, ``keep``, ``search``
        (``"auto"``, ``"bounded"`` or ``"sampling"``), ``chains`` (annealing
        work budget), ``libraries`` (paths of the lab's own reference
        libraries), ``neighbours`` (reference spectra listed), ``workers``,
        ``near_alternatives`` (fill a short exhaustive list up to this many with structures that
        need one stated assumption set aside; 0: never), ``match_1h`` and ``match_13c``
        (tolerances in ppm tying 2D cross peaks to the lines), ``rerank`` (``"table"``, the
        default, or ``"trees"``: the kept structures re-scored with the learned correction;
        docs/prediction.md).

    Returns
    -------
    elucidate.pipeline.SolveResult
    """
    import dataclasses

    from .generate import WIDE_VALENCES
    from .pipeline import SolveSettings, solve as run

    unknown = sorted(set(options) - set(_SOLVE_OPTIONS))
    if unknown:
        raise InputError(f"unknown option(s) {', '.join(unknown)} for elucidate.solve; "
                         f"known: {', '.join(_SOLVE_OPTIONS)}")
    fields = {f.name for f in dataclasses.fields(SolveSettings)}
    options = {k: v for k, v in options.items() if k in fields}
    vals = dict(WIDE_VALENCES)
    if valences:
        if not isinstance(valences, dict):
            raise InputError(f"valences must be a dict such as {{'S': (2, 4, 6)}}, got {valences!r}")
        for el, v in valences.items():
            v = (v,) if isinstance(v, int) else tuple(v)
            if not v or not all(isinstance(x, int) and x > 0 for x in v):
                raise InputError(f"valences[{el!r}] must be positive whole numbers, got {valences[el]!r}")
            vals[el] = v
    solvent = _checked_solvent(solvent)
    if not isinstance(top, int) or isinstance(top, bool):
        raise InputError(f"top must be a whole number, got {top!r}")
    if not isinstance(time_limit, (int, float)) or isinstance(time_limit, bool):
        raise InputError(f"time_limit must be a number of seconds, got {time_limit!r}")
    settings = SolveSettings(
        valences=tuple(vals.items()), require=_tuple_of_str(require, "require"),
        forbid=_tuple_of_str(forbid, "forbid"), scaffold=scaffold, solvent=solvent,
        time_limit=float(time_limit), top=top, keep=max(options.pop("keep", 100), top),
        **{k: (tuple(v) if k == "libraries" and not isinstance(v, str) else (v,) if k == "libraries" else v)
           for k, v in options.items()})
    return run(formula, peaks, settings, progress=progress, correlations=correlations)


def check(smiles, peaks, *, formula=None, solvent: str | None = None, time_limit: float = 30.0,
          alternatives: int = 5, search: bool = True, allow_all: bool = False):
    """Does a peak list fit the expected structure?  See :func:`elucidate.workflows.check.check_structure`.

    ``solvent`` is checked as in :func:`solve` (an empty or unknown name is an error).

    Returns
    -------
    elucidate.workflows.check.CheckResult
        ``verdict`` is ``"consistent"``, ``"doubtful"`` or ``"inconsistent"``;
        ``alternatives`` lists isomers that fit better.
    """
    from .workflows.check import check_structure

    solvent = _checked_solvent(solvent)
    return check_structure(smiles, peaks, formula=formula, solvent=solvent, time_limit=time_limit,
                           alternatives=alternatives, search=search, allow_all=allow_all)


def predict(smiles):
    """Predicted 13C shift of every carbon (atom indices follow the SMILES).

    Parameters
    ----------
    smiles : str or rdkit.Chem.Mol

    Returns
    -------
    tuple of elucidate.predict.AtomShift
        One per carbon atom; empty for a molecule without carbon (it has no
        13C lines).
    """
    from rdkit import Chem

    from .predict import predict_mol, predict_smiles

    if isinstance(smiles, Chem.Mol):
        return predict_mol(smiles)
    return predict_smiles(smiles)


def to_dict(result, *, sample_id: str | None = None, analyst: str | None = None,
            reviewer: str | None = None, run_at=None, spectrum=None) -> dict | list:
    """The JSON-ready form the CLI prints for a solve, check or predict result.

    Parameters
    ----------
    result : SolveResult, CheckResult or tuple of AtomShift
    sample_id, analyst, reviewer : str, optional
        Solve results only: the sample ID and the names shown in the HTML
        report's sign-off block (``run`` block of the JSON).
    run_at : datetime, optional
        Solve results only: when the run started (timezone-aware); default
        the time of this call.  Take ``datetime.now(timezone.utc)`` before
        :func:`solve` to record the start, or give a fixed time for
        reproducible output.
    spectrum : str, path or SpectrumTrace, optional
        Solve results only: the JCAMP-DX 13C spectrum the lines were picked
        from; its decimated trace is kept (``spectrum_trace``) so the report
        can draw it.

    Returns
    -------
    dict or list
    """
    from datetime import datetime, timezone
    from os import PathLike

    from .pipeline import SolveResult
    from .predict import AtomShift
    from .report.runinfo import RunInfo
    from .report.serialize import result_to_dict
    from .spectrum.trace import SpectrumTrace, spectrum_trace
    from .workflows.check import CheckResult, check_to_dict

    meta = {"sample_id": sample_id, "analyst": analyst, "reviewer": reviewer, "run_at": run_at,
            "spectrum": spectrum}
    if isinstance(result, SolveResult):
        run = RunInfo(run_at if run_at is not None else datetime.now(timezone.utc), sample_id, analyst, reviewer)
        trace = spectrum
        if isinstance(spectrum, (str, PathLike)):
            trace = spectrum_trace(spectrum)
            if trace is None:
                raise InputError(f"spectrum {str(spectrum)!r} is a peak table, not a sampled spectrum; "
                                 "give the 13C spectrum file or leave spectrum out")
        elif spectrum is not None and not isinstance(spectrum, SpectrumTrace):
            raise InputError(f"spectrum must be a JCAMP-DX file path or a SpectrumTrace, got "
                             f"{type(spectrum).__name__}")
        return result_to_dict(result, run=run, spectrum=trace)
    given = [k for k, v in meta.items() if v is not None]
    if given and isinstance(result, (CheckResult, tuple)):
        raise InputError(f"{', '.join(given)} apply to solve results only; leave them out for "
                         f"{type(result).__name__}")
    if isinstance(result, CheckResult):
        return check_to_dict(result)
    if isinstance(result, tuple) and all(isinstance(a, AtomShift) for a in result):
        return [{"index": a.index, "element": a.element, "hydrogens": a.hydrogens,
                 "shift": a.shift, "sigma": a.sigma, "predictor": a.predictor} for a in result]
    raise InputError(f"to_dict takes a solve, check or predict result, got {type(result).__name__}")
