"""Engine and command benchmarks: run by hand, prints figures against targets.

    python tests/bench/bench_engine.py            # both benchmarks
    python tests/bench/bench_engine.py --designs 2000 --repeats 3

1. The engine: 10,000 random valid designs (the ngspice cross-check's
   generator) evaluated at 200 log-spaced frequencies, 20 Hz to 20 kHz:
   the velocity, passive and hum responses. Target: under 5 s. Loading
   the designs (validation) is timed separately; the engine figure counts
   from validated designs to the sampled responses.
2. ``render response MODEL --points 600`` end to end in a fresh process,
   start-up included (summary only, and with --csv). Target: well under
   1 s (we report against 1 s). Skipped with a note if the command is not
   there yet.

Not collected by pytest (the name does not start with ``test_``).
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

import numpy as np  # noqa: E402

from render.circuit.engine import responses  # noqa: E402
from render.circuit.params import from_designs  # noqa: E402
from render.design import parse_design  # noqa: E402
from tests.circuit.designgen import random_design_dict  # noqa: E402

ENGINE_TARGET_S = 5.0
RESPONSE_TARGET_S = 1.0


def _line(label, seconds, target=None):
    ratio = f"   {seconds / target:5.2f} × target ({target:g} s)" if target else ""
    print(f"  {label:44s} {seconds * 1e3:9.1f} ms{ratio}")


def bench_engine(n: int, repeats: int, seed: int = 1):
    print(f"engine: {n} random designs at 200 frequencies")
    rng = np.random.default_rng(seed)
    dicts = [random_design_dict(rng, i) for i in range(n)]
    t0 = time.perf_counter()
    designs = [parse_design(d, source=f"random-{i}") for i, d in enumerate(dicts)]
    _line("parse_design (validation), not counted", time.perf_counter() - t0)
    f = np.geomspace(20.0, 20e3, 200)
    best = {}
    for _ in range(repeats):
        t = [time.perf_counter()]
        p = from_designs(designs)
        t.append(time.perf_counter())
        r = responses(p)
        t.append(time.perf_counter())
        h = r.velocity()(f)
        hp = r.passive_velocity()(f)
        hh = r.hum()(f)
        t.append(time.perf_counter())
        for k, dt in zip(("from_designs", "responses", "evaluate"), np.diff(t)):
            best[k] = min(best.get(k, np.inf), dt)
        best["total"] = min(best.get("total", np.inf), t[-1] - t[0])
    assert h.shape == hp.shape == hh.shape == (n, f.size)
    assert np.all(np.isfinite(h)) and np.all(np.isfinite(hp)) and np.all(np.isfinite(hh))
    _line("from_designs (Design -> arrays)", best["from_designs"])
    _line("responses (rational transfer functions)", best["responses"])
    _line("evaluate velocity + passive + hum (N×200)", best["evaluate"])
    _line(f"engine total (best of {repeats})", best["total"], ENGINE_TARGET_S * n / 10_000)
    if n != 10_000:
        print(f"  (target scaled to {n} designs: {ENGINE_TARGET_S * n / 10_000:g} s)")


def _has_response_command() -> bool:
    try:
        import render.cli.response  # noqa: F401
    except ImportError:
        return False
    return True


def _time_command(args, repeats):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        res = subprocess.run(args, capture_output=True, text=True, cwd=ROOT)
        times.append(time.perf_counter() - t0)
        if res.returncode != 0:
            raise RuntimeError(f"{' '.join(args)} exited {res.returncode}:\n{res.stderr[-1000:]}")
    return times


def bench_response(repeats: int):
    print("render response, 600 points, end to end (fresh process each run)")
    model = ROOT / "models" / "studio-reference.toml"
    if not _has_response_command():
        print("  skipped: `render response` is not there yet (render/cli/response.py)")
        return
    if not model.exists():
        print(f"  skipped: {model} not found")
        return
    py = [sys.executable]
    base = _time_command(py + ["-c", "pass"], repeats)
    _line(f"python start-up alone (median of {repeats})", statistics.median(base))
    plain = _time_command(py + ["-m", "render", "response", str(model), "--points", "600"], repeats)
    _line(f"summary only (median of {repeats})", statistics.median(plain), RESPONSE_TARGET_S)
    _line("summary only (worst)", max(plain), RESPONSE_TARGET_S)
    with tempfile.TemporaryDirectory() as tmp:
        times = []
        for i in range(repeats):
            out = Path(tmp) / f"r{i}.csv"
            times += _time_command(py + ["-m", "render", "response", str(model), "--points", "600", "--csv", str(out)], 1)
            rows = out.read_text().splitlines()
            assert len(rows) == 601, f"expected a header and 600 rows, got {len(rows)} lines"
    _line(f"with --csv (median of {repeats})", statistics.median(times), RESPONSE_TARGET_S)


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--designs", type=int, default=10_000)
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--skip-engine", action="store_true")
    ap.add_argument("--skip-response", action="store_true")
    a = ap.parse_args()
    if not a.skip_engine:
        bench_engine(a.designs, a.repeats)
    if not a.skip_response:
        bench_response(max(a.repeats, 5))


if __name__ == "__main__":
    main()
