"""The whole path from instrument files to a filed report, through the CLI.

Scenario ``scenarios/kestrel-coatings-jcamp`` (invented): synthetic
JCAMP-DX 13C, DEPT-135 and DEPT-90 spectra of 4-methylpentan-2-one (CDCl3
shifts from memory of standard 13C tables, listed in its make_spectra.py)
-> ``elucidate solve`` -> JSON -> ``elucidate report`` -> HTML/SDF/text.
"""

import importlib.metadata
import importlib.util
import json
import re
from datetime import datetime, timezone
from pathlib import Path

import pytest
from click.testing import CliRunner
from rdkit import Chem

from elucidate.cli import main
from elucidate.spectrum.peaks import read_peaks

ROOT = Path(__file__).resolve().parents[1]
SCENARIO = ROOT / "scenarios" / "kestrel-coatings-jcamp"
META = json.loads((SCENARIO / "scenario.json").read_text())


def _maker():
    spec = importlib.util.spec_from_file_location("make_spectra", SCENARIO / "make_spectra.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def _canon(smi):
    return Chem.MolToSmiles(Chem.MolFromSmiles(smi))


@pytest.fixture(scope="module")
def solved(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("kestrel")
    out = tmp / "result.json"
    args = ["solve", "--formula", META["formula"], "--peaks", str(SCENARIO / META["peaks"]),
            "--dept135", str(SCENARIO / META["dept135"]), "--dept90", str(SCENARIO / META["dept90"]),
            "--solvent", META["solvent"], "--format", "json", "--output", str(out), "--top", "5"]
    before = datetime.now(timezone.utc).replace(microsecond=0)
    result = CliRunner().invoke(main, args)
    after = datetime.now(timezone.utc)
    assert result.exit_code == 0, result.output
    data = json.loads(out.read_text())
    stamp = datetime.strptime(data["run"]["timestamp_utc"], "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=timezone.utc)
    assert before <= stamp <= after  # taken during this run, in UTC
    return tmp, out, data


def test_committed_spectra_are_what_the_script_writes(tmp_path):
    # Same header records and the same picked lines (byte equality would also
    # depend on numpy's random stream, which numpy may change between versions).
    paths = _maker().main(tmp_path)
    for key in ("c13", "dept135", "dept90"):
        committed = SCENARIO / META["peaks" if key == "c13" else key]
        assert paths[key].name == committed.name

        def header(path):
            lines = path.read_text().splitlines()
            return [ln for ln in lines if ln.startswith("##") and not ln.startswith(("##YFACTOR", "##FIRSTY",
                                                                                      "##MINY", "##MAXY"))]
        assert header(paths[key]) == header(committed)
    fresh = read_peaks(str(paths["c13"]), dept135=str(paths["dept135"]), dept90=str(paths["dept90"]))
    kept = read_peaks(str(SCENARIO / META["peaks"]), dept135=str(SCENARIO / META["dept135"]),
                      dept90=str(SCENARIO / META["dept90"]))
    assert len(fresh) == len(kept)
    for a, b in zip(fresh, kept):
        assert abs(a.shift - b.shift) <= 0.05 and a.hydrogens == b.hydrogens


def test_picked_lines_and_multiplicities_match_the_table():
    # Shifts/H counts the spectra were made from (from memory, see make_spectra.py).
    carbons = sorted(set(_maker().CARBONS), reverse=True)
    peaks = read_peaks(str(SCENARIO / META["peaks"]), dept135=str(SCENARIO / META["dept135"]),
                       dept90=str(SCENARIO / META["dept90"]))
    sample = [p for p in peaks if not 76.0 < p.shift < 78.0]  # CDCl3 triplet at 77.16 (Fulmer 2010)
    assert len(sample) == len(carbons)
    for p, (shift, h) in zip(sample, carbons):
        assert abs(p.shift - shift) <= 0.1
        assert p.hydrogens == h
    assert any("DEPT-135" in line for line in peaks.provenance)


def test_scenario_solves_to_the_confirmed_structure(solved):
    _, _, data = solved
    assert data["complete"] is True
    smiles = [c["smiles"] for c in data["candidates"]]
    assert _canon(META["confirmed"]) in smiles[:3]
    assert data["observe_mhz"] == pytest.approx(100.6)
    assert any("picked" in line for line in data["peaks_provenance"])


def test_report_rerenders_html_without_solving(solved):
    tmp, out, data = solved
    page = tmp / "report.html"
    result = CliRunner().invoke(main, ["report", str(out), "--format", "html", "--output", str(page)])
    assert result.exit_code == 0, result.output
    html = page.read_text(encoding="utf-8")
    assert html.startswith("<!DOCTYPE html>")
    assert "DEPT-135" in html and "minimum separation" in html  # picking settings echoed
    assert "100.6 MHz" in html
    for cand in data["candidates"]:
        assert cand["smiles"] in html
    # same bytes again: rendering is deterministic and reads only the JSON
    again = CliRunner().invoke(main, ["report", str(out), "--format", "html"])
    assert again.stdout == html


def test_report_sdf_and_text(solved, tmp_path):
    _, out, data = solved
    sdf = tmp_path / "c.sdf"
    result = CliRunner().invoke(main, ["report", str(out), "--format", "sdf", "-o", str(sdf), "--top", "2"])
    assert result.exit_code == 0, result.output
    mols = list(Chem.SDMolSupplier(str(sdf)))
    assert [Chem.MolToSmiles(m) for m in mols] == [_canon(c["smiles"]) for c in data["candidates"][:2]]
    text = CliRunner().invoke(main, ["report", str(out), "--format", "text"])
    assert text.exit_code == 0
    assert data["candidates"][0]["smiles"] in text.stdout and "hypotheses" in text.stdout


def test_json_carries_versions_and_the_measured_spectrum(solved):
    _, _, data = solved
    run = data["run"]
    assert run["elucidate_version"] == importlib.metadata.version("elucidate")  # the installed package
    assert re.fullmatch(r"\d{4}-\d{2}-\d{2}\+[0-9a-f]{8}", run["shift_table_version"])
    assert run["sample_id"] is None and run["analyst"] is None and run["reviewer"] is None
    trace = data["spectrum_trace"]
    assert trace["source"] == META["peaks"] and trace["points"] == 32768  # the file's ##NPOINTS
    assert 1000 < len(trace["ppm"]) == len(trace["intensity"]) <= 2000


def test_report_redraws_the_spectrum_from_the_saved_json(solved, tmp_path):
    _, out, data = solved
    # only the JSON travels: a copy in another folder, away from the spectrum files
    copy = tmp_path / "filed.json"
    copy.write_text(out.read_text())
    page = CliRunner().invoke(main, ["report", str(copy)]).stdout
    svg = re.search(r'<svg[^>]*class="trace".*?</svg>', page, flags=re.S).group(0)
    points = re.search(r'<polyline class="spectrum" points="([^"]*)"', svg).group(1).split()
    assert len(points) == len(data["spectrum_trace"]["ppm"])
    marks = re.findall(r'class="mark" data-ppm="([^"]+)"', svg)
    assert [float(m) for m in marks] == [p["shift"] for p in data["peaks"]]  # one mark per line used
    footer = page[page.index("<footer>"):]
    assert "Re-rendered" in footer and "<code>filed.json</code>" in footer
    assert data["run"]["timestamp_utc"] in footer
    # a result without the trace (typed lines, or an older file) has no spectrum picture
    copy.write_text(json.dumps({k: v for k, v in data.items() if k != "spectrum_trace"}))
    assert 'class="trace"' not in CliRunner().invoke(main, ["report", str(copy)]).stdout


def test_solve_html_says_it_was_rendered_directly():
    # ethyl acetate, CDCl3 (Fulmer et al., Organometallics 2010, 29, 2176; from memory)
    res = CliRunner().invoke(main, ["solve", "-f", "C4H8O2", "-p", "171.1 C, 60.5 CH2, 21.0 CH3, 14.2 CH3",
                                    "--format", "html", "--top", "2"])
    assert res.exit_code == 0, res.output
    footer = res.stdout[res.stdout.index("<footer>"):]
    assert "directly from this run" in footer and "saved" not in footer


def test_sample_id_and_sign_off_names(tmp_path):
    # ethyl acetate, CDCl3 (Fulmer et al., Organometallics 2010, 29, 2176; from memory)
    base = ["solve", "-f", "C4H8O2", "-p", "171.1 C, 60.5 CH2, 21.0 CH3, 14.2 CH3", "--top", "2",
            "--sample-id", "KC-2211/B", "--analyst", "R. Okafor", "--reviewer", "J. Lindqvist"]
    out = tmp_path / "r.json"
    res = CliRunner().invoke(main, base + ["--format", "json", "-o", str(out)])
    assert res.exit_code == 0, res.output
    data = json.loads(out.read_text())
    assert {k: data["run"][k] for k in ("sample_id", "analyst", "reviewer")} == {
        "sample_id": "KC-2211/B", "analyst": "R. Okafor", "reviewer": "J. Lindqvist"}
    assert "spectrum_trace" not in data  # typed lines: no spectrum to draw
    html = CliRunner().invoke(main, ["report", str(out)]).stdout
    header = html[:html.index("<h2>Ranked candidates</h2>")]
    assert "<dd>KC-2211/B</dd>" in header and data["run"]["timestamp_utc"] in header
    assert '<td class="line">R. Okafor</td>' in header and '<td class="line">J. Lindqvist</td>' in header
    text = CliRunner().invoke(main, base + ["--format", "text"]).stdout
    first = text.splitlines()[0]
    assert first.startswith("sample KC-2211/B  run 20") and "(UTC)" in first
    assert f"elucidate {importlib.metadata.version('elucidate')}" in first
    assert "analyst R. Okafor  reviewer J. Lindqvist" in text


def test_bad_analyst_name_is_one_error_line():
    res = CliRunner().invoke(main, ["solve", "-f", "C4H8O2", "-p", "171.1 C, 60.5 CH2, 21.0 CH3, 14.2 CH3",
                                    "--analyst", "R. Okafor\nJ. Lindqvist"])
    assert res.exit_code == 2
    assert res.stderr.startswith("error: analyst name") and "one line" in res.stderr
    assert res.stderr.count("\n") == 1 and "Traceback" not in res.output


def test_solve_writes_html_and_sdf_to_stdout():
    # toluene, CDCl3 (Fulmer et al., Organometallics 2010, 29, 2176; from memory): several candidates
    base = ["solve", "-f", "C7H8", "-p", "137.9 C, 129.1 CH, 128.3 CH, 125.4 CH, 21.5 CH3", "--top", "2"]
    html = CliRunner().invoke(main, base + ["--format", "html"])
    assert html.exit_code == 0 and html.stdout.startswith("<!DOCTYPE html>")
    sdf = CliRunner().invoke(main, base + ["--format", "sdf"])
    assert sdf.exit_code == 0 and sdf.stdout.count("$$$$") == 2


@pytest.mark.parametrize("content, message", [
    (None, "not found"),
    ("{not json", "is not JSON"),
    ('{"formula": "C4H8O2"}', "has no 'candidates'"),
])
def test_report_input_errors(tmp_path, content, message):
    path = tmp_path / "r.json"
    if content is not None:
        path.write_text(content)
    result = CliRunner().invoke(main, ["report", str(path)])
    assert result.exit_code == 2
    assert result.stderr.startswith("error: ") and message in result.stderr
    assert "Traceback" not in result.output


def test_dept_needs_a_spectrum_file():
    result = CliRunner().invoke(main, ["solve", "-f", "C4H8O2", "-p", "171.1, 60.5, 21.0, 14.2",
                                       "--dept135", str(SCENARIO / META["dept135"])])
    assert result.exit_code == 2 and "DEPT spectra were given" in result.stderr


def test_readme_command_runs(tmp_path):
    # The README's JCAMP-DX example, run as written (with the output moved to tmp).
    import re
    import shlex

    text = (ROOT / "README.md").read_text()
    folder = re.search(r"^S=(\S+)$", text, flags=re.M).group(1)
    commands = re.findall(r"^elucidate solve ((?:[^\n]*\\\n)*[^\n]*)$", text, flags=re.M)
    jcamp = [c for c in commands if "$S/" in c]
    assert jcamp, "README has no JCAMP-DX solve example"
    args = shlex.split(jcamp[0].replace("\\\n", " ").replace("$S", str(ROOT / folder)))
    out = tmp_path / "report.html"
    args[args.index("-o") + 1] = str(out)
    result = CliRunner().invoke(main, ["solve", *args])
    assert result.exit_code == 0, result.output
    assert _canon(META["confirmed"]) in out.read_text()


def test_report_renders_a_saved_check_result(tmp_path):
    from elucidate.workflows.check import check_structure, check_to_dict

    # ethyl acetate, CDCl3 (Fulmer et al., Organometallics 2010, 29, 2176; from memory)
    doc = check_to_dict(check_structure("CCOC(C)=O", "171.1 C, 60.5 CH2, 21.0 CH3, 14.2 CH3",
                                        formula="C4H8O2", time_limit=20))
    path = tmp_path / "check.json"
    path.write_text(json.dumps(doc))
    html = CliRunner().invoke(main, ["report", str(path)])
    assert html.exit_code == 0 and f"Verdict: {doc['verdict']}" in html.stdout
    text = CliRunner().invoke(main, ["report", str(path), "--format", "text"])
    assert text.exit_code == 0 and doc["verdict"].upper() in text.stdout
    sdf = CliRunner().invoke(main, ["report", str(path), "--format", "sdf"])
    assert sdf.exit_code == 2 and "solve result" in sdf.stderr
