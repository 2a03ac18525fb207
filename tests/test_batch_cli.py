"""``voiceband batch`` end to end on a local process pool: rows, errors, copies, outputs, resume, exit status."""

from __future__ import annotations

import csv
import json
import shutil

import pytest
from typer.testing import CliRunner

from batch_files import make_folder
from voiceband.batch.rows import COLUMNS
from voiceband.cli.main import app

runner = CliRunner()


def _run(*args):
    return runner.invoke(app, ["batch", *map(str, args)])


def _csv_rows(path):
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    root = tmp_path_factory.mktemp("batch") / "recordings"
    return root, make_folder(root)


@pytest.fixture(scope="module")
def first_run(folder, tmp_path_factory):
    root, files = folder
    out = tmp_path_factory.mktemp("out") / "table.csv"
    res = _run(root, "--out", out, "--workers", 2)
    return out, res


def test_every_file_once_good_ok_broken_failed(folder, first_run):
    root, files = folder
    out, res = first_run
    assert res.exit_code == 1, res.output  # some files failed
    rows = _csv_rows(out)
    assert list(rows[0]) == list(COLUMNS)
    paths = [r["path"] for r in rows]
    expected = {str(p) for p in files["good"] + files["broken"]}
    assert sorted(paths) == sorted(expected)  # each exactly once; notes.txt not taken
    by = {r["path"]: r for r in rows}
    for p in files["good"]:
        r = by[str(p)]
        assert r["status"] == "ok" and r["error"] == ""
        assert float(r["input.duration_s"]) == pytest.approx(0.8)
        assert r["input.sample_rate_hz"] == "8000"
        assert len(r["sha256"]) == 64 and len(r["settings"]) == 16
    for p in files["broken"]:
        r = by[str(p)]
        assert r["status"] == "failed", r
        assert r["error"] and "\n" not in r["error"] and "Traceback" not in r["error"]
        assert r["levels.peak_dbfs"] == ""
    assert "NaN" in by[str(root / "nan.wav")]["error"]
    assert "empty" in by[str(root / "empty.flac")]["error"]
    assert "too short" in by[str(root / "too_short.wav")]["error"]
    # the copy has the same content hash and the same measurements as its original
    a, b = by[str(files["good"][0])], by[str(files["good"][-1])]
    assert a["sha256"] == b["sha256"]
    assert {k: v for k, v in a.items() if k != "path"} == {k: v for k, v in b.items() if k != "path"}
    assert "4 analysed, 1 copies" in res.output and "5 failed" in res.output


def test_rows_match_analyze_json(folder, first_run):
    """Each measurement column holds the value at its dotted name in `voiceband analyze --json` (same settings)."""
    root, files = folder
    out, _ = first_run
    r = {x["path"]: x for x in _csv_rows(out)}[str(files["good"][2])]
    res = runner.invoke(app, ["analyze", str(files["good"][2]), "--json", "-"])
    doc = json.loads(res.stdout)
    for name in ("levels.rms_dbfs", "spectrum.occupied_bandwidth.width_hz", "noise.floor_dbfs", "intelligibility.sii"):
        cur = doc
        for part in name.split("."):
            cur = cur[part]
        assert (r[name] == "" and cur is None) or float(r[name]) == pytest.approx(cur, rel=1e-12)


def test_existing_output_refused_then_resume_skips_all(folder, first_run, tmp_path):
    root, _ = folder
    out, _ = first_run
    copy = tmp_path / "t.csv"
    shutil.copyfile(out, copy)
    before = copy.read_bytes()
    res = _run(root, "--out", copy, "--workers", 1)
    assert res.exit_code == 2 and "--resume" in res.output and "--force" in res.output
    assert copy.read_bytes() == before
    res = _run(root, "--out", copy, "--workers", 1, "--resume")
    assert res.exit_code == 1  # the recorded failures still count
    assert "0 analysed" in res.output and "10 already recorded (5 of them failed)" in res.output
    assert copy.read_bytes() == before
    res = _run(root, "--out", copy, "--force", "--resume")
    assert res.exit_code == 2 and "contradict" in res.output


def test_resume_after_new_file_and_partial_last_row(folder, tmp_path):
    root, files = folder
    work = tmp_path / "rec"
    shutil.copytree(root, work)
    out = tmp_path / "t.csv"
    assert _run(work / "good_000.wav", work / "good_001.wav", "--out", out).exit_code == 0
    text = out.read_text()
    out.write_text(text[: text.rstrip("\n").rfind("\n") + 1] + text.rstrip("\n").rsplit("\n", 1)[1][:40])  # killed mid-row
    res = _run(work, "--out", out, "--resume", "--glob", "good_*.wav")
    assert res.exit_code == 0, res.output
    rows = _csv_rows(out)
    assert sorted(r["path"] for r in rows) == sorted(str(work / f"good_{i:03d}.wav") for i in range(4))
    assert "3 analysed" in res.output and "1 already recorded" in res.output


