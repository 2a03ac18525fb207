"""``voiceband report`` end to end: outputs, the JSON against ``voiceband analyze --json``, --force,
atomic writes, escaping of user text, HTML5 well-formedness (html5lib, strict), before/after and PDF."""

from __future__ import annotations

import json
import shutil

import html5lib
import pytest
from typer.testing import CliRunner

from voiceband.cli.main import app

runner = CliRunner()
CLIPPED = "corpus_synthetic/speech_high_clipped.wav"
CLEAN = "corpus_synthetic/speech_medium_normal.wav"
EVIL = "<script>alert(1)</script>"


@pytest.fixture(scope="module")
def report_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("rep") / "r"
    res = runner.invoke(app, ["report", CLIPPED, "--out", str(out), "--title", EVIL,
                              "--notes", "rig <b>bold</b> & co", "--before", CLEAN, "--pdf"])
    assert res.exit_code == 0, res.output
    return out


def test_outputs_written(report_dir):
    names = {p.name for p in report_dir.iterdir()}
    assert {"index.html", "analysis.json", "before-analysis.json", "summary.md", "report.pdf",
            "spectrum.png", "spectrogram.png", "level.png", "histogram.png", "sii-bands.png", "sii-snr.png"} <= names
    assert not [n for n in names if ".part" in n]  # atomic writes leave no temporary files
    assert (report_dir / "report.pdf").read_bytes()[:5] == b"%PDF-"
    assert (report_dir / "spectrum.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_json_equals_analyze_plus_added_keys(report_dir):
    got = json.loads((report_dir / "analysis.json").read_text())
    res = runner.invoke(app, ["analyze", CLIPPED, "--json", "-"])
    assert res.exit_code == 0
    plain = json.loads(res.stdout)
    verdicts = got.pop("verdicts")
    recs = got.pop("recommendations")
    assert got == plain
    # the report's JSON is still a valid analysis document (the schema allows the added keys)
    import jsonschema
    from importlib import resources

    schema = json.loads(resources.files("voiceband").joinpath("schemas/analysis.schema.json").read_text())
    jsonschema.validate(json.loads((report_dir / "analysis.json").read_text()), schema)
    assert verdicts and all(set(v) == {"check", "value", "limit", "status", "reason"} for v in verdicts)
    assert all(v["status"] in ("pass", "marginal", "fail") for v in verdicts)
    assert recs and recs[0]["code"] == "gain"
    before = json.loads((report_dir / "before-analysis.json").read_text())
    assert before["input"]["path"] == CLEAN


def test_user_text_is_escaped_and_page_is_html5(report_dir):
    text = (report_dir / "index.html").read_text()
    assert EVIL not in text and "&lt;script&gt;alert(1)&lt;/script&gt;" in text
    assert "<b>bold</b>" not in text
    doc = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(text)  # raises on any parse error
    assert doc.find(".//title").text == EVIL  # shown as text
    assert doc.find(".//h1").text == EVIL
    assert not doc.findall(".//script")
    ids = {e.get("id") for e in doc.iter() if e.get("id")}
    assert {"verdict", "todo", "changed", "pictures", "numbers", "method", "recording", "settings", "care"} <= ids
    imgs = doc.findall(".//img")
    assert len(imgs) >= 6 and all(i.get("src").startswith("data:image/png;base64,") for i in imgs)
    assert "licence" in text and "RF-exposure" in text and "Mains-powered" in text


def test_refuses_to_overwrite_without_force(report_dir, tmp_path):
    out = tmp_path / "copy"
    shutil.copytree(report_dir, out)
    before = (out / "index.html").read_bytes()
    res = runner.invoke(app, ["report", CLEAN, "--out", str(out)])
    assert res.exit_code == 2
    assert "already exists; use --force" in res.stderr
    assert (out / "index.html").read_bytes() == before
    res = runner.invoke(app, ["report", CLEAN, "--out", str(out), "--force", "--title", "again"])
    assert res.exit_code == 0, res.output
    assert "again" in (out / "index.html").read_text()


@pytest.mark.parametrize("args, match", [
    (["--profile", "no-such-service"], "no profile 'no-such-service'"),
    (["--before", "missing.wav"], "No such file"),
])
def test_bad_input_is_one_sentence(tmp_path, args, match):
    res = runner.invoke(app, ["report", CLEAN, "--out", str(tmp_path / "x"), *args])
    assert res.exit_code == 2
    assert match in res.stderr and "Traceback" not in res.stderr


def test_not_audio_is_refused(tmp_path):
    bad = tmp_path / "notes.wav"
    bad.write_text("not audio")
    res = runner.invoke(app, ["report", str(bad), "--out", str(tmp_path / "x")])
    assert res.exit_code == 2 and "not an audio file" in res.stderr


def test_digital_silence_is_refused(tmp_path):
    import numpy as np
    import soundfile as sf

    p = tmp_path / "silent.wav"
    sf.write(str(p), np.zeros(16000 * 2), 16000)
    res = runner.invoke(app, ["report", str(p), "--out", str(tmp_path / "x")])
    assert res.exit_code == 2 and "digital silence" in res.stderr
    assert not (tmp_path / "x" / "index.html").exists()
