"""``voiceband synth``: regenerate the synthetic corpus from its spec files."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

from .common import EXIT_BAD_INPUT, fail, guarded

_DEFAULT_FOLDER = Path("corpus_synthetic")


@guarded
def synth(
    out: Annotated[
        Path, typer.Option("--out", "-o", help="Folder for the WAV files and manifest.json.", show_default=False)
    ],
    specs: Annotated[
        Optional[list[Path]],
        typer.Argument(
            help="Spec files (TOML). Default: every *.toml in ./corpus_synthetic.", show_default=False, metavar="SPEC"
        ),
    ] = None,
    force: Annotated[bool, typer.Option("--force", help="Overwrite existing WAV files and the manifest.")] = False,
    verify: Annotated[
        bool,
        typer.Option("--verify", help="Write nothing: regenerate in a temporary folder and compare hashes with OUT/manifest.json."),
    ] = False,
) -> None:
    """Render synthetic speech recordings from spec files and record their hashes in a manifest."""
    from ..errors import ChainFileError
    from ..report.summary import number
    from ..synth import corpus

    paths = list(specs) if specs else corpus.default_spec_paths(_DEFAULT_FOLDER)
    if not paths:
        raise ChainFileError(f"no spec files given and none found in '{_DEFAULT_FOLDER}/'.")
    from .render import Item, print_report

    if verify:
        results = corpus.verify(paths, out / corpus.MANIFEST_NAME)
        bad = 0
        rows = []
        for name, recorded, now in results:
            if recorded is None:
                state = "not in manifest"
                bad += 1
            elif recorded == now:
                state = "same"
            else:
                state = "DIFFERENT"
                bad += 1
            rows.append(("", name, state, f"sha256 {now[:16]}"))
        summary = [] if bad else [Item("info", f"All {len(results)} file(s) match the manifest.")]
        print_report(f"Regenerated and compared with {out / corpus.MANIFEST_NAME}", rows, summary, items_title="Result")
        if bad:
            raise fail(f"{bad} of {len(results)} regenerated file(s) do not match '{out / corpus.MANIFEST_NAME}'", EXIT_BAD_INPUT)
        return

    written = corpus.generate(paths, out, force=force)
    rows = [("", str(out / e.file), f"{number(e.duration_s, 1)} s",
             f"{e.sample_rate_hz} Hz, {e.subtype}, sha256 {e.sha256[:16]}") for e in written]
    print_report(f"Wrote {len(written)} file(s) and {out / corpus.MANIFEST_NAME}", rows)