def test_jsonl_keeps_full_analysis_and_parquet_has_typed_columns(folder, tmp_path):
    import pyarrow.parquet as pq

    root, files = folder
    j = tmp_path / "t.jsonl"
    assert _run(root, "--out", j, "--workers", 2).exit_code == 1
    def no_constant(name):
        raise AssertionError(f"non-standard JSON token {name}")

    recs = [json.loads(line, parse_constant=no_constant) for line in j.read_text().splitlines()]
    assert len(recs) == 10 and all(list(r)[: len(COLUMNS)] == list(COLUMNS) for r in recs)
    ok = [r for r in recs if r["status"] == "ok"]
    assert len(ok) == 5 and all(r["analysis"]["input"]["path"] == r["path"] for r in ok)
    assert all(r["analysis"] is None for r in recs if r["status"] == "failed")
    p = tmp_path / "t.parquet"
    assert _run(root, "--out", p, "--workers", 2).exit_code == 1
    table = pq.read_table(p)
    assert table.column_names == list(COLUMNS) and table.num_rows == 10
    assert str(table.schema.field("levels.rms_dbfs").type) == "double"
    assert str(table.schema.field("clipping.event_count").type) == "int64"
    assert not (tmp_path / ".t.parquet.journal.jsonl").exists()
    res = _run(root, "--out", p, "--resume")
    assert "10 already recorded" in res.output and pq.read_table(p).num_rows == 10


def test_fail_fast_stops_and_says_so(folder, tmp_path):
    root, files = folder
    out = tmp_path / "t.csv"
    res = _run(root / "random_bytes.wav", *files["good"][:3], "--out", out, "--workers", 1, "--fail-fast")
    assert res.exit_code == 1
    rows = _csv_rows(out)
    assert len(rows) < 4 and {"failed"} <= {r["status"] for r in rows}
    assert [r["path"] for r in rows if r["status"] == "failed"] == [str(root / "random_bytes.wav")]
    assert "not run (--fail-fast)" in res.output


@pytest.mark.parametrize("args, message", [
    (["--out", "x.txt"], "must end in .csv, .jsonl or .parquet"),
    (["--channel", "left"], "--channel must be a number"),
    (["--profile", "no-such-profile"], "no profile 'no-such-profile'"),
    (["--glob", "*.nothing"], "no audio files found"),
])
def test_bad_options_one_sentence(folder, tmp_path, args, message):
    root, _ = folder
    if "--out" not in args:
        args = [*args, "--out", tmp_path / "t.csv"]
    res = _run(root, *args)
    assert res.exit_code == 2, res.output
    assert message in res.output and "Traceback" not in res.output
    assert len(res.output.strip().splitlines()) == 1


def test_missing_path_refused(tmp_path):
    res = _run(tmp_path / "nowhere", "--out", tmp_path / "t.csv")
    assert res.exit_code == 2 and "No such file or folder" in res.output
    assert not (tmp_path / "t.csv").exists()


def test_profile_adds_verdict_columns_equal_to_the_profiles_own_judging(folder, tmp_path):
    from voiceband.analysis import analyze_file
    from voiceband.profiles import load_profile
    from voiceband.profiles.verdicts import verdicts, worst

    root, files = folder
    out = tmp_path / "t.csv"
    res = _run(*files["good"][:2], root / "random_bytes.wav", "--out", out, "--profile", "ssb-voice", "--workers", 1)
    assert res.exit_code == 1, res.output
    rows = _csv_rows(out)
    prof = load_profile("ssb-voice")
    checks = list(dict.fromkeys(lim.check for lim in prof.limits))
    assert list(rows[0]) == list(COLUMNS) + ["verdict"] + [f"verdict.{c}" for c in checks]
    by = {r["path"]: r for r in rows}
    for p in files["good"][:2]:
        judged = {v.check: v.status for v in verdicts(analyze_file(p), prof)}  # the report's judging, in process
        r = by[str(p)]
        assert r["verdict"] == (worst(judged.values()) or "")
        assert all(r[f"verdict.{c}"] == judged.get(c, "") for c in checks)
        assert r["verdict"] in ("pass", "marginal", "fail")
    bad = by[str(root / "random_bytes.wav")]
    assert bad["status"] == "failed" and bad["verdict"] == "" and all(bad[f"verdict.{c}"] == "" for c in checks)
    # rows judged under one profile are not taken as recorded for another: the files are judged again
    res = _run(*files["good"][:2], "--out", out, "--profile", "telephone", "--resume")
    assert res.exit_code == 0 and "2 analysed" in res.output, res.output
    rows = _csv_rows(out)
    assert len(rows) == 5 and len({r["settings"] for r in rows}) == 2
