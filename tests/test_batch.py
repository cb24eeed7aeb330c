"""Batch runs: same results as single runs, malformed rows, resume, Dask.

Shift lists quoted from memory: 2-butanone and cyclohexanone from standard
CDCl3 13C tables; ethyl acetate from Fulmer et al., Organometallics 2010,
29, 2176.
"""

import csv
import json

import pytest
from click.testing import CliRunner

from elucidate import api
from elucidate.cli import main
from elucidate.errors import InputError
from elucidate.workflows.batch import BatchOptions, read_samples, run_batch
from elucidate.workflows.check import check_structure

OPTIONS = BatchOptions(time_limit=5.0, top=5)
SHEET = '''id,formula,peaks,expected,solvent
QC-1,C4H8O,butanone.txt,,
QC-2,C4H8O2,"171.1 C, 60.4 CH2, 21.0 CH3, 14.2 CH3",CCC(=O)OC,
QC-3,,"1.0 C",,
QC-4,C6H10O,"212.0 C, 42.0 CH2, 27.1 CH2, 25.1 CH2",,CDCl3
QC-5,,"171.1 C, 60.4 CH2, 21.0 CH3, 14.2 CH3",CCOC(C)=O,
'''


@pytest.fixture()
def sheet(tmp_path):
    (tmp_path / "butanone.txt").write_text("# invented sample\n209.3 C\n36.9 CH2\n29.4 CH3\n7.9 CH3\n")
    path = tmp_path / "samples.csv"
    path.write_text(SHEET)
    return path


def _summary(folder):
    with open(folder / "summary.csv", newline="") as fh:
        return [{k: v for k, v in row.items() if k != "elapsed_s"} for row in csv.DictReader(fh)]


def _science(doc):
    """The parts of a result that must not depend on where it ran."""
    drop = {"elapsed_s", "sample", "search", "run"}
    return {k: v for k, v in doc.items() if k not in drop}


def test_batch_matches_single_runs_and_reports_malformed_row(sheet, tmp_path):
    out = tmp_path / "out"
    report = run_batch(sheet, out, workers=2, options=OPTIONS)
    assert [r["id"] for r in report.rows] == ["QC-1", "QC-2", "QC-3", "QC-4", "QC-5"]
    status = {r["id"]: r["status"] for r in report.rows}
    assert status == {"QC-1": "ok", "QC-2": "ok", "QC-3": "error", "QC-4": "ok", "QC-5": "ok"}
    assert report.failed == 1 and "no formula" in report.rows[2]["message"]
    # single runs of the same samples give the same candidates and verdicts
    for sid, formula, peaks, solvent in (("QC-1", "C4H8O", str(tmp_path / "butanone.txt"), None),
                                         ("QC-4", "C6H10O", "212.0 C, 42.0 CH2, 27.1 CH2, 25.1 CH2", "CDCl3")):
        doc = json.loads((out / f"{sid}.json").read_text())
        single = api.to_dict(api.solve(formula, peaks, solvent=solvent, time_limit=5.0, top=5))
        assert doc["complete"] and single["complete"]
        assert [c["smiles"] for c in doc["candidates"]] == [c["smiles"] for c in single["candidates"]]
        assert [c["score"] for c in doc["candidates"]] == [c["score"] for c in single["candidates"]]
    doc = json.loads((out / "QC-2.json").read_text())
    single = api.to_dict(check_structure("CCC(=O)OC", "171.1 C, 60.4 CH2, 21.0 CH3, 14.2 CH3",
                                         formula="C4H8O2", time_limit=5.0))
    assert _science(doc) == _science(single)
    assert report.rows[1]["verdict"] != "consistent" and report.rows[1]["top_candidate"] == "CCOC(C)=O"
    assert report.rows[4]["verdict"] == "consistent"
    assert not (out / "QC-3.json").exists()


