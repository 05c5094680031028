"""Shared fixtures: small synthetic sessions and servers that are always stopped."""

from __future__ import annotations

import contextlib
import hashlib
from pathlib import Path

import numpy as np
import pytest

from render.listening.build import build_session
from render.listening.loudness import match_loudness
from render.listening.server import ListeningServer

ROOT = Path(__file__).resolve().parents[2]
MODELS = (ROOT / "models" / "studio-reference.toml", ROOT / "models" / "ember-dark.toml")


def synthetic_pair(sample_rate: int = 16000, seconds: float = 1.0):
    """Two clearly different test signals (a low and a high tone with a little noise)."""
    t = np.arange(int(sample_rate * seconds)) / sample_rate
    rng = np.random.default_rng(11)
    a = 0.2 * np.sin(2 * np.pi * 220 * t) + 0.01 * rng.standard_normal(t.size)
    b = 0.5 * np.sin(2 * np.pi * 1760 * t) + 0.02 * rng.standard_normal(t.size)
    return a, b


def design_record(path: Path) -> dict:
    raw = path.read_bytes()
    return {"name": path.stem, "path": str(path), "sha256": hashlib.sha256(raw).hexdigest(), "toml": raw.decode("utf-8")}


@pytest.fixture()
def make_session(tmp_path):
    """make_session(method=..., trials=..., seed=...) -> SessionPaths of a new session under tmp_path."""
    count = iter(range(1000))

    def make(method="abx", trials=4, seed=7, sample_rate=16000, seconds=1.0, out=None):
        signals, match = match_loudness(synthetic_pair(sample_rate, seconds), sample_rate=sample_rate, names=["a", "b"])
        out = out or tmp_path / f"session-{next(count)}"
        return build_session(
            out,
            signals,
            sample_rate=sample_rate,
            method=method,
            trials=trials,
            seed=seed,
            designs=[design_record(p) for p in MODELS],
            record={"rig": None, "loudness": match.record()},
        )

    return make


@pytest.fixture()
def serve():
    """serve(session, port=0) -> a running ListeningServer; every one is stopped at teardown."""
    started = []

    def start(session, **kw):
        server = ListeningServer(session, **kw).start_thread()
        started.append(server)
        return server

    yield start
    for server in started:
        with contextlib.suppress(Exception):
            server.stop()
