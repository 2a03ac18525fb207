"""The bundled synthetic corpus: every spec reads, and regeneration reproduces the manifest hashes."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from voiceband.errors import ChainFileError, OutputExistsError
from voiceband.synth import corpus

CORPUS = Path(__file__).resolve().parent.parent / "corpus_synthetic"
SPECS = sorted(CORPUS.glob("*.toml"))


def test_corpus_has_the_reference_file_and_fits_the_size_budget():
    names = {corpus.read_spec(p).output for p in SPECS}
    assert "speech_medium_normal.wav" in names
    manifest = json.loads((CORPUS / corpus.MANIFEST_NAME).read_text())
    assert {e["file"] for e in manifest["files"]} == names
    # 16-bit mono: 2 bytes per frame; the corpus stays under 10 MB (issue 4).
    assert sum(2 * e["frames"] for e in manifest["files"]) < 10_000_000


@pytest.mark.parametrize("spec", SPECS, ids=[p.stem for p in SPECS])
def test_spec_reads_and_says_what_it_exercises(spec):
    s = corpus.read_spec(spec)
    assert len(s.description) > 40 and s.bits == 16


def test_regeneration_reproduces_manifest_hashes(tmp_path):
    # Deterministic generation: same spec, same seed, same generator version → same bytes.
    recorded = {e["file"]: e for e in json.loads((CORPUS / corpus.MANIFEST_NAME).read_text())["files"]}
    written = corpus.generate(SPECS, tmp_path)
    for e in written:
        assert e.sha256 == recorded[e.file]["sha256"], e.file
        assert e.generator_version == recorded[e.file]["generator_version"] == corpus.GENERATOR_VERSION


def test_generate_checks_every_output_before_writing(tmp_path):
    spec = SPECS[0]
    name = corpus.read_spec(spec).output
    (tmp_path / corpus.MANIFEST_NAME).write_text("{}")
    with pytest.raises(OutputExistsError, match="--force"):
        corpus.generate([spec], tmp_path)
    assert not (tmp_path / name).exists()


def test_two_specs_writing_one_file_are_refused(tmp_path):
    with pytest.raises(ChainFileError, match="both write"):
        corpus.generate([SPECS[0], SPECS[0]], tmp_path)


def test_stage_seeds_differ_from_each_other_and_from_the_speech_seed():
    seeds = {corpus._stage_seed(1, i) for i in range(1, 6)}
    assert len(seeds) == 5 and 1 not in seeds
