"""Terminal rendering of a solve result (the default ``--format text``)."""

from __future__ import annotations

from ..rank.calibration import CALIBRATED_BASIS

__all__ = ["render_text", "run_lines", "unlisted_sentence", "search_statement_lines"]


def run_lines(data: dict) -> list[str]:
    """Sample ID, date and time, versions and names from a result's ``run`` block (none if absent)."""
    run = data.get("run")
    if not isinstance(run, dict):
        return []
    head = []
    if run.get("sample_id"):
        head.append(f"sample {run['sample_id']}")
    if run.get("timestamp_utc"):
        head.append(f"run {run['timestamp_utc']} (UTC)")
    if run.get("elucidate_version"):
        head.append(f"elucidate {run['elucidate_version']}")
    if run.get("shift_table_version"):
        head.append(f"shift table {run['shift_table_version']}")
    if run.get("shift_predictor"):
        head.append(f"predictor {run['shift_predictor']}")
    names = [f"{role} {run[key]}" for role, key in (("analyst", "analyst"), ("reviewer", "reviewer"))
             if run.get(key)]
    return [line for line in ("  ".join(head), "  ".join(names)) if line]


def render_text(data: dict) -> str:
    """Render the plain-data result (see :mod:`.serialize`) as text."""
    out = run_lines(data)
    comp = data.get("completeness") or {"status": "complete" if data["complete"] else "stopped at the time limit",
                                         "cost_bound": None}
    if comp["status"] == "complete":
        status = "complete"
    elif comp["status"] == "complete up to cost":
        status = "complete up to a misfit bound"
    elif comp["status"] == "sampled":
        status = "best found by sampling (not proven)"
    else:
        status = "INCOMPLETE (stopped at the time limit)"
    out.append(
        f"formula {data['formula']}  DBE {data['dbe']}  lines {len(data['peaks'])}  "
        f"structures ranked {data['candidates_generated']}  search {status}  "
        f"{data['elapsed_s']:.1f} s"
    )
    out.append("")
    cands = data["candidates"]
    if cands:
        width = max(12, min(60, max(len(c["smiles"]) for c in cands)))
        out.append(f"{'rank':>4}  {'SMILES':<{width}}  {'prob':>6}  {'MAE':>5}  {'max':>5}  notes")
        for c in cands:
            notes = []
            if c["overlapped_lines"]:
                notes.append(f"{c['overlapped_lines']} overlap")
            if c["split_classes"]:
                notes.append(f"{c['split_classes']} split")
            if c["unfilled_lines"]:
                notes.append(f"{len(c['unfilled_lines'])} line(s) unexplained")
            if c["max_error_ppm"] is not None and c["max_error_ppm"] > 10:
                notes.append("large deviation")
            if c.get("found_by") == "annealing":
                notes.append("found by sampling")
            if c.get("set_aside"):
                notes.append("near alternative, not rated: " + c["set_aside"])
            checks = c.get("correlations") or []
            if checks:
                unmet = sum(1 for ch in checks if ch["status"] == "violated")
                far = sum(1 for ch in checks if ch["status"] == "long range")
                notes.append(f"2D {len(checks) - unmet - far}/{len(checks)} met"
                             + (f", {far} long range" if far else "") + (f", {unmet} not met" if unmet else ""))
            out.append(
                f"{c['rank']:>4}  {c['smiles']:<{width}}  {c['probability']:>6.3f}  "
                f"{_f(c['mae_ppm'])}  {_f(c['max_error_ppm'])}  {', '.join(notes)}"
            )
        best = cands[0]
        out.append("")
        out.append(f"assignment of rank 1 ({best['smiles']}):")
        out.append(f"  {'line':>4}  {'observed':>8}  {'predicted':>9}  {'diff':>6}  atoms")
        for e in best["assignment"]:
            diff = e["predicted"] - e["observed"]
            kind = "" if e["kind"] == "primary" else f"  ({e['kind']})"
            out.append(
                f"  {e['peak_index'] + 1:>4}  {e['observed']:>8.2f}  {e['predicted']:>9.2f}  "
                f"{diff:>+6.2f}  {','.join(str(a) for a in e['atoms'])}{kind}"
            )
        if best.get("correlations"):
            out.append("")
            out.append(f"2D correlations of rank 1 (bonds: proton to carbon; COSY proton to proton):")
            for ch in best["correlations"]:
                bonds = "no path" if ch["bonds"] is None else f"{ch['bonds']} bonds"
                ends = "" if ch["atoms"] is None else f"  atoms {ch['atoms'][0]},{ch['atoms'][1]}"
                out.append(f"  {ch['experiment']:<5} {ch['h_shift']:>6.2f} / {ch['other_shift']:<7.2f} "
                           f"{ch['status']:<10} {bonds}{ends}")
        for note in data.get("ambiguity") or []:
            out.append("")
            out.append(
                f"rank {note['rank']} ({note['smiles']}) is close to rank 1 "
                f"(probability ratio {note['probability_ratio']}); lines that separate them most:"
            )
            for row in note["separating_lines"]:
                out.append(
                    f"  line {row['peak_index'] + 1} at {row['observed']:.1f} ppm: predicted "
                    f"{row['predicted_best']:.1f} (rank 1) vs {row['predicted_other']:.1f} (rank {note['rank']})"
                )
        if data.get("next_measurement_statement"):
            out.append("")
            out.append(data["next_measurement_statement"])
        mult = data.get("multiplicities")
        if mult and mult.get("statement"):
            out.append("")
            out.append(mult["statement"])
    else:
        out.append("no candidate structures")
    out.append("")
    out.append("constraints:")
    for row in data["constraint_log"]:
        out.append(f"  {row['constraint']}: {row['before']:,} -> {row['after']:,}")
    if data["warnings"]:
        out.append("")
        out.append("warnings:")
        for w in data["warnings"]:
            out.append(f"  - {w}")
    neighbours = data.get("reference_neighbours") or []
    if neighbours:
        from .neighbours import render_neighbours_text

        out.append("")
        out.append(render_neighbours_text(neighbours).rstrip("\n"))
    out.append("")
    out.extend(search_statement_lines(comp))
    unlisted = data.get("unlisted_probability")
    if unlisted is not None:
        out.append(unlisted_sentence(unlisted, data.get("unlisted_basis")))
    out.append(data["caution"])
    return "\n".join(out) + "\n"


def search_statement_lines(comp: dict) -> list[str]:
    """How the search went and what it proves, from the ``completeness`` block
    (older results without the statements get the short form)."""
    out = []
    if comp.get("how"):
        out.append(comp["how"])
    if comp.get("statement"):
        out.append(comp["statement"])
    elif comp["status"] == "complete":
        out.append("The search was exhaustive under the stated constraints.")
    elif comp["status"] == "complete up to cost":
        out.append("The search was exhaustive up to an approximate cost of "
                   f"{comp['cost_bound']}: every structure not listed fits the lines worse than that "
                   "by its carbon environments.")
    else:
        out.append("The search was cut short: structures may be missing from this list.")
    if comp.get("assumptions"):
        out.append("This holds under these assumptions: " + "; ".join(comp["assumptions"]) + ".")
    return out


def unlisted_sentence(unlisted: float, basis: str | None = None) -> str:
    """One sentence on the chance that the answer is not listed (``basis``: the model behind it)."""
    basis = basis or CALIBRATED_BASIS  # results saved before the basis was recorded
    return (f"Probability that the answer is none of the listed structures: {unlisted:.2f} "
            f"({basis}); the listed probabilities sum to the rest.")


def _f(x) -> str:
    return f"{x:>5.2f}" if x is not None else "    -"
