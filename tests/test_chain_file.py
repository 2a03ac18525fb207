"""Chain files: SI-prefixed values, the TOML reader, and one clear sentence for every bad file."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from voiceband.chain import Filter, Gain, Ladder, parse_value, read_chain
from voiceband.cli.main import app
from voiceband.errors import ChainFileError

CHAINS = Path(__file__).resolve().parent.parent / "corpus_synthetic" / "chains"


@pytest.mark.parametrize("text, unit, value", [
    # SI prefixes: BIPM SI Brochure, 9th ed. (2019), Table 7; "m" is milli, "M" mega
    ("47n", "farad", 47e-9),
    ("47nF", "farad", 47e-9),
    ("47 nF", "farad", 47e-9),
    ("68m", "henry", 68e-3),
    ("51.5mH", "henry", 51.5e-3),
    ("2.2k", "ohm", 2200.0),
    ("2.2kΩ", "ohm", 2200.0),
    ("1M", "ohm", 1e6),
    ("10u", "farad", 10e-6),
    ("10µF", "farad", 10e-6),
    ("100p", "farad", 100e-12),
    ("1G", "hz", 1e9),
    ("2.7k", "hz", 2700.0),
    ("2.7kHz", "hz", 2700.0),
    # resistor code with the prefix as decimal point: IEC 60062 (RKM code), from memory
    ("4k7", "ohm", 4700.0),
    ("1R5", "ohm", 1.5),
    ("2M2", "ohm", 2.2e6),
    ("1n5", "farad", 1.5e-9),
    (600, "ohm", 600.0),
    (1e-6, "farad", 1e-6),
])
def test_si_prefixed_values(text, unit, value):
    assert parse_value(text, unit=unit) == pytest.approx(value, rel=1e-12)


@pytest.mark.parametrize("text, unit, message", [
    ("47mH", "farad", "in henries but a value in farads"),
    ("22nF", "ohm", "in farads but a value in ohms"),
    ("47x", "farad", "unknown suffix"),
    ("abc", "ohm", "not a number"),
    ("1R5", "farad", "resistor code"),
    ("inf", "ohm", "not a number"),
    (True, "ohm", "not a number"),
])
def test_bad_values(text, unit, message):
    with pytest.raises(ValueError, match=message):
        parse_value(text, unit=unit)


def _write(tmp_path, text, name="c.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_a_chain_file_reads_into_stages(tmp_path):
    p = _write(tmp_path, '''
name = "test"
[[stage]]
kind = "gain"
rf_ohm = "22k"
rg_ohm = "1k"
[[stage]]
kind = "lowpass"
type = "chebyshev1"
order = 4
cutoff_hz = "2.7k"
ripple_db = 0.5
[[stage]]
kind = "ladder"
source_ohm = "600"
load_ohm = 600
first = "series"
elements = ["51.5mH", "176.84n", {l = "10m", c = "100n", arrangement = "parallel"}]
''')
    c = read_chain(p)
    assert c.name == "test" and len(c.stages) == 3
    assert isinstance(c.stages[0], Gain) and c.stages[0].gain == 23.0
    assert isinstance(c.stages[1], Filter) and c.stages[1].cutoff_hz == 2700.0
    lad = c.stages[2]
    assert isinstance(lad, Ladder)
    assert [b.position for b in lad.branches] == ["series", "shunt", "series"]
    assert lad.branches[0].l_henry == pytest.approx(51.5e-3) and lad.branches[1].c_farad == pytest.approx(176.84e-9)
    assert lad.branches[2].arrangement == "parallel"


@pytest.mark.parametrize("body, fragment", [
    ('name = "x"\n[[stage]]\nkind = "notch"\n', "stage 1 has an unknown kind 'notch'; write kind = one of gain"),
    ('name = "x"\n[[stage]]\nkind = "gain"\ndb = 3\n[[stage]]\nkind = "lowpass"\norder = 4\ncutof_hz = 3000\n',
     "stage 2 (lowpass): unknown parameter 'cutof_hz'; a lowpass stage takes"),
    ('name = "x"\n[[stage]]\nkind = "rc"\nmode = "highpass"\nr_ohm = "10k"\nc_farad = "47mH"\n',
     "stage 1 (rc): c_farad: '47mH' is in henries but a value in farads is needed; write it like \"47n\""),
    ('name = "x"\n[[stage]]\nkind = "lowpass"\norder = 40\ncutoff_hz = 3000\n',
     "stage 1 (lowpass): order must be a whole number 1–12; got 40"),
    ('name = "x"\n[[stage]]\nkind = "lowpass"\norder = 4\n', "stage 1 (lowpass): missing 'cutoff_hz'; add a line such as cutoff_hz = \"2.7k\""),
    ('name = "x"\n[[stage]]\nkind = "lowpass"\norder = 4.5\ncutoff_hz = 3000\n', "order must be a whole number such as 4"),
    ('name = "x"\n[[stage]]\nkind = "emphasis"\ntau_us = "750u"\n', "tau_us as text needs its unit"),
    ('name = "x"\n[[stage]]\nkind = "ladder"\nsource_ohm = 600\nload_ohm = 600\nfirst = "shunt"\nelements = ["54n", {l = "1m", c = "1u"}]\n',
     "element 2 (series) has both l and c; add arrangement"),
    ('name = "x"\n[[stage]]\nkind = "clipper"\nlevel_db = 12\nlevel_dbfs = -6\n', "exactly one of level_db"),
    ('name = "x"\n[[stage]]\nkind = "ssb"\nphase_error_deg = 90\n', "phase_error_deg must be -45–45"),
    ('[[stage]]\nkind = "gain"\ndb = 3\n', "needs a top-level name"),
    ('name = "x"\n', "has no stages"),
    ('name = "x"\ncolour = "red"\n[[stage]]\nkind = "gain"\ndb = 3\n', "unknown top-level key 'colour'"),
    ('name = "x"\n[[stage]\nkind = "gain"\n', "is not valid TOML"),
])
def test_bad_chain_files_get_one_sentence_with_file_stage_and_fix(tmp_path, body, fragment):
    p = _write(tmp_path, body, name="board.toml")
    with pytest.raises(ChainFileError) as err:
        read_chain(p)
    msg = str(err.value)
    assert "'board.toml'" in msg and fragment in msg
    assert msg.endswith(".") and msg.count("\n") == 0


def test_missing_and_binary_files(tmp_path):
    with pytest.raises(ChainFileError, match="no chain file at"):
        read_chain(tmp_path / "none.toml")
    p = tmp_path / "bin.toml"
    p.write_bytes(b"\xff\xfe\x00garbage")
    with pytest.raises(ChainFileError, match="not a text file"):
        read_chain(p)


def test_cli_bad_chain_file_exits_2_with_one_sentence(tmp_path):
    p = _write(tmp_path, 'name = "x"\n[[stage]]\nkind = "lowpass"\norder = 4\ncutoff_hz = "3kF"\n', name="bad.toml")
    result = CliRunner().invoke(app, ["chain", str(p)])
    assert result.exit_code == 2
    lines = [line for line in result.output.splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("voiceband: 'bad.toml' stage 1 (lowpass): cutoff_hz")
    assert "Traceback" not in result.output


@pytest.mark.parametrize("path", sorted(CHAINS.glob("*.toml")), ids=lambda p: p.name)
def test_example_chains_read_and_respond(path):
    c = read_chain(path)
    h = c.response(np.array([1000.0]))
    assert np.isfinite(h).all() and abs(h[0]) > 1.0  # every example board has its 27 dB preamp


def test_example_ladder_board_uses_the_handbook_parts():
    # board B's ladder is the handbook example (5-pole Butterworth, 600 ohm, 3 kHz; values computed from g_k)
    lad = next(s for s in read_chain(CHAINS / "board_b_ladder.toml").stages if isinstance(s, Ladder))
    values = [b.c_farad if b.c_farad is not None else b.l_henry for b in lad.branches]
    assert values == pytest.approx([54.65e-9, 51.5e-3, 176.84e-9, 51.5e-3, 54.65e-9])


def test_chain_package_imports_light():
    # STYLE.md habit 1 / DEVELOPERS "Start-up time matters": building chains needs no scipy.signal or matplotlib
    import subprocess
    import sys

    code = ("import sys, voiceband, voiceband.chain, voiceband.design.sweep; "
            "voiceband.read_chain(sys.argv[1]); "
            "print(','.join(m for m in ('scipy.signal', 'matplotlib', 'librosa') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code, str(CHAINS / "board_b_ladder.toml")],
                         capture_output=True, text=True, check=True).stdout.strip()
    assert out == ""
