"""The public API refuses what the command line refuses, naming the Python argument.

No outside source: these tests hold the library to the project's own rule
(DEVELOPERS.md, "Files" and "Errors"): nothing is overwritten unless asked, and a
refused argument is one line naming it, before any work or any file is written.
"""

from __future__ import annotations

from pathlib import Path

import pytest

import render

ROOT = Path(__file__).resolve().parents[1]
REF = ROOT / "models" / "studio-reference.toml"
PHRASE = ROOT / "dry_signals" / "default.toml"
FIT = ROOT / "models" / "fits" / "brighter-reference.toml"


def _earlier_run(folder: Path) -> Path:
    folder.mkdir()
    kept = folder / "studio-reference.wav"
    kept.write_bytes(b"an earlier run's clip")
    return kept


def test_render_clips_keeps_an_earlier_run_unless_told(tmp_path):
    out = tmp_path / "run"
    kept = _earlier_run(out)
    with pytest.raises(render.ArgumentError, match=r"^out=.*overwrite=True"):
        render.render_clips([REF], PHRASE, render.RenderSettings(seconds=0.5), out, plots=False)
    assert kept.read_bytes() == b"an earlier run's clip" and sorted(p.name for p in out.iterdir()) == ["studio-reference.wav"]
    run = render.render_clips([REF], PHRASE, render.RenderSettings(seconds=0.5), out, plots=False, overwrite=True)
    assert run.folder == out and kept.read_bytes() != b"an earlier run's clip"


def test_fit_keeps_an_earlier_run_unless_told(tmp_path):
    out = tmp_path / "fit"
    kept = _earlier_run(out)
    with pytest.raises(render.ArgumentError, match=r"^out=.*overwrite=True"):
        render.fit(FIT, out=out)
    assert kept.read_bytes() == b"an earlier run's clip" and sorted(p.name for p in out.iterdir()) == ["studio-reference.wav"]


def test_every_public_writer_takes_overwrite():
    # the public functions that write files: each refuses an existing output unless overwrite=True
    import inspect

    for name in ("render_clips", "fit", "fit_and_render", "unvoice", "build_blind_session", "score_blind_session"):
        p = inspect.signature(getattr(render, name)).parameters["overwrite"]
        assert p.kind is inspect.Parameter.KEYWORD_ONLY and p.default is False, name
