"""The terminal and the Python API as a new user meets them: one test per trip-up reported, with the command that showed it.

Messages in the user's words, outputs that never replace an input, lossless test signals,
a closed pipe, the display (markup, negative zeros, widths, trailing spaces, missing values),
harmonics below the measurement's own floor, integer arrays in the API, ``dir(voiceband)`` and
the cautions about driving a transmitter.
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys

import numpy as np
import pytest
import soundfile as sf
from typer.testing import CliRunner

import voiceband
from voiceband.cli.main import app
from voiceband.cli.render import Item, lines_of_report
from voiceband.report.summary import NOT_MEASURED, number

runner = CliRunner()


def _run(*args, columns=80):
    return runner.invoke(app, [str(a) for a in args], env={"COLUMNS": str(columns)})


def _one_line(res) -> str:
    assert res.exit_code == 2, (res.exit_code, res.output)
    lines = [ln for ln in res.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("voiceband: "), res.stderr
    assert "Traceback" not in res.output
    return lines[0]


def _speechlike(rng, fs=16000, seconds=6.0, level_dbfs=-26.0):
    """Noise bursts at a ~4 Hz syllable rate with pauses, tilted like speech (test signal, not data)."""
    n = int(fs * seconds)
    t = np.arange(n) / fs
    spec = np.fft.rfft(rng.standard_normal(n))
    f = np.fft.rfftfreq(n, 1 / fs)
    x = np.fft.irfft(spec / np.sqrt(1 + (f / 500) ** 2) * ((f > 150) & (f < 3500)), n)
    env = np.clip(np.sin(2 * np.pi * 4 * t), 0, None) * (np.sin(2 * np.pi * 0.25 * t) > -0.3)
    y = x * env
    y *= 10 ** (level_dbfs / 20) / np.sqrt(np.mean(y[env > 0.1] ** 2))
    return y + 10 ** (-75 / 20) * rng.standard_normal(n)


@pytest.fixture(scope="module")
def recording(tmp_path_factory):
    d = tmp_path_factory.mktemp("rec")
    p = d / "take[red].wav"
    sf.write(str(p), _speechlike(np.random.default_rng(20261203)), 16000, subtype="PCM_16")
    return p


@pytest.fixture(scope="module")
def sweep(tmp_path_factory):
    d = tmp_path_factory.mktemp("sweep")
    p = d / "sweep.wav"
    res = _run("testsignal", "sweep", "--out", p, "--duration-s", 2, "--rate-hz", 16000, "--high-hz", 7000)
    assert res.exit_code == 0, res.output
    return p


# --------------------------------------------------------------------------- messages in the user's words

@pytest.mark.parametrize(
    "args, option",
    [
        (["tone", "--peak-dbfs", 5], "--peak-dbfs"),
        (["tone", "--duration-s", -1], "--duration-s"),
        (["sweep", "--duration-s", 0.1], "--duration-s"),
        (["tone", "--tone-hz", 30000], "--tone-hz"),
        (["multitone", "--tones", 1], "--tones"),
        (["multitone", "--low-hz", 3000, "--high-hz", 300], "--low-hz"),
        (["steps", "--dwell-s", 0], "--dwell-s"),
        (["sweep", "--peak-dbfs", -80], "--peak-dbfs"),
    ],
)
def test_testsignal_errors_name_the_option_typed(tmp_path, args, option):
    line = _one_line(_run("testsignal", *args, "--out", tmp_path / "t.wav"))
    assert option in line
    for internal in ("peak_dbfs", "level_dbfs", "duration_s", "frequency_hz", "n_tones", "low_hz", "high_hz", "dwell_s"):
        assert internal not in line, line


def test_two_tone_with_one_frequency_shows_no_numpy_repr(tmp_path):
    line = _one_line(_run("testsignal", "two-tone", "--tone-hz", 700, "--out", tmp_path / "t.wav"))
    assert "--tone-hz" in line and "700 Hz" in line
    assert "np." not in line and "[" not in line


def test_bad_kind_is_one_sentence(tmp_path):
    line = _one_line(_run("testsignal", "noise", "--out", tmp_path / "t.wav"))
    assert line.startswith("voiceband: KIND must be sweep, multitone, two-tone, tone or steps; got 'noise'")
    assert "Value error" not in line


def test_missing_kind_is_one_sentence():
    line = _one_line(_run("testsignal"))
    assert "missing argument KIND" in line and "sweep, multitone, two-tone, tone or steps" in line


def test_fractional_channel_on_a_mono_file(recording):
    line = _one_line(_run("analyze", recording, "--channel", "1.5"))
    assert "--channel" in line and "'1.5'" in line and "one channel" in line
    assert "0 to 0" not in line


def test_missing_channel_on_a_mono_file(recording):
    line = _one_line(_run("analyze", recording, "--channel", 3))
    assert "--channel 3 does not exist" in line and "one channel, numbered 0" in line


# --------------------------------------------------------------------------- unsafe outputs

def test_json_into_a_missing_folder_is_refused_and_no_folder_made(recording, tmp_path):
    target = tmp_path / "nonexistent" / "x.json"
    line = _one_line(_run("analyze", recording, "--json", target))
    assert "does not exist" in line
    assert not target.parent.exists()


def test_json_over_the_input_is_refused_even_with_force(recording):
    before = recording.read_bytes()
    line = _one_line(_run("analyze", recording, "--json", recording, "--force"))
    assert "is an input" in line
    assert recording.read_bytes() == before


def test_32_bit_flac_is_refused_with_the_reason(tmp_path):
    line = _one_line(_run("testsignal", "tone", "--out", tmp_path / "t.flac", "--bits", 32))
    assert "FLAC" in line and "24 bits" in line and "internal error" not in line
    assert not (tmp_path / "t.flac").exists()
    assert _run("testsignal", "tone", "--out", tmp_path / "t.flac", "--bits", 24).exit_code == 0
    assert sf.info(str(tmp_path / "t.flac")).subtype == "PCM_24"


@pytest.mark.parametrize("name", ["t.ogg", "t.mp3", "t.opus"])
def test_lossy_test_signal_is_refused_with_the_reason(tmp_path, name):
    line = _one_line(_run("testsignal", "tone", "--out", tmp_path / name))
    assert "lossy" in line and ".wav or .flac" in line
    assert not (tmp_path / name).exists()


def _closed_pipe(args, cwd):
    """Run voiceband with its stdout a pipe whose reader has gone (as ``| head`` after its lines)."""
    r, w = os.pipe()
    os.close(r)
    try:
        p = subprocess.run([sys.executable, "-m", "voiceband.cli.main", *map(str, args)], stdout=w,
                           stderr=subprocess.PIPE, cwd=cwd, timeout=300)
    finally:
        os.close(w)
    return p


def test_closed_pipe_ends_quietly_and_outputs_are_written(tmp_path, sweep):
    p = _closed_pipe(["testsignal", "tone", "--out", tmp_path / "t.wav", "--duration-s", 1], tmp_path)
    assert p.returncode == 141, p.stderr
    assert p.stderr.decode() == ""
    assert sf.info(str(tmp_path / "t.wav")).frames == 48000
    p = _closed_pipe(["response", sweep, sweep, "--json", tmp_path / "r.json"], tmp_path)
    assert p.returncode == 141 and p.stderr.decode() == ""
    assert json.loads((tmp_path / "r.json").read_text())["stimulus_kind"] == "sweep"
    p = _closed_pipe(["response", sweep, sweep, "--json", "-"], tmp_path)
    assert p.returncode == 141 and p.stderr.decode() == ""


# --------------------------------------------------------------------------- display

def test_square_brackets_in_a_file_name_are_shown(recording):
    res = _run("analyze", recording)
    assert res.exit_code == 0, res.output
    assert "take[red].wav" in res.stdout.splitlines()[0]


def test_no_negative_zeros():
    assert number(-0.00001, 4) == "0.0000"
    assert number(-0.04, 1) == "0.0"
    assert number(-0.04, 1, sign=True) == "0.0"
    assert number(-0.06, 1) == "-0.1"
    assert number(0.5, 2, sign=True) == "+0.50"


@pytest.mark.parametrize("columns", [80, 120])
def test_analyze_reads_cleanly_at_the_terminal_width(recording, columns):
    res = _run("analyze", recording, columns=columns)
    assert res.exit_code == 0, res.output
    lines = res.stdout.splitlines()
    assert all(len(ln) <= columns for ln in lines), max(lines, key=len)
    assert all(ln == ln.rstrip() for ln in lines)
    assert not re.search(r"-0\.0+(?!\d*[1-9])\b", res.stdout)
    findings = lines[lines.index("Findings") + 1:]
    assert findings
    for ln in findings:  # a finding's continuation lines stay under its text
        assert re.match(r"^ [✗!·] \S", ln) or ln.startswith("   ") and ln[3] != " ", ln
    # a note that does not fit beside its value goes under its quantity, whole phrases kept
    assert "4× oversampled" in res.stdout.replace("\n    ", " ")


def test_rendering_keeps_notes_whole_and_indents_wrapped_findings():
    rows = [("Levels", "True peak", "-7.42 dBTP", "between samples (BS.1770, 4× oversampled)")]
    items = [Item("problem", "word " * 30, "code")]
    lines = [t for t, _s in lines_of_report("h", rows, items, columns=50)]
    assert lines[2].strip() == "True peak  -7.42 dBTP"
    assert lines[3] == "    between samples (BS.1770, 4× oversampled)"
    assert lines[5].startswith(" ✗ word") and all(ln.startswith("   word") for ln in lines[6:])
    assert all(len(ln) <= 50 and ln == ln.rstrip() for ln in lines)


def test_colour_only_marks_a_finding_never_its_text(monkeypatch, capsys):
    from rich.console import Console

    from voiceband.cli import render

    monkeypatch.setattr(render, "console", lambda stderr=False: Console(
        force_terminal=True, color_system="standard", width=80, markup=False, emoji=False, highlight=False, soft_wrap=True))
    render.print_report(None, [], [Item("problem", "Hum at 50.0 Hz is [bold]-22.1 dB[/bold] :smile: (x)", "hum")])
    out = capsys.readouterr().out
    line = [ln for ln in out.splitlines() if "Hum" in ln][0]
    text = line[line.index("Hum"):]
    assert "\x1b" not in text.replace("\x1b[0m", "", 1) or text.endswith("\x1b[0m")
    assert "[bold]-22.1 dB[/bold] :smile: (x) (hum)" in re.sub(r"\x1b\[[0-9;]*m", "", line)


def test_response_prints_the_same_table_within_the_width(sweep):
    for columns in (80, 120):
        res = _run("response", sweep, sweep, columns=columns)
        assert res.exit_code == 0, res.output
        lines = res.stdout.splitlines()
        assert all(len(ln) <= columns and ln == ln.rstrip() for ln in lines), max(lines, key=len)
        assert "Response" in lines and "Harmonics" in lines  # section headings, as analyze's table
        assert not re.search(r"-0\.0+(?!\d*[1-9])\b", res.stdout)


def test_missing_values_read_the_same_everywhere(sweep, recording):
    # A perfect chain: the response never drops 3 dB inside the analysed band.
    res = _run("response", sweep, sweep)
    assert "below " in res.stdout and "above " in res.stdout
    out = res.stdout + _run("analyze", recording).stdout
    assert "—" not in out and "<" not in out and ">" not in out
    assert NOT_MEASURED == "not measured"


# --------------------------------------------------------------------------- numbers that claim too much

def test_perfect_chain_harmonics_are_below_the_measurement_floor(sweep):
    res = _run("response", sweep, sweep)
    rows = [ln for ln in res.stdout.splitlines() if re.match(r"^\s+H[2-5]\s", ln)]
    assert len(rows) == 4
    assert all("below" in ln and "floor" in (ln + res.stdout) for ln in rows), rows
    from voiceband import measure_response

    x, fs = sf.read(str(sweep))
    r = measure_response(x, fs, x, fs)
    assert all(h.below_floor for h in r.harmonics if h.level_db_re_fundamental is not None)


def test_real_second_harmonic_is_read_above_the_floor(sweep):
    # y = x + a·x²: a sine of amplitude A gives a second harmonic of amplitude a·A²/2, i.e.
    # a·A/2 re the fundamental (analytic: sin² = (1 - cos 2ωt)/2).
    from voiceband import measure_response

    x, fs = sf.read(str(sweep))
    a, amp = 0.05, 10 ** (-6 / 20)  # the sweep's -6 dBFS sample peak
    r = measure_response(x, fs, x + a * x * x, fs)
    h2 = r.harmonics[0]
    assert h2.order == 2 and not h2.below_floor
    assert h2.level_db_re_fundamental == pytest.approx(20 * np.log10(a * amp / 2), abs=0.5)
    assert h2.floor_db_re_fundamental < h2.level_db_re_fundamental - 20


# --------------------------------------------------------------------------- Python API

@pytest.mark.parametrize("dtype, scale", [(np.int16, "32768"), (np.int32, "2147483648")])
def test_analyze_signal_refuses_integers_with_the_scale(dtype, scale):
    x = (np.sin(np.arange(48000) * 0.1) * 10000).astype(dtype)
    with pytest.raises(voiceband.SignalValueError, match=f"integers.*divide by {scale}"):
        voiceband.analyze_signal(x, 48000)


def test_analyze_signal_of_the_scaled_array_reads_the_level():
    x = (np.sin(2 * np.pi * 1000 * np.arange(48000) / 48000) * 16384).astype(np.int16)
    r = voiceband.analyze_signal(x / 32768.0, 48000)
    assert r.levels.peak_dbfs == pytest.approx(20 * np.log10(16384 / 32768), abs=0.01)  # analytic: -6.02 dBFS


def test_dir_lists_the_public_names_only():
    names = dir(voiceband)
    assert names == sorted(voiceband.__all__)
    for helper in ("Any", "annotations", "importlib", "_LAZY"):
        assert helper not in names


# --------------------------------------------------------------------------- cautions

_CAUTION_WORDS = ("dummy load", "licence", "100 % duty", "duty cycle", "Local regulations and licensed practice")


def test_testsignal_cautions_about_driving_a_transmitter(tmp_path):
    res = _run("testsignal", "two-tone", "--out", tmp_path / "t.wav", "--duration-s", 1)
    assert res.exit_code == 0, res.output
    flat = " ".join(res.stdout.split())
    assert all(w in flat for w in _CAUTION_WORDS), flat


def test_response_cautions_about_driving_a_transmitter(sweep):
    flat = " ".join(_run("response", sweep, sweep).stdout.split())
    assert all(w in flat for w in _CAUTION_WORDS), flat


# --------------------------------------------------------------------------- every command's output at 80 and 120 columns

def _clean(res, columns):
    assert res.exit_code == 0, res.output
    lines = res.stdout.splitlines()
    assert lines
    for ln in lines:
        assert ln == ln.rstrip(), repr(ln)
        assert len(ln) <= columns or " " not in ln.strip(), ln  # only an unbreakable name may run over
    assert not re.search(r"(?<![\w.])-0\.0+(?!\d*[1-9])\b", res.stdout), res.stdout
    assert "—" not in res.stdout
    return lines


@pytest.mark.parametrize("columns", [80, 120])
def test_design_and_synthesis_commands_read_cleanly(tmp_path, monkeypatch, columns):
    from pathlib import Path

    chains = sorted((Path(__file__).parent.parent / "corpus_synthetic" / "chains").glob("*.toml"))
    assert len(chains) >= 2
    monkeypatch.chdir(tmp_path)
    _clean(_run("chain", chains[0], columns=columns), columns)
    _clean(_run("sweep", "--low", "100:300:100", "--high", "2400:3200:400", "--max-bandwidth", 3000, columns=columns), columns)
    _clean(_run("testsignal", "steps", "--out", "s.wav", columns=columns), columns)
    sf.write("talk.wav", _speechlike(np.random.default_rng(7), seconds=4.0), 16000, subtype="PCM_16")
    lines = _clean(_run("compare", *chains[:2], "--speech", "talk.wav", columns=columns), columns)
    if columns == 120:  # the comparison is one line per chain when it fits
        assert any(ln.startswith("Chain") and "Occupied" in ln and "STOI" in ln for ln in lines)


def test_messages_are_renamed_to_options_without_touching_prose(capsys):
    import typer

    from voiceband.cli.common import fail, in_user_words

    names = {"peak_dbfs": "--peak-dbfs", "channel": "--channel"}
    assert in_user_words("peak_dbfs must be at most 0 dBFS; got 5.", names) == "--peak-dbfs must be at most 0 dBFS; got 5."
    assert in_user_words("channel 3 does not exist: the file has one channel.", names) == \
        "--channel 3 does not exist: the file has one channel."
    assert in_user_words("the --peak-dbfs option", names) == "the --peak-dbfs option"
    exc = fail("tones_hz must differ, got [np.float64(700.0)]")
    assert isinstance(exc, typer.Exit) and exc.exit_code == 2
    assert capsys.readouterr().err == "voiceband: tones_hz must differ, got [700.0].\n"
