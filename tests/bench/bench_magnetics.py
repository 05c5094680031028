"""Coil-field benchmarks: run by hand, prints figures against targets.

    python tests/bench/bench_magnetics.py
    python tests/bench/bench_magnetics.py --trials 50000 --repeats 5

1. A coil's flux linkage from dipoles (B₁ at the dipole, 4 × 4 filaments):
   dipole places per second, one coil.
2. The rejection map (8 distances × 13 bearings, both planes) of the
   reference design with the demo bobbin: milliseconds per map.
3. The position Monte Carlo (default 20,000 trials): trials per second.
   Target for 2 and 3: thousands of positions per second.
4. The joint Monte Carlo (positions and part tolerances, 2,000 trials):
   trials per second, the engine included.

Not collected by pytest (the name does not start with ``test_``).
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

import numpy as np  # noqa: E402

from render.analysis.hum import field_derivative  # noqa: E402
from render.design import load_design  # noqa: E402
from render.magnetics.coil import CoilGeometry, coil_pair  # noqa: E402
from render.magnetics.rejection import engine_gains, joint_monte_carlo, position_monte_carlo, rejection_map  # noqa: E402

# invented demo bobbin (as in tests/magnetics)
DEMO = CoilGeometry(turns=1200, length=0.068, width=0.013, window_length=0.058, window_width=0.003, height=0.009)


def best(fn, repeats):
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times), statistics.median(times)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--trials", type=int, default=20000)
    ap.add_argument("--repeats", type=int, default=3)
    args = ap.parse_args()
    d = load_design(ROOT / "models" / "studio-reference.toml")
    coils = coil_pair(DEMO, DEMO, position_a=d.coil_a.position, position_b=d.coil_b.position)
    f, _ = field_derivative(d.hum)
    fa, fb = engine_gains(d, f)
    rng = np.random.default_rng(0)
    p = rng.standard_normal((args.trials, 3))
    a = rng.standard_normal((args.trials, 3))
    lo, med = best(lambda: coils[0].dipole_linkage(p, a), args.repeats)
    print(f"flux linkage, one coil: {args.trials / lo:,.0f} places/s (best), {args.trials / med:,.0f} (median)")
    for plane in ("xy", "xz"):
        lo, med = best(lambda: rejection_map(coils, from_a=fa, from_b=fb, frequency_hz=f, plane=plane), args.repeats)
        print(f"rejection map {plane} (8 × 13 places): {lo * 1e3:.1f} ms (best), {med * 1e3:.1f} ms (median)")
    lo, med = best(lambda: position_monte_carlo(coils, from_a=fa, from_b=fb, frequency_hz=f, trials=args.trials), args.repeats)
    print(f"position Monte Carlo: {args.trials / lo:,.0f} trials/s (best), {args.trials / med:,.0f} (median); target: thousands per second")
    lo, med = best(lambda: joint_monte_carlo(d, coils, frequency_hz=f, trials=2000), args.repeats)
    print(f"joint Monte Carlo (engine included): {2000 / lo:,.0f} trials/s (best), {2000 / med:,.0f} (median)")


if __name__ == "__main__":
    main()
