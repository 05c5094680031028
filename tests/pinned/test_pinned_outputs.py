"""Pinned output bytes: the main job's WAVs do not change unless a commit says so.

The hashes in ``pinned_outputs.json`` are this project's own earlier outputs (no
outside source: this is a regression pin, not a check of the physics). A commit
that changes the physics on purpose regenerates them with
``python tests/pinned/test_pinned_outputs.py --update`` and says so in its message.
"""

from __future__ import annotations

import hashlib
import json
import sys
from pathlib import Path

from click.testing import CliRunner

ROOT = Path(__file__).resolve().parents[2]
PIN = Path(__file__).with_name("pinned_outputs.json")
DESIGNS = ["bench-wound", "ember-dark", "glasswing-bright", "high-rail-18v", "odd-pair", "split-voice", "studio-reference"]

RUNS = {
    "clips": [*(f"models/{d}.toml" for d in DESIGNS), "--no-plots"],
    "bias": ["models/studio-reference.toml"],
    "hum": ["models/odd-pair.toml"],
    "blind": ["models/studio-reference.toml", "models/glasswing-bright.toml", "--seed", "7"],
}


def produce(tmp: Path) -> dict[str, dict[str, str]]:
    """Run each pinned command into ``tmp`` and hash every WAV it writes (by relative name)."""
    from render.cli import main

    out: dict[str, dict[str, str]] = {}
    for cmd, args in RUNS.items():
        folder = tmp / cmd
        argv = [cmd, *(str(ROOT / a) if a.startswith("models/") else a for a in args), "--out", str(folder)]
        res = CliRunner().invoke(main, argv)
        assert res.exit_code == 0, f"render {' '.join(argv)}: {res.output}"
        if cmd == "blind":  # clip names are random by design: pin each design's render, the trials' draws and the dithered clips in trial order
            key = json.loads((folder / "private" / "key.json").read_text())
            for t in key["trials"]:
                for name in t["clips"].values():
                    assert hashlib.sha256((folder / "public" / name).read_bytes()).hexdigest() == key["clip_sha256"][name]
            in_order = "".join(key["clip_sha256"][t["clips"][role]] for t in key["trials"] for role in ("A", "B", "X"))
            out[cmd] = {
                "design_a": key["render_sha256"][0],
                "design_b": key["render_sha256"][1],
                "draws": "".join(f"{t['a']}{t['x']}" for t in key["trials"]),
                "clips": hashlib.sha256(in_order.encode("ascii")).hexdigest(),
            }
        else:
            out[cmd] = {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest() for p in sorted(folder.rglob("*.wav"))}
    return out


def test_pinned_wav_bytes(tmp_path, monkeypatch):
    monkeypatch.chdir(ROOT)  # the default phrase is found from the project folder
    pinned = json.loads(PIN.read_text())["wav_sha256"]
    got = produce(tmp_path)
    for cmd in RUNS:
        assert got[cmd] == pinned[cmd], f"render {cmd}: output WAV bytes changed; if on purpose, regenerate the pin and say so in the commit"


if __name__ == "__main__" and "--update" in sys.argv:
    import os
    import tempfile

    os.chdir(ROOT)
    with tempfile.TemporaryDirectory() as d:
        PIN.write_text(json.dumps({"wav_sha256": produce(Path(d))}, indent=1, sort_keys=True) + "\n")
    print(f"wrote {PIN}")
