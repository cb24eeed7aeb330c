"""The ``elucidate`` command line: thin option parsing on top of the pipeline.

User errors print one line ``error: ...`` on stderr and exit with code 2;
anything else is a bug and keeps its traceback.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import click

from .errors import InputError

__all__ = ["main"]


def _fail(message: str) -> None:
    click.echo("error: " + " ".join(str(message).split()), err=True)
    sys.exit(2)


class _Group(click.Group):
    """Click group that turns user errors into one line and exit code 2."""

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        try:
            rv = super().main(
                args=args, prog_name=prog_name or "elucidate", complete_var=complete_var,
                standalone_mode=False, **extra,
            )
        except InputError as exc:
            _fail(str(exc))
        except click.exceptions.NoArgsIsHelpError as exc:
            click.echo(exc.ctx.get_help() if exc.ctx else str(exc))
            sys.exit(0)
        except click.ClickException as exc:
            msg = exc.format_message()
            if isinstance(exc, click.UsageError) and exc.ctx is not None:
                msg += f" (see '{exc.ctx.command_path} --help')"
            _fail(msg)
        except click.Abort:
            _fail("interrupted")
        except BrokenPipeError:  # e.g. piped into head
            sys.exit(0)
        if isinstance(rv, int) and not isinstance(rv, bool):
            sys.exit(rv)
        sys.exit(0)


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"], "max_content_width": 100})
@click.version_option(package_name="elucidate")
def main():
    """Propose organic structures from a molecular formula and a 13C peak list.

    Typical use: 'elucidate solve --formula C4H8O2 --peaks "171.1 C, 60.4 CH2,
    21.0 CH3, 14.2 CH3"'.  Every command has its own --help with an example.

    Results are hypotheses: confirm them with reference standards and
    orthogonal methods.
    """


# ----------------------------------------------------------------- shared options
def _structure_options(fn):
    opts = [
        click.option("--valence", "valence", multiple=True, metavar="EL=V,..",
                     help="Allowed valences of an element, e.g. S=2,4,6 or P=3 (repeatable)."),
        click.option("--charged-nitrogen/--no-charged-nitrogen", default=False, show_default=True,
                     help="Also build charge-separated N+/O- pairs (nitro groups, N-oxides)."),
        click.option("--require", multiple=True, metavar="SMARTS",
                     help="Substructure every structure must contain (repeatable)."),
        click.option("--forbid", multiple=True, metavar="SMARTS",
                     help="Substructure no structure may contain (repeatable)."),
        click.option("--max-rings", type=click.IntRange(min=0), default=None,
                     help="Largest number of rings (SSSR)."),
        click.option("--min-ring-size", type=click.IntRange(min=3), default=None,
                     help="Smallest ring size allowed."),
        click.option("--max-ring-size", type=click.IntRange(min=3), default=None,
                     help="Largest ring size allowed."),
    ]
    for opt in reversed(opts):
        fn = opt(fn)
    return fn


def _solvent(ctx, param, value):
    """Check --solvent up front: an empty or unknown name is an error, never ignored."""
    if value is not None:
        from .spectrum.solvents import resolve_solvent

        resolve_solvent(value)
    return value


_SOLVENT_HELP = ("Deuterated solvent whose lines are dropped, e.g. CDCl3 (common names such as dmso or "
                 "water = D2O work; D2O has no carbon, so nothing is dropped for it).")
def _library_option(fn):
    """``--library FILE`` (repeatable): a lab's reference library besides the shipped one.

    The command receives ``libraries`` (a tuple of paths); load them with
    ``elucidate.reference.load_reference_libraries(libraries, with_default=True)``.
    """
    return click.option(
        "--library", "libraries", multiple=True, metavar="FILE", type=click.Path(dir_okay=False),
        help="Your own reference library, searched for similar spectra besides the shipped nmrshiftdb2 "
             "index: an SD file with a 13C_SHIFTS, 13C_PEAKS or NMReDATA item per record, or JSON lines "
             "{smiles, shifts} (docs/reference-library.md; repeatable).")(fn)


def _formula(text):
    from .formula import parse_formula

    return parse_formula(text)


def _write(text: str, output: str | None) -> None:
    if output:
        try:
            Path(output).write_text(text, encoding="utf-8")
        except OSError as exc:
            raise InputError(f"cannot write output file {output!r}: {exc.strerror}") from None
    else:
        click.echo(text, nl=False)


# ----------------------------------------------------------------- isomers
@main.command()
@click.option("--formula", "-f", required=True, help="Molecular formula, e.g. C6H14O.")
@click.option("--count", is_flag=True, help="Print only the number of isomers.")
@click.option("--format", "fmt", type=click.Choice(["smiles", "json"]), default="smiles",
              show_default=True, help="Output format of the list.")
@click.option("--plausible", is_flag=True,
              help="Drop implausible motifs (enols, gem-diols, ...; see docs/constraints.md).")
@_structure_options
@click.option("--time-limit", type=click.FloatRange(min=0, min_open=True), default=None,
              help="Stop after this many seconds (the output says it is incomplete).")
@click.option("--output", "-o", default=None, help="Write to this file instead of stdout.")
def isomers(formula, count, fmt, plausible, valence, charged_nitrogen, require, forbid,
            max_rings, min_ring_size, max_ring_size, time_limit, output):
    """List every constitutional isomer of a formula (each exactly once).

    Neutral molecules, no stereo.  Valences default to the lowest of each
    element (C4 N3 O2 S2 P3 Si4 B3 Se2, halogens 1); widen with --valence
    S=2,4,6 --valence P=3,5 (atoms above their lowest valence carry no H).
    No plausibility filter unless --plausible.

    Example: elucidate isomers --formula C4H10O --count
    """
    from .constraints.structural import implausible_motif_filters, ring_filters, smarts_filters
    from .generate import enumerate_isomers, parse_valence_option

    f = _formula(formula)
    filters = implausible_motif_filters(only_default=True) if plausible else []
    filters += smarts_filters(require, forbid)
    filters += ring_filters(max_rings, min_ring_size, max_ring_size)
    run = enumerate_isomers(f, valences=parse_valence_option(valence), charged_nitrogen=charged_nitrogen,
                            filters=filters, time_limit=time_limit)
    if count:
        n = sum(1 for _ in run)
        text = f"{n}\n"
        if not run.complete:
            click.echo(f"warning: stopped at the time limit; {n} is a lower bound", err=True)
    elif fmt == "smiles":
        lines = [s.smiles for s in run]
        text = "".join(x + "\n" for x in lines)
        if not run.complete:
            click.echo("warning: stopped at the time limit; the list is incomplete", err=True)
    else:
        smiles = [s.smiles for s in run]
        text = json.dumps({"formula": f.hill, "count": len(smiles), "complete": run.complete,
                           "isomers": smiles}, indent=1) + "\n"
    _write(text, output)


# ----------------------------------------------------------------- solve
@main.command()
@click.option("--formula", "-f", required=True, help="Molecular formula from HRMS, e.g. C8H8O2.")
@click.option("--peaks", "-p", required=True, metavar="FILE|TEXT",
              help='Peak file, or inline text such as "206.9 C, 45.2 CH2, 29.9 CH3".')
@click.option("--solvent", default=None, callback=_solvent, help=_SOLVENT_HELP)
@click.option("--time-limit", type=click.FloatRange(min=0, min_open=True), default=60.0, show_default=True,
              help="Seconds for the search; partial results are flagged incomplete.")
@click.option("--top", type=click.IntRange(min=1), default=10, show_default=True,
              help="Number of candidates reported.")
@click.option("--format", "fmt", type=click.Choice(["text", "json", "html", "sdf"]), default="text",
              show_default=True, help="Output format (html: one self-contained report file; sdf: candidates "
              "as molfile records with NMReDATA tags).")
@click.option("--output", "-o", default=None, help="Write to this file instead of stdout.")
@click.option("--dept135", default=None, metavar="FILE",
              help="DEPT-135 spectrum (JCAMP-DX) of the sample; --peaks must then be the 13C spectrum file. "
                   "A file whose header names another DEPT experiment is refused.")
@click.option("--dept90", default=None, metavar="FILE",
              help="DEPT-90 spectrum (JCAMP-DX) of the sample; --peaks must then be the 13C spectrum file. "
                   "A file whose header names another DEPT experiment is refused.")
@_structure_options
@click.option("--allow-all", is_flag=True,
              help="Keep implausible motifs (enols, gem-diols, small-ring triple bonds ...).")
@click.option("--max-overlap", type=click.IntRange(min=0), default=4, show_default=True,
              help="Carbon classes allowed beyond the line count (accidental overlap).")
@click.option("--max-split", type=click.IntRange(min=0), default=3, show_default=True,
              help="Lines allowed beyond the carbon classes (diastereotopic/rotamer splitting).")
@click.option("--scaffold", default=None, metavar="SMILES",
              help="Ring system every candidate must contain, e.g. a starting material's 'c1ccncc1'.")
@click.option("--search", "search_mode", type=click.Choice(["auto", "bounded", "sampling"]), default="auto",
              show_default=True,
              help="auto: cost-bounded search with proofs first, annealing when it cannot finish; bounded: "
                   "cost-bounded only, never stopping early (every statement a proof); sampling: annealing only.")
@click.option("--chains", type=click.IntRange(min=1), default=None, metavar="N",
              help="Stop annealing after N chains: a work budget, so a run that ends by it (not by the "
                   "time limit) gives the same list on any machine. Default: until the time limit.")
@click.option("--rerank", type=click.Choice(["table", "trees"]), default="table", show_default=True,
              help="What orders the structures the search keeps: table (the search's own scores) or trees "
                   "(scored again with the table corrected by the learned trees, sharper shifts and sigmas; "
                   "docs/prediction.md). The list itself is the search's either way.")
@_library_option
@click.option("--neighbours", type=click.IntRange(min=0), default=5, show_default=True,
              help="Reference spectra most similar to the sample's, listed with the result (0: none).")
@click.option("--near-alternatives", type=click.IntRange(min=0), default=5, show_default=True, metavar="N",
              help="When the exhaustive search proves fewer than N structures meet every constraint, list near "
                   "alternatives after them: structures that fit with the DEPT multiplicities (then also the "
                   "shift-environment check) set aside, each saying what it would change; not rated (0: never).")
@click.option("--correlations", default=None, metavar="FILE",
              help="2D cross peaks, one per line: experiment (HSQC, HMBC, H2BC, COSY), 1H shift, 13C shift "
                   "(COSY: second 1H shift), e.g. 'HMBC 2.55 197.8'; '#' comments. Scored as evidence: "
                   "HMBC met at 2-3 bonds, 4 bonds at a small cost (docs/correlations.md).")
@click.option("--match-1h", type=click.FloatRange(min=0, min_open=True), default=0.02, show_default=True,
              metavar="PPM", help="1H tolerance tying HMBC/COSY protons to HSQC protons.")
@click.option("--match-13c", type=click.FloatRange(min=0, min_open=True), default=0.5, show_default=True,
              metavar="PPM", help="13C tolerance tying cross peaks to the 13C lines (several lines within it: "
                                  "a choice, never an error).")
@click.option("--sample-id", default=None, metavar="ID", help="The lab's sample ID, shown in the report header.")
@click.option("--analyst", default=None, metavar="NAME",
              help="Analyst's name for the report's sign-off block (blank lines when not given).")
@click.option("--reviewer", default=None, metavar="NAME",
              help="Reviewer's name for the report's sign-off block (blank lines when not given).")
def solve(formula, peaks, solvent, time_limit, top, fmt, output, dept135, dept90, valence, charged_nitrogen,
          require, forbid, max_rings, min_ring_size, max_ring_size, allow_all, max_overlap, max_split,
          scaffold, search_mode, chains, rerank, libraries, neighbours, near_alternatives, correlations, match_1h,
          match_13c, sample_id, analyst, reviewer):
    """Rank every structure consistent with a formula and a 13C peak list.

    Peaks: one line per signal, 'shift [multiplicity] [count]'; multiplicity
    C, CH, CH2, CH3 (or s, d, t, q, ? for unknown) from DEPT.  Valences:
    S 2/4/6 and P 3/5 are on (sulfoxides, sulfones, phosphates); use
    --valence S=2 to restrict.

    Example:

      elucidate solve --formula C4H8O2 --peaks "171.1 C, 60.4 CH2, 21.0 CH3, 14.2 CH3"

    A report to file and sign: add --format html -o report.html --sample-id
    ID (and --analyst/--reviewer NAME to print the names in its sign-off
    block).

    Results are hypotheses: confirm with reference standards and
    orthogonal methods.
    """
    from .constraints.spectral import SymmetryAllowance
    from .generate import WIDE_VALENCES, parse_valence_option
    from .pipeline import SolveSettings, solve as run_solve
    from .report.runinfo import RunInfo
    from .report.serialize import result_to_dict
    from .spectrum.trace import trace_for_peaks

    run_info = RunInfo.now(sample_id, analyst, reviewer)  # the time the run starts
    f = _formula(formula)
    valences = dict(WIDE_VALENCES)
    valences.update(parse_valence_option(valence))
    settings = SolveSettings(
        valences=tuple(valences.items()), charged_nitrogen=charged_nitrogen, allow_all=allow_all,
        require=tuple(require), forbid=tuple(forbid), max_rings=max_rings,
        min_ring_size=min_ring_size, max_ring_size=max_ring_size,
        symmetry=SymmetryAllowance(max_overlap, max_split), solvent=solvent,
        time_limit=time_limit, top=top, scaffold=scaffold, search=search_mode, chains=chains, rerank=rerank,
        libraries=tuple(libraries), neighbours=neighbours, near_alternatives=near_alternatives,
        match_1h=match_1h, match_13c=match_13c,
    )
    source = peaks
    if dept135 or dept90:
        from .spectrum.peaks import read_peaks

        peaks = read_peaks(peaks, dept135=dept135, dept90=dept90)
    table = None
    if correlations is not None:
        from .spectrum.correlations import read_correlations

        table = read_correlations(correlations)
    result = run_solve(f, peaks, settings, progress=_progress_printer(), correlations=table)
    _clear_progress()
    data = result_to_dict(result, run=run_info, spectrum=trace_for_peaks(source))
    _write(_render(data, fmt, origin="run"), output)


def _render(data: dict, fmt: str, top: int | None = None, origin: str | None = None,
            saved_file: str | None = None) -> str:
    if fmt == "json":
        return json.dumps(data, indent=1) + "\n"
    if fmt == "html":
        from .report.html import render_html

        return render_html(data, top=top, origin=origin, saved_file=saved_file)
    if fmt == "sdf":
        from .report.sdf import render_sdf

        return render_sdf(data, top=top)
    if data.get("workflow") == "check":
        from .workflows.check import render_check_text

        return render_check_text(data)
    from .report.text import render_text

    if top:
        data = dict(data, candidates=data["candidates"][:top])
    return render_text(data)


# ----------------------------------------------------------------- report
@main.command()
@click.argument("result_file", metavar="RESULT.json", type=click.Path(dir_okay=False))
@click.option("--format", "fmt", type=click.Choice(["html", "text", "sdf", "json"]), default="html",
              show_default=True, help="Output format.")
@click.option("--top", type=click.IntRange(min=1), default=None, help="Show only the first N candidates.")
@click.option("--output", "-o", default=None, help="Write to this file instead of stdout.")
def report(result_file, fmt, top, output):
    """Re-render a saved result (from 'solve --format json') without solving again.

    Example:

      elucidate report result.json --format html --output report.html

    Results are hypotheses: confirm with reference standards and
    orthogonal methods.
    """
    from .report.html import check_result_data

    try:
        text = Path(result_file).read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(f"result file {result_file!r} not found; write one with "
                         "'elucidate solve ... --format json --output FILE'") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read result file {result_file!r}: {exc}") from None
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(f"result file {result_file!r} is not JSON ({exc.msg}, line {exc.lineno}); give "
                         "the file written by 'elucidate solve --format json'") from None
    check_result_data(data)
    if fmt == "text" and data.get("workflow") != "check":
        for key, default in (("complete", False), ("elapsed_s", 0.0), ("candidates_generated", 0),
                             ("peaks", []), ("constraint_log", []), ("warnings", []), ("caution", "")):
            data.setdefault(key, default)
    _write(_render(data, fmt, top, origin="file", saved_file=result_file), output)


def _progress_printer():
    """Progress on a terminal only (stderr): stage, structures scored, time left."""
    if not sys.stderr.isatty():
        return None

    def show(stage, n, elapsed, left):
        text = f"  {stage}: {n:,} structures scored, {elapsed:.0f} s, {left:.0f} s left"
        click.echo("\r" + text[:78].ljust(78), err=True, nl=False)

    return show


def _clear_progress():
    if sys.stderr.isatty():
        click.echo("\r" + " " * 78 + "\r", err=True, nl=False)


# ----------------------------------------------------------------- predict
@main.command()
@click.argument("smiles", nargs=-1)
@click.option("--input", "input_file", default=None, help="File with one SMILES per line.")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text", show_default=True)
def predict(smiles, input_file, fmt):
    """Predict the 13C shift of every carbon of one or more molecules.

    Atom indices follow the SMILES as given.

    A molecule without carbon (water, an ammonium salt) has no 13C lines:
    it is listed with the note "no carbon atoms: nothing to predict" (JSON:
    an empty "atoms" list and a "note"), and the others are predicted as
    usual.  When no molecule given has a carbon atom, that is an error
    (exit 2).

    Example: elucidate predict "CC(=O)OCC" --format json
    """
    from .predict import predict_smiles

    items = list(smiles)
    if input_file:
        try:
            text = Path(input_file).read_text(encoding="utf-8")
        except OSError as exc:
            raise InputError(f"cannot read --input file {input_file!r}: {exc.strerror}") from None
        items += [ln.split()[0] for ln in text.splitlines() if ln.strip() and not ln.startswith("#")]
    if not items:
        raise InputError("give at least one SMILES argument or --input FILE")
    results = []
    for smi in items:
        atoms = predict_smiles(smi)  # one entry per carbon atom
        r = {
            "smiles": smi,
            "atoms": [{"index": a.index, "element": a.element, "hydrogens": a.hydrogens,
                       "shift": a.shift, "sigma": a.sigma, "predictor": a.predictor} for a in atoms],
        }
        if not atoms:
            r["note"] = _NO_CARBON_NOTE
        results.append(r)
    if all(not r["atoms"] for r in results):
        names = [r["smiles"] for r in results]
        shown = ", ".join(names[:3]) + (f" and {len(names) - 3} more" if len(names) > 3 else "")
        which = f"{shown} has no" if len(names) == 1 else f"none of {shown} has a"
        raise InputError(f"{which} carbon atom: nothing to predict (13C shifts need carbon); "
                         "check that the SMILES is the intended molecule")
    if fmt == "json":
        click.echo(json.dumps(results, indent=1))
        return
    for r in results:
        click.echo(r["smiles"])
        if "note" in r:
            click.echo(f"  {r['note']}")
        for a in r["atoms"]:
            click.echo(f"  C{a['index']:<4} H{a['hydrogens']}  {a['shift']:7.2f} ppm  ± {a['sigma']:.1f}  "
                       f"({a['predictor']})")


_NO_CARBON_NOTE = "no carbon atoms: nothing to predict"


# ----------------------------------------------------------------- bench
@main.command()
@click.argument("cases", type=click.Path(dir_okay=False))
@click.option("--mode", type=click.Choice(["mult", "plain", "count"]), default="mult", show_default=True,
              help="mult: multiplicities, no counts; plain: shifts only; count: both.")
@click.option("--limit", type=click.IntRange(min=1), default=None, help="Use only the first N cases.")
@click.option("--heavy", default=None, metavar="LO-HI",
              help="Only cases with LO..HI heavy atoms, e.g. 4-10.")
@click.option("--every", type=click.IntRange(min=1), default=1, show_default=True,
              help="Use every N-th case of each heavy-atom band (a stratified, spread-out sample: 5 gives 30 per band of the shipped bench file).")
@click.option("--time-limit", type=click.FloatRange(min=0, min_open=True), default=60.0, show_default=True,
              help="Seconds per case.")
@click.option("--search", "search_mode", type=click.Choice(["auto", "bounded", "sampling"]), default="auto",
              show_default=True, help="Search strategies, as for 'solve --search'.")
@click.option("--correlations", "correlations", type=click.Choice(["none", "synthetic", "synthetic+cosy"]),
              default="none", show_default=True,
              help="2D correlations given to each case: synthetic HSQC + HMBC (+ COSY) made from the answer "
                   "(placeholder 1H shifts, 25 % of HMBC dropped, 5 % 4-bond extras; synthetic, not measured: "
                   "docs/correlations.md).")
@click.option("--output", "-o", default=None,
              help="Also write per-case results (JSON lines) here, each as soon as it is done.")
@click.option("--rerank", type=click.Choice(["table", "trees"]), default="table", show_default=True,
              help="What orders the structures each search keeps, as for 'solve --rerank'.")
def bench(cases, mode, limit, heavy, every, time_limit, search_mode, correlations, rerank, output):
    """Measure elucidation on a case file (JSON lines with formula, peaks, answer).

    Prints top-1/top-5/found rates and times per heavy-atom band.

    Example: elucidate bench ../shared/data/bench_cases.jsonl --limit 50
    """
    from .bench import format_bench_table, run_bench

    band = None
    if heavy:
        try:
            lo, hi = (int(x) for x in heavy.split("-"))
        except ValueError:
            raise InputError(f"--heavy {heavy!r}: write a range such as 4-10") from None
        if lo > hi:
            raise InputError(f"--heavy {heavy!r}: the lower bound exceeds the upper one; write e.g. {hi}-{lo}")
        band = (lo, hi)
    sink = None
    if output:
        try:
            sink = open(output, "w", encoding="utf-8")  # rows are written as they come
        except OSError as exc:
            raise InputError(f"cannot write output file {output!r}: {exc.strerror}") from None

    def write_row(row):
        if sink is not None:
            sink.write(json.dumps(row) + "\n")
            sink.flush()

    try:
        rows = run_bench(cases, mode=mode, limit=limit, heavy=band, every=every, time_limit=time_limit,
                         search=search_mode, correlations=correlations, rerank=rerank, on_row=write_row,
                         progress=(lambda msg: click.echo(msg, err=True)) if sys.stderr.isatty() else None)
    finally:
        if sink is not None:
            sink.close()
    click.echo(format_bench_table(rows, mode=mode))



# ----------------------------------------------------------------- check
@main.command()
@click.option("--smiles", "-s", required=True, help="The expected structure as SMILES.")
@click.option("--peaks", "-p", required=True, metavar="FILE|TEXT",
              help='Peak file, or inline text such as "209.3 C, 36.9 CH2, 29.4 CH3, 7.9 CH3".')
@click.option("--formula", "-f", default=None,
              help="Molecular formula from HRMS (default: the expected structure's).")
@click.option("--solvent", default=None, callback=_solvent, help=_SOLVENT_HELP)
@click.option("--time-limit", type=click.FloatRange(min=0, min_open=True), default=30.0, show_default=True,
              help="Seconds for the isomer search (positional isomers, same scaffold, open formula).")
@click.option("--alternatives", type=click.IntRange(min=0), default=5, show_default=True,
              help="Largest number of better-fitting isomers listed.")
@click.option("--no-search", is_flag=True, help="Judge the absolute fit only; skip the isomer search.")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text", show_default=True,
              help="Output format.")
@click.option("--output", "-o", default=None, help="Write to this file instead of stdout.")
def check(smiles, peaks, formula, solvent, time_limit, alternatives, no_search, fmt, output):
    """Does a 13C spectrum fit the structure you expect?

    Assigns every line to the expected structure, flags gross deviations,
    unexplained lines and carbons without a line, then searches isomers of
    the same formula (same scaffold first) for structures that fit clearly
    better.  Verdict: consistent, doubtful or inconsistent (thresholds in
    docs/workflows.md).

    Example:

      elucidate check --smiles "CCC(C)=O" --peaks "209.3 C, 36.9 CH2, 29.4 CH3, 7.9 CH3"

    The verdict is a hypothesis: confirm identity with a reference standard.
    """
    from .workflows.check import check_structure, check_to_dict, render_check_text

    tty = sys.stderr.isatty()
    result = check_structure(smiles, peaks, formula=formula, solvent=solvent, time_limit=time_limit,
                             alternatives=alternatives, search=not no_search,
                             progress=(lambda m: click.echo(f"  {m}", err=True)) if tty else None)
    data = check_to_dict(result)
    text = json.dumps(data, indent=1) + "\n" if fmt == "json" else render_check_text(data)
    _write(text, output)


# ----------------------------------------------------------------- batch
@main.command()
@click.argument("samples", type=click.Path(dir_okay=False))
@click.option("--output", "-o", required=True, metavar="DIR", help="Folder for per-sample results and summary.csv.")
@click.option("--workers", "-j", type=click.IntRange(min=1), default=1, show_default=True,
              help="Samples run in parallel processes on this machine.")
@click.option("--time-limit", type=click.FloatRange(min=0, min_open=True), default=60.0, show_default=True,
              help="Seconds per sample (search time of solve or check).")
@click.option("--top", type=click.IntRange(min=1), default=10, show_default=True,
              help="Candidates kept per solved sample.")
@click.option("--force", is_flag=True, help="Re-run samples already done in DIR.")
@click.option("--html", is_flag=True, help="Also write an HTML report per sample.")
@click.option("--cluster", default=None, metavar="ADDRESS",
              help="Dask scheduler address (tcp://host:8786); needs the extra elucidate[cluster].")
@click.option("--analyst", default=None, metavar="NAME",
              help="Analyst's name for every report's sign-off block (the sample ID is the CSV id).")
@click.option("--reviewer", default=None, metavar="NAME",
              help="Reviewer's name for every report's sign-off block.")
def batch(samples, output, workers, time_limit, top, force, html, cluster, analyst, reviewer):
    """Solve or check many samples listed in a CSV sheet.

    Header: id,formula,peaks and optionally expected,solvent.  'peaks' is a
    file path relative to the CSV or quoted inline peak text; a row with
    'expected' is checked, the others are solved.  Writes DIR/<id>.json per
    sample and DIR/summary.csv; re-running skips finished samples unless
    --force.  A malformed row is reported in the summary and does not stop
    the batch (exit code 1 when any sample failed).

    Example: elucidate batch samples.csv --workers 2 --output results/
    """
    from .workflows.batch import BatchOptions, run_batch

    bar = None
    if sys.stderr.isatty():
        def bar(done, total, sid, status):
            width = 30
            filled = int(width * done / max(total, 1))
            click.echo(f"\r  [{'#' * filled}{'.' * (width - filled)}] {done}/{total} {sid[:20]:<20} {status:<5}",
                       err=True, nl=False)
    try:
        report = run_batch(samples, output, workers=workers, force=force, cluster=cluster,
                           options=BatchOptions(time_limit=time_limit, top=top, html=html, analyst=analyst,
                                                reviewer=reviewer), progress=bar)
    except (KeyboardInterrupt, click.Abort):
        raise InputError("batch interrupted; finished samples are kept in the output folder; run the "
                         "same command again to resume") from None
    if bar is not None:
        click.echo("", err=True)
    failed = f"{report.failed} failed" + (" (exit code 1)" if report.failed else "")
    click.echo(f"{len(report.rows)} samples: {report.ran} run, {report.skipped} already done, "
               f"{failed}; summary in {report.output / 'summary.csv'}")
    for row in report.rows:
        if row["status"] != "ok":
            click.echo(f"  {row['id']}: {row['message']}", err=True)
    return 1 if report.failed else 0

# ----------------------------------------------------------------- tables
@main.command("build-table")
@click.option("--data", "data_path", required=True, type=click.Path(dir_okay=False),
              help="Training spectra (JSON lines, optionally .gz), e.g. ../shared/data/train_spectra.jsonl.gz.")
@click.option("--output", "output_path", type=click.Path(dir_okay=False), default=None,
              help="Shift table to write (default: the package's shipped table).")
@click.option("--environment-output", "env_path", type=click.Path(dir_okay=False), default=None,
              help="Environment table to write (default: the package's shipped table).")
@click.option("--reference-output", "reference_path", type=click.Path(dir_okay=False), default=None,
              help="Reference index to write (default: the package's shipped index).")
@click.option("--plausibility-output", "plausibility_path", type=click.Path(dir_okay=False), default=None,
              help="Plausibility table to write (default: the package's shipped table).")
@click.option("--only", type=click.Choice(["tables", "reference", "plausibility"]), default=None,
              help="Build only the shift and environment tables (minutes), only the reference "
              "index of the spectra (seconds), or only the plausibility table of the training "
              "constitutions (seconds); default: all.")
@click.option("--limit", type=click.IntRange(min=1), default=None, help="Use only the first N spectra (trial).")
@click.option("--rounds", type=click.IntRange(min=1), default=None, help="Assignment re-estimation rounds.")
def build_table(data_path, output_path, env_path, reference_path, plausibility_path, only, limit, rounds):
    """Rebuild the shipped tables from training spectra (deterministic; ~10-15 min).

    Writes the shift table, the environment table, the reference index
    (the spectra searched for the most similar reference compounds) and the
    plausibility table (ring systems and second-sphere environments of the
    training constitutions), each with a provenance header (source file,
    SHA-256, date, counts, the nmrshiftdb2 attribution and terms).

    Examples:

      elucidate build-table --data ../shared/data/train_spectra.jsonl.gz

      elucidate build-table --data ../shared/data/train_spectra.jsonl.gz --only reference

      elucidate build-table --data ../shared/data/train_spectra.jsonl.gz --only plausibility
    """
    from .tables import build_all_tables

    headers = build_all_tables(data_path, output_path, env_path, reference_index=reference_path,
                               plausibility_table=plausibility_path, only=only, limit=limit, rounds=rounds,
                               progress=lambda msg: click.echo(msg, err=True))
    summary = {}
    if "shift_table" in headers:
        st = headers["shift_table"]
        summary.update({"counts": st.get("counts"), "loo_mae_ppm": st.get("loo_mae_ppm"),
                        "environments": headers["environment_table"].get("environments")})
    if "reference_index" in headers:
        summary["reference_index"] = headers["reference_index"].get("counts")
    if "plausibility_table" in headers:
        summary["plausibility_table"] = headers["plausibility_table"].get("motifs")
    click.echo(json.dumps(summary, indent=1))


def _register_shift_bench():
    from .predict.evaluate import predictor_bench_command

    main.add_command(predictor_bench_command, "bench-shifts")
    from .predict.train import build_trees_command

    main.add_command(build_trees_command, "build-trees")


_register_shift_bench()


if __name__ == "__main__":  # pragma: no cover
    main()