def test_resume_after_interruption_and_force(sheet, tmp_path):
    out = tmp_path / "out"

    def stop_after_two(done, total, sid, status):
        if done == 2:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_batch(sheet, out, workers=1, options=OPTIONS, progress=stop_after_two)
    assert len(list(out.glob("*.json"))) == 2 and not (out / "summary.csv").exists()
    resumed = run_batch(sheet, out, workers=1, options=OPTIONS)
    assert resumed.skipped == 2 and resumed.ran == 3  # two left + the malformed row
    again = run_batch(sheet, out, workers=1, options=OPTIONS)
    assert again.skipped == 4 and again.ran == 1
    assert _summary(out) == [{k: v for k, v in r.items() if k != "elapsed_s"}
                             for r in csv.DictReader(open(out / "summary.csv", newline=""))]
    forced = run_batch(sheet, out, workers=1, force=True, options=OPTIONS)
    assert forced.skipped == 0 and forced.ran == 5
    # a changed peak file invalidates that sample only
    (tmp_path / "butanone.txt").write_text("209.0 C\n36.9 CH2\n29.4 CH3\n7.9 CH3\n")
    changed = run_batch(sheet, out, workers=1, options=OPTIONS)
    assert changed.skipped == 3 and changed.ran == 2


def test_sheet_errors(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("name,formula,peaks\nA,C4H8O,1.0 C\n")
    with pytest.raises(InputError, match="lacks column"):
        read_samples(bad)
    with pytest.raises(InputError, match="not found"):
        read_samples(tmp_path / "missing.csv")
    dup = tmp_path / "dup.csv"
    dup.write_text("id,formula,peaks\nA,C4H8O,\"209.3 C, 36.9 CH2, 29.4 CH3, 7.9 CH3\"\nA,C4H8O,1.0 C\n"
                   "B,C4H8O,nofile.txt\n")
    samples = read_samples(dup)
    assert samples[0].problem is None and "repeats" in samples[1].problem and "not found" in samples[2].problem


def test_cli_batch(sheet, tmp_path):
    runner = CliRunner()
    res = runner.invoke(main, ["batch", str(sheet), "--output", str(tmp_path / "o"), "--time-limit", "5"])
    assert res.exit_code == 1  # one malformed row
    assert "5 samples: 5 run" in res.stdout and "QC-3" in res.stderr
    assert "1 failed (exit code 1); summary in" in res.stdout
    bad = runner.invoke(main, ["batch", str(tmp_path / "none.csv"), "--output", str(tmp_path / "o")])
    assert bad.exit_code == 2 and bad.stderr.startswith("error:")


def test_cli_batch_exit_code_zero_when_every_sample_ran(tmp_path):
    # 2-butanone, CDCl3 shifts from memory of standard 13C tables (see the module docstring).
    (tmp_path / "butanone.txt").write_text("209.3 C\n36.9 CH2\n29.4 CH3\n7.9 CH3\n")
    sheet = tmp_path / "ok.csv"
    sheet.write_text("id,formula,peaks\nQC-1,C4H8O,butanone.txt\n")
    res = CliRunner().invoke(main, ["batch", str(sheet), "--output", str(tmp_path / "o"), "--time-limit", "5"])
    assert res.exit_code == 0, res.output
    assert "1 samples: 1 run, 0 already done, 0 failed; summary in" in res.stdout
    assert "exit code" not in res.stdout
    # a sample that fails when run (not only a malformed row) also gives exit code 1
    sheet.write_text("id,formula,peaks\nQC-1,C4H8O,butanone.txt\nQC-2,C4H8O,\"209,3 C, 36,9 CH2\"\n")
    res = CliRunner().invoke(main, ["batch", str(sheet), "--output", str(tmp_path / "o"), "--time-limit", "5"])
    assert res.exit_code == 1, res.output
    assert "2 samples: 1 run, 1 already done, 1 failed (exit code 1)" in res.stdout
    assert "QC-2" in res.stderr and "ambiguous" in res.stderr


def test_batch_on_dask_local_cluster_gives_same_summary(sheet, tmp_path):
    distributed = pytest.importorskip(
        "dask.distributed", reason="Dask distributed not installed (optional extra elucidate[cluster])")
    local = run_batch(sheet, tmp_path / "local", workers=1, options=OPTIONS)
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster:
        remote = run_batch(sheet, tmp_path / "dask", cluster=cluster.scheduler_address, options=OPTIONS)
    assert _summary(tmp_path / "local") == _summary(tmp_path / "dask")
    assert remote.failed == local.failed == 1
    for sid in ("QC-1", "QC-2", "QC-4", "QC-5"):
        a = json.loads((tmp_path / "local" / f"{sid}.json").read_text())
        b = json.loads((tmp_path / "dask" / f"{sid}.json").read_text())
        assert _science(a) == _science(b)


def test_batch_scenario(monkeypatch, tmp_path):
    # scenarios/larchfield-batch: invented lab; shift sources named in its scenario.json
    root = __import__("pathlib").Path(__file__).resolve().parents[1]
    meta = json.loads((root / "scenarios" / "larchfield-batch" / "scenario.json").read_text())
    args = list(meta["command"])
    args[args.index("--output") + 1] = str(tmp_path / "results")
    args[args.index("--time-limit") + 1] = "5"
    monkeypatch.chdir(root)
    res = CliRunner().invoke(main, args)
    assert res.exit_code == 1  # the row without a formula
    rows = {r["id"]: r for r in csv.DictReader(open(tmp_path / "results" / "summary.csv", newline=""))}
    for sid, want in meta["expect"].items():
        row = rows[sid]
        assert row["status"] == want["status"], (sid, row)
        if "verdict" in want:
            assert row["verdict"] == want["verdict"]
        if "verdict_not" in want:
            assert row["verdict"] not in ("", want["verdict_not"])
        if "top_candidate" in want:
            assert row["top_candidate"] == want["top_candidate"]


def test_html_reports_written_when_asked(sheet, tmp_path):
    pytest.importorskip("elucidate.report.html", reason="HTML report module not in this installation")
    out = tmp_path / "out"
    run_batch(sheet, out, workers=1, options=OPTIONS)
    assert not list(out.glob("*.html"))
    again = run_batch(sheet, out, workers=1, options=BatchOptions(time_limit=5.0, top=5, html=True))
    assert again.skipped == 4 and again.ran == 1  # results reused, pages rendered from the saved JSON
    pages = sorted(p.stem for p in out.glob("*.html"))
    assert pages == ["QC-1", "QC-2", "QC-4", "QC-5"]
    assert "hypothes" in (out / "QC-2.html").read_text().lower()
    footer = (out / "QC-2.html").read_text().split("<footer>")[1]
    assert "Re-rendered" in footer and "QC-2.json" in footer  # said truthfully: made from the saved file


def test_sample_id_and_sign_off_names_reach_every_report(sheet, tmp_path):
    out = tmp_path / "out"
    options = BatchOptions(time_limit=5.0, top=5, html=True, analyst="  R. Okafor ")
    run_batch(sheet, out, workers=1, options=options)
    for sid in ("QC-1", "QC-2", "QC-4", "QC-5"):  # solved and checked samples alike
        run = json.loads((out / f"{sid}.json").read_text())["run"]
        assert run["sample_id"] == sid and run["analyst"] == "R. Okafor" and run["reviewer"] is None
        page = (out / f"{sid}.html").read_text()
        assert f"<dt>Sample ID</dt><dd>{sid}</dd>" in page and '<td class="line">R. Okafor</td>' in page
        assert "directly from this run" in page.split("<footer>")[1]
    # the names do not change results: a second batch with a reviewer reuses them
    again = run_batch(sheet, out, workers=1, options=BatchOptions(time_limit=5.0, top=5, reviewer="J. Lindqvist"))
    assert again.skipped == 4
    with pytest.raises(InputError, match="one line"):
        BatchOptions(analyst="A\nB")


def test_interrupted_parallel_batch_resumes(sheet, tmp_path):
    out = tmp_path / "out"

    def stop_after_first(done, total, sid, status):
        raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_batch(sheet, out, workers=2, options=OPTIONS, progress=stop_after_first)
    done_first = len(list(out.glob("*.json")))
    assert done_first == 1
    resumed = run_batch(sheet, out, workers=2, options=OPTIONS)
    assert resumed.skipped == 1 and resumed.ran == 4 and resumed.failed == 1
    assert len(list(out.glob("*.json"))) == 4
