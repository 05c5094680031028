"""Pinned output bytes: the main job's WAVs do not change unless a commit says so.

The hashes in ``pinned_outputs.json`` are this project's own earlier outputs (no
outside source: this is a regression pin, not a check of the physics). A commit
that changes the physics on purpose regenerates them with
``python tests/pinned/test_pinned_outputs.py --update`` and says so in its message.

The bytes depend on the machine's BLAS kernels: OpenBLAS picks its matrix-product
kernels by the CPU, and its AVX-512 kernels round the phrase synthesis's products
differently in the last bits from its AVX2 ("Haswell") ones. So the pinned commands
run in a child process with ``OPENBLAS_CORETYPE=Haswell`` (OpenBLAS's documented
override), which every x86_64 CPU of the last decade can run; the pins were made
with those kernels. On another architecture the pins cannot match and the test
skips, saying why.
"""

from __future__ import annotations

import hashlib
import json
import os
import platform
import subprocess
import sys
from pathlib import Path

import pytest
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


KERNELS = {"OPENBLAS_CORETYPE": "Haswell"}  # read by OpenBLAS when it loads, so set before numpy is imported


def produce_in_child(tmp: Path) -> dict[str, dict[str, str]]:
    """:func:`produce` in a new Python process with the pinned BLAS kernels."""
    env = {**os.environ, **KERNELS}
    res = subprocess.run([sys.executable, __file__, "--produce", str(tmp)], cwd=ROOT, env=env, capture_output=True, text=True, check=False)
    assert res.returncode == 0, res.stdout + res.stderr
    return json.loads(res.stdout.strip().splitlines()[-1])


def test_pinned_wav_bytes(tmp_path):
    if platform.machine().lower() not in ("x86_64", "amd64"):
        pytest.skip(f"the pins were made with OpenBLAS's x86_64 Haswell kernels; this machine is {platform.machine()}")
    pinned = json.loads(PIN.read_text())["wav_sha256"]
    got = produce_in_child(tmp_path)
    for cmd in RUNS:
        assert got[cmd] == pinned[cmd], f"render {cmd}: output WAV bytes changed; if on purpose, regenerate the pin and say so in the commit"


if __name__ == "__main__" and "--produce" in sys.argv:  # the child of produce_in_child
    os.chdir(ROOT)  # the default phrase is found from the project folder
    print(json.dumps(produce(Path(sys.argv[sys.argv.index("--produce") + 1]))))
elif __name__ == "__main__" and "--update" in sys.argv:
    import tempfile

    with tempfile.TemporaryDirectory() as d:
        PIN.write_text(json.dumps({"wav_sha256": produce_in_child(Path(d))}, indent=1, sort_keys=True) + "\n")
    print(f"wrote {PIN}")
