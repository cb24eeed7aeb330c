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
    "environment_margin", "keep",
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


def solve(formula, peaks, *, solvent: str | None = None, time_limit: float = 60.0, top: int = 10,
          require=(), forbid=(), scaffold: str | None = None, valences: dict | None = None,
          progress=None, **options):
    """Rank structures for a molecular formula and a 13C peak list.

    Parameters
    ----------
    formula : str or Formula
        Molecular formula, e.g. ``"C8H8O2"``.
    peaks : str, path or PeakList
        Peak text (``"171.1 C, 60.4 CH2"``), a peak/JCAMP-DX file or a PeakList.
    solvent : str, optional
        Deuterated solvent whose lines are dropped (e.g. ``"CDCl3"``).
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
    progress : callable(int, float), optional
    **options
        Further :class:`~elucidate.pipeline.SolveSettings` fields:
        ``charged_nitrogen``, ``allow_all``, ``max_rings``, ``min_ring_size``,
        ``max_ring_size``, ``environment_margin``, ``keep``.

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
    if not isinstance(top, int) or isinstance(top, bool):
        raise InputError(f"top must be a whole number, got {top!r}")
    if not isinstance(time_limit, (int, float)) or isinstance(time_limit, bool):
        raise InputError(f"time_limit must be a number of seconds, got {time_limit!r}")
    settings = SolveSettings(
        valences=tuple(vals.items()), require=_tuple_of_str(require, "require"),
        forbid=_tuple_of_str(forbid, "forbid"), scaffold=scaffold, solvent=solvent,
        time_limit=float(time_limit), top=top, keep=max(options.pop("keep", 100), top), **options)
    return run(formula, peaks, settings, progress=progress)


def check(smiles, peaks, *, formula=None, solvent: str | None = None, time_limit: float = 30.0,
          alternatives: int = 5, search: bool = True, allow_all: bool = False):
    """Does a peak list fit the expected structure?  See :func:`elucidate.workflows.check.check_structure`.

    Returns
    -------
    elucidate.workflows.check.CheckResult
        ``verdict`` is ``"consistent"``, ``"doubtful"`` or ``"inconsistent"``;
        ``alternatives`` lists isomers that fit better.
    """
    from .workflows.check import check_structure

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
    """
    from rdkit import Chem

    from .predict import predict_mol, predict_smiles

    if isinstance(smiles, Chem.Mol):
        return predict_mol(smiles)
    return predict_smiles(smiles)


def to_dict(result) -> dict | list:
    """The JSON-ready form the CLI prints for a solve, check or predict result."""
    from .pipeline import SolveResult
    from .predict import AtomShift
    from .report.serialize import result_to_dict
    from .workflows.check import CheckResult, check_to_dict

    if isinstance(result, SolveResult):
        data = result_to_dict(result)
        data.setdefault("settings", {}).setdefault("scaffold", result.settings.scaffold)
        data.setdefault("peaks_provenance", list(getattr(result.peaks, "provenance", ())))  # as the CLI
        return data
    if isinstance(result, CheckResult):
        return check_to_dict(result)
    if isinstance(result, tuple) and all(isinstance(a, AtomShift) for a in result):
        return [{"index": a.index, "element": a.element, "hydrogens": a.hydrogens,
                 "shift": a.shift, "sigma": a.sigma} for a in result]
    raise InputError(f"to_dict takes a solve, check or predict result, got {type(result).__name__}")
