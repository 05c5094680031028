"""Shared helpers for the robustness tests: running the CLI in-process and
checking that a refusal is one clean line."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

# the listening fixtures (small sessions, servers that are always stopped), for the server tests here
from tests.listening.conftest import make_session, serve  # noqa: F401

ROOT = Path(__file__).resolve().parents[2]
CORPUS = Path(__file__).resolve().parent / "corpus"
REF = ROOT / "models" / "studio-reference.toml"
ODD = ROOT / "models" / "odd-pair.toml"
DARK = ROOT / "models" / "ember-dark.toml"
PHRASE = ROOT / "dry_signals" / "default.toml"


def run(*args, catch=True):
    """``render ARGS`` in-process; stdout and stderr together in ``.output``."""
    from render.cli import main

    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=catch)


def assert_refused(result, fragment: str | None = None):
    """Exit 1 and one ``Error: `` line on stderr, the last one, holding ``fragment``; no traceback.

    Before it, stderr may hold only the progress label of a several-design run.
    """
    assert result.exception is None or isinstance(result.exception, SystemExit), repr(result.exception)
    assert result.exit_code == 1, (result.exit_code, result.output)
    lines = [line for line in result.stderr.splitlines() if line.strip()]
    errors = [line for line in lines if line.startswith("Error: ")]
    assert len(errors) == 1 and lines[-1] == errors[0], result.stderr
    assert all(line.startswith("rendering") for line in lines[:-1]), result.stderr
    assert "Traceback" not in result.output
    if fragment is not None:
        assert fragment in errors[0], (fragment, errors[0])
    return errors[0]


def check_outputs(folder: Path, *, frames: int | None = None, sample_rate: int = 48000) -> list[str]:
    """Every file under a final name in ``folder`` reads whole: each .wav with soundfile (with
    ``frames`` frames when given), each .json parses, each .png opens. Returns the final names;
    temporary ``.tmp-*`` files and the run's ``.run-files`` list are left out."""
    import soundfile as sf
    from PIL import Image

    names = []
    for p in sorted(folder.iterdir()):
        if p.name.startswith(".tmp-") or p.name == ".run-files":  # the run's list of its files is no output to read
            continue
        names.append(p.name)
        if p.suffix == ".wav":
            x, fs = sf.read(p, dtype="float32")
            assert fs == sample_rate, p
            assert np.isfinite(x).all(), p
            if frames is not None:
                assert x.shape[0] == frames, (p, x.shape)
        elif p.suffix == ".json":
            json.loads(p.read_text(encoding="utf-8"))
        elif p.suffix == ".png":
            with Image.open(p) as im:
                im.load()
        elif p.suffix == ".md":
            assert p.read_text(encoding="utf-8").endswith("\n"), p
    return names


@pytest.fixture()
def short_wav(tmp_path):
    """A 0.25 s mono float WAV of a 220 Hz sine at 0.1 m/s, 48 kHz."""
    from render.io.wav import float_wav_bytes

    fs = 48000
    x = 0.1 * np.sin(2 * np.pi * 220 * np.arange(fs // 4) / fs)
    path = tmp_path / "short.wav"
    path.write_bytes(float_wav_bytes(x, fs))
    return path
