"""Batch building blocks: file discovery, hashes, row columns against the analysis schema, output files."""

from __future__ import annotations

import hashlib
import json
from importlib import resources

import pytest

from voiceband.batch import BatchSettings, discover_files, file_sha256, settings_hash
from voiceband.batch.rows import COLUMNS, MEASUREMENT_COLUMNS, column_types, failed_row, ok_row
from voiceband.batch.writers import journal_path, open_output
from voiceband.errors import AudioInputError, OutputExistsError, VoicebandError


def test_discover_walks_sorted_skips_hidden_and_non_audio_and_dedupes(tmp_path):
    (tmp_path / "b").mkdir()
    (tmp_path / ".hidden").mkdir()
    for name in ("b/z.WAV", "b/a.flac", "a.mp3", "notes.txt", ".x.wav", ".hidden/h.wav", "c.aiff"):
        (tmp_path / name).write_bytes(b"x")
    found = discover_files([tmp_path, tmp_path / "a.mp3", tmp_path / "b" / ".." / "c.aiff"])
    assert [p.relative_to(tmp_path).as_posix() for p in found] == ["a.mp3", "c.aiff", "b/a.flac", "b/z.WAV"]
    assert [p.name for p in discover_files([tmp_path], pattern="*.txt")] == ["notes.txt"]
    # a file named explicitly is taken whatever its name
    assert discover_files([tmp_path / "notes.txt"]) == [tmp_path / "notes.txt"]
    with pytest.raises(AudioInputError, match="No such file or folder"):
        discover_files([tmp_path / "missing"])


def test_sha256_known_answer_and_large_file(tmp_path):
    p = tmp_path / "abc"
    p.write_bytes(b"abc")
    # FIPS 180-4 / NIST example "abc" (SHA-256 one-block message); digest from memory, hashlib agrees
    assert file_sha256(p) == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    big = tmp_path / "big"
    data = bytes(range(256)) * 9000  # spans several 1 MiB reads
    big.write_bytes(data)
    assert file_sha256(big) == hashlib.sha256(data).hexdigest()  # reference: hashlib in one call


def test_settings_hash_is_stable_and_follows_each_setting():
    a = settings_hash(BatchSettings().as_dict())
    assert a == settings_hash(BatchSettings(channel="0").as_dict()) and len(a) == 16
    assert a != settings_hash(BatchSettings(channel="mix").as_dict())
    assert a != settings_hash(BatchSettings(profile="ssb-voice").as_dict())
    assert settings_hash(BatchSettings(profile="ssb-voice").as_dict()) != settings_hash(BatchSettings(profile="telephone").as_dict())
    assert a != settings_hash({**BatchSettings().as_dict(), "voiceband_version": "0.0.0"})


def _schema_has(schema: dict, dotted: str) -> bool:
    node = schema
    for part in dotted.split("."):
        if "oneOf" in node:
            node = next(x for x in node["oneOf"] if x.get("type") == "object")
        props = node.get("properties", {})
        if part not in props:
            return False
        node = props[part]
    return True


def test_measurement_columns_are_dotted_names_of_the_analysis_json():
    schema = json.loads(resources.files("voiceband").joinpath("schemas/analysis.schema.json").read_text())
    missing = [n for n, _ in MEASUREMENT_COLUMNS if not _schema_has(schema, n)]
    assert missing == []
    assert COLUMNS[:5] == ("path", "sha256", "settings", "status", "error")  # fixed by the batch issue


def test_rows_never_carry_nan_and_failed_rows_are_one_line():
    doc = {"input": {"duration_s": 1.0}, "levels": {"rms_dbfs": float("nan"), "peak_dbfs": float("-inf")},
           "noise": {"hum": None}, "findings": [{"code": "a", "severity": "info", "message": "m"}]}
    r = ok_row("x.wav", "0" * 64, "s", doc)
    assert r["levels.rms_dbfs"] is None and r["levels.peak_dbfs"] is None
    assert r["noise.hum.fundamental_hz"] is None and r["findings"] == "a:info"
    f = failed_row("x.wav", None, "s", "bad\nfile   here.")
    assert f["error"] == "bad file here." and f["status"] == "failed"
    assert set(r) == set(f) == set(COLUMNS)


def _good_row(i, sha="a"):
    return ok_row(f"f{i}.wav", sha * 64, "s" * 16, {"input": {"duration_s": float(i)}, "findings": []})


