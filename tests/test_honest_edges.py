"""Statements never overclaim: no 'nothing fits' when the search ran out of time,
every assumption behind 'complete' named, bounds said in words of fit, progress
only on a terminal.

Rules of thumb for an analytical report (common practice, no source): say what
was searched and under which assumptions; an exhaustive search is never less
sure than a partial one.
"""

from __future__ import annotations

import json

from click.testing import CliRunner

from elucidate.cli import main
from elucidate.pipeline import SolveSettings, solve
from elucidate.rank.calibration import Calibration, listed_chance
from elucidate.search.statement import completeness_sentence, empty_result_warning, fit_equivalent

# 1-benzyl-4-methylpiperazine-2,5-dione, C12H14N2O2: ten invented lines in the range such a
# compound shows (shifts from memory of similar diketopiperazines; only their plausibility matters)
PIPERAZINEDIONE = ("166.0 C, 165.5 C, 135.4 C, 128.9 CH, 128.3 CH, 128.1 CH, 50.9 CH2, 49.6 CH2, "
                   "49.3 CH2, 33.6 CH3")


def test_short_searches_never_blame_the_data():
    for limit in (5, 20):
        r = solve("C12H14N2O2", PIPERAZINEDIONE, SolveSettings(time_limit=limit))
        status = r.completeness[0]
        text = " ".join(r.warnings)
        if status != "complete":
            assert "no structure satisfies" not in text and "no structure fits" not in text
        if not r.candidates:
            assert "time limit" in text
        assert r.completeness_note  # always says what is proven


def test_empty_result_wording_depends_on_the_search():
    assert "does not mean that none fits" in empty_result_warning("stopped at the time limit", 5)
    assert "does not mean that none fits" in empty_result_warning("sampled", 60)
    assert "exhaustive" in empty_result_warning("complete", 60)


def test_complete_statement_names_the_symmetry_allowance():
    # n-tetracontane: 20 carbon classes but only ten resolved lines, beyond the default
    # allowance of 4 overlaps; 'complete' must say it holds under that assumption
    lines = "14.1 CH3, 22.7 CH2, 31.9 CH2, 29.4 CH2, 29.7 CH2, 29.8 CH2, 29.6 CH2, 29.5 CH2, 29.3 CH2, 29.2 CH2"
    out = CliRunner().invoke(main, ["solve", "-f", "C40H82", "-p", lines, "--time-limit", "5",
                                    "--search", "bounded", "--format", "json", "--neighbours", "0"])
    assert out.exit_code == 0, out.output
    data = json.loads(out.stdout)
    comp = data["completeness"]
    assert any("overlap" in a and "--max-overlap" in a for a in comp["assumptions"])
    assert any("implausible motifs" in a for a in comp["assumptions"])
    assert any("valences" in a for a in comp["assumptions"])
    if not data["candidates"]:
        if comp["status"] == "complete":
            assert any("--max-overlap" in w for w in data["warnings"])
        else:
            assert any("time limit" in w for w in data["warnings"])


def test_bounds_are_said_in_ppm():
    sentence = completeness_sentence("complete up to cost", 7.0, 10, 60)
    one, each = fit_equivalent(7.0, 10)
    assert f"{one:.0f} ppm" in sentence and f"{each:.1f} ppm" in sentence
    # more cost, more misfit
    assert fit_equivalent(9.0, 10)[0] > one


def test_a_partial_search_is_never_surer_than_an_exhaustive_one():
    cal = Calibration(listed_when_complete=0.97, listed_logit=(3.5, 0.85, -3.5))
    complete = listed_chance("complete", None, 10, cal)
    for margin in (0.0, 2.0, 10.0, 100.0):
        assert listed_chance("complete up to cost", margin, 6, cal) <= complete
    assert listed_chance("sampled", None, 18, cal) <= complete


def test_progress_goes_to_the_callback_not_to_the_output():
    seen = []
    solve("C7H8O", "155.2 C, 139.8 C, 129.5 CH, 121.7 CH, 116.1 CH, 112.3 CH, 21.4 CH3",
          SolveSettings(time_limit=20), progress=lambda *a: seen.append(a))
    for stage, n, elapsed, left in seen:
        assert isinstance(stage, str) and n >= 0 and elapsed >= 0 and left >= 0
    # piped output (not a terminal) carries no progress line
    out = CliRunner().invoke(main, ["solve", "-f", "C7H8O", "-p", "155.2 C, 139.8 C, 129.5 CH, 121.7 CH, "
                                    "116.1 CH, 112.3 CH, 21.4 CH3", "--format", "json"])
    assert out.exit_code == 0
    json.loads(out.stdout)  # nothing but the JSON document
    assert "structures scored" not in out.stderr
