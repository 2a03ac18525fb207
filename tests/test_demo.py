"""``voiceband demo``: the scenario's reports, links and verdicts; the README's first command runs it."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from typer.testing import CliRunner

from voiceband.cli.main import app

runner = CliRunner()


@pytest.fixture(scope="module")
def demo_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo") / "demo"
    res = runner.invoke(app, ["demo", "--out", str(out)])
    assert res.exit_code == 0, res.output
    assert f"Open {out / 'index.html'}" in res.stdout
    return out


def test_comparison_page_links_to_every_report(demo_dir):
    page = (demo_dir / "index.html").read_text()
    links = re.findall(r'href="([^"]+\.html)"', page)
    assert sorted(links) == ["board-a/index.html", "board-b/index.html", "board-c/index.html"]
    assert all((demo_dir / link).is_file() for link in links)
    assert page.count('src="data:image/png;base64,') == 1  # the side-by-side figure, embedded
    assert all((demo_dir / "recordings" / f"board-{k}.wav").is_file() for k in "abc")


def test_scenario_verdicts(demo_dir):
    import json

    a = json.loads((demo_dir / "board-a" / "analysis.json").read_text())
    b = json.loads((demo_dir / "board-b" / "analysis.json").read_text())
    c = json.loads((demo_dir / "board-c" / "analysis.json").read_text())
    status = lambda d, check: next(v["status"] for v in d["verdicts"] if v["check"] == check)  # noqa: E731
    # board A: 80-5000 Hz is far wider than the 2.8 kHz SSB channel (47 CFR 97.303(h))
    assert status(a, "occupied_bandwidth_hz") == "fail"
    assert status(a, "hum_db_re_speech") != "pass"
    # board B: 300-2700 Hz, the usual SSB band (common practice)
    assert all(v["status"] == "pass" for v in b["verdicts"])
    # board C clips: the first thing to change is the gain
    assert status(c, "clip_events") == "fail" and c["recommendations"][0]["code"] == "gain"


def test_before_after_report_says_what_changed(demo_dir):
    text = (demo_dir / "board-b" / "index.html").read_text()
    assert 'id="changed"' in text and "occupied bandwidth 3.4 → 2.3 kHz" in text


def test_second_run_needs_force(demo_dir):
    res = runner.invoke(app, ["demo", "--out", str(demo_dir)])
    assert res.exit_code == 2 and "use --force" in res.stderr


def test_readme_first_setup_command_runs_the_demo():
    readme = Path(__file__).resolve().parents[1] / "README.md"
    blocks = re.findall(r"```\n(.*?)```", readme.read_text(), flags=re.S)
    assert "pip install . && voiceband demo" in blocks[0]