@pytest.mark.parametrize("suffix", [".csv", ".jsonl"])
def test_output_resume_cuts_partial_row_and_refuses_other_columns(tmp_path, suffix):
    p = tmp_path / f"t{suffix}"
    out = open_output(p, COLUMNS, column_types())
    out.write(_good_row(1, "a"), {"input": {"path": "f1.wav"}})
    out.write(_good_row(2, "b"), {"input": {"path": "f2.wav"}})
    out.close()
    with open(p, "a") as f:
        f.write("f3.wav,cccc" if suffix == ".csv" else '{"path":"f3.wav","sha')  # killed mid-row
    with pytest.raises(OutputExistsError, match="--resume"):
        open_output(p, COLUMNS, column_types())
    out = open_output(p, COLUMNS, column_types(), resume=True)
    assert set(out.recorded_paths) == {("f1.wav", "s" * 16), ("f2.wav", "s" * 16)}
    row = out.copy_row(("b" * 64, "s" * 16), "copy.wav")
    out.close()
    assert row["path"] == "copy.wav" and row["input.duration_s"] in (2.0, "2.0")
    text = p.read_text()
    assert "f3.wav" not in text and text.endswith("\n")
    if suffix == ".jsonl":
        last = json.loads(text.splitlines()[-1])
        assert last["analysis"]["input"]["path"] == "copy.wav"  # the copy's full analysis names the copy
    with pytest.raises(VoicebandError, match="other columns"):
        open_output(p, COLUMNS + ("extra.column",), column_types((("extra.column", "float"),)), resume=True)


def test_parquet_journal_survives_a_kill_and_resume_merges_it(tmp_path):
    pq = pytest.importorskip("pyarrow.parquet")
    p = tmp_path / "t.parquet"
    out = open_output(p, COLUMNS, column_types())
    out.write(_good_row(1, "a"))
    out.write(_good_row(2, "b"))
    out._f.close()  # the process dies here: no final rewrite, the journal stays
    assert pq.read_table(p).num_rows == 0 and journal_path(p).exists()
    with pytest.raises(OutputExistsError):
        open_output(p, COLUMNS, column_types())
    out = open_output(p, COLUMNS, column_types(), resume=True)
    assert len(out.recorded_paths) == 2
    out.write(_good_row(3, "c"))
    out.close()
    t = pq.read_table(p)
    assert t.column("path").to_pylist() == ["f1.wav", "f2.wav", "f3.wav"]
    assert t.column("input.duration_s").to_pylist() == [1.0, 2.0, 3.0]
    assert not journal_path(p).exists()


def test_batch_command_and_package_load_no_dask_or_pyarrow():
    import subprocess
    import sys

    code = ("import sys, voiceband.batch, voiceband.cli.main; "
            "print(','.join(m for m in ('dask', 'distributed', 'pyarrow') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.strip()
    assert out == ""


def test_csv_resume_reads_back_a_path_with_quotes_and_a_newline(tmp_path):
    p = tmp_path / "t.csv"
    out = open_output(p, COLUMNS, column_types())
    odd = ok_row('we"ird\nname.wav', "d" * 64, "s" * 16, {"input": {"duration_s": 4.0}, "findings": []})
    out.write(odd)
    out.write(_good_row(5, "e"))
    out.close()
    out = open_output(p, COLUMNS, column_types(), resume=True)
    assert ('we"ird\nname.wav', "s" * 16) in out.recorded_paths and len(out.recorded_paths) == 2
    row = out.copy_row(("d" * 64, "s" * 16), "plain.wav")
    out.close()
    assert row["input.duration_s"] == "4.0" and row["sha256"] == "d" * 64
    import csv

    with open(p, newline="") as f:
        assert [r["path"] for r in csv.DictReader(f)] == ['we"ird\nname.wav', "f5.wav", "plain.wav"]


def test_batch_output_is_an_abstract_base_every_format_completes(tmp_path):
    from voiceband.batch.writers import BatchOutput, _CsvOutput, _JsonlOutput, _ParquetOutput

    with pytest.raises(TypeError, match="abstract"):
        BatchOutput(tmp_path / "x.csv", ("path",), {"path": "string"})
    assert BatchOutput.__abstractmethods__ == {"open", "_append", "_read_back"}
    for cls in (_CsvOutput, _JsonlOutput, _ParquetOutput):
        assert not cls.__abstractmethods__, cls
