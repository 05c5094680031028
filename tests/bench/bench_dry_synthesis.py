"""Speed of the string synthesis (run by hand: ``python tests/bench/bench_dry_synthesis.py``).

Prints the time to synthesise a 10 s six-string phrase at 48 kHz at two
sensing points, and the ratio to real time. Target of our own: well under
one second. Not collected by pytest (no unit test is timed).
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from render.dry.modal import string_velocity  # noqa: E402
from render.dry.phrase import load_phrase, parse_phrase  # noqa: E402

TEN_SECONDS = {
    "seconds": 10.0,
    "chord": [
        {"time": 0.0, "frets": [0, 2, 2, 1, 0, 0]},
        {"time": 2.5, "frets": [3, 2, 0, 0, 0, 3]},
        {"time": 5.0, "frets": ["x", 0, 2, 2, 2, 0], "direction": "up"},
        {"time": 7.5, "frets": [0, 2, 2, 0, 0, 0]},
    ],
    "note": [{"time": 0.25 * k, "string": 6, "fret": 0, "mute": 0.7} for k in range(1, 10)] + [{"time": 3.0, "string": 1, "fret": 7, "bend": {"semitones": 1, "over": 0.1}, "duration": 1.0}],
}


def best_of(fn, repeats=5):
    fn()  # warm up
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def main() -> None:
    cases = [("10 s, six strings (4 chords, 9 muted notes, a bend)", parse_phrase(TEN_SECONDS, source="bench"))]
    cases += [(f"dry_signals/{p.name}", load_phrase(p)) for p in sorted((ROOT / "dry_signals").glob("*.toml"))]
    for label, phrase in cases:
        seconds = best_of(lambda: string_velocity(phrase, sample_rate=48000, positions=[0.045, 0.063], apertures=[0.02, 0.02]))
        print(f"{label:60s} {phrase.seconds:5.1f} s audio  {seconds * 1e3:7.1f} ms  ({phrase.seconds / seconds:6.0f}x real time)")
    flux_slopes()


def flux_slopes() -> None:
    """A constructed pickup's flux-table slopes at 400,000 points: the compiled kernel against scipy's own evaluation."""
    import numpy as np
    from scipy.interpolate import RectBivariateSpline

    from render.dry._flux_kernel import slope_tables, slopes

    rng = np.random.default_rng(0)
    dy, dz = np.linspace(-8e-3, 8e-3, 33), np.linspace(-1.5e-3, 2e-3, 15)
    spline = RectBivariateSpline(dy, dz, rng.normal(size=(33, 15)), kx=3, ky=3)
    y, z = rng.uniform(-1e-3, 1e-3, 400_000), rng.uniform(-1e-3, 1e-3, 400_000)
    tables = slope_tables(spline.tck)
    ours = best_of(lambda: slopes(tables, y, z))
    theirs = best_of(lambda: (spline.ev(y, z, dx=1), spline.ev(y, z, dy=1)))
    print(f"flux slopes, 400,000 points: compiled {ours * 1e3:.1f} ms, scipy ev {theirs * 1e3:.1f} ms ({theirs / ours:.1f}x)")
    emf_step(spline, tables, rng)


def emf_step(spline, tables, rng) -> None:
    """One coil's sensing step at 400,000 samples of float32 motion at a scaled strength: the fused kernel against
    the same step in numpy (scale, mask the silent samples, clip, compiled slopes, multiply and add)."""
    import numpy as np

    from render.dry._flux_kernel import add_emf, slopes

    n = 400_000
    t = np.arange(n) / 48000.0  # a string's smooth swing at 110 Hz, sampled at 48 kHz
    moving = np.vstack([0.6e-3 * np.sin(2 * np.pi * 110 * t), 0.4e-3 * np.cos(2 * np.pi * 110 * t), rng.normal(0, 0.3, (2, n))]).astype(np.float32)
    box = (-8e-3, 8e-3, -1.5e-3, 2e-3)
    out = np.zeros(n)

    def arrays():
        m = 1.7 * moving.astype(float)
        live = np.flatnonzero(np.any(m != 0.0, axis=0))
        y, z = np.clip(m[0, live], box[0], box[1]), np.clip(m[1, live], box[2], box[3])
        gy, gz = slopes(tables, y, z)
        out[live] += gy * m[2, live] + gz * m[3, live]

    fused = best_of(lambda: add_emf(tables, box, moving, out, scale=1.7))
    steps = best_of(arrays)
    print(f"one coil's EMF from kept motion, 400,000 samples: fused {fused * 1e3:.1f} ms, in numpy steps {steps * 1e3:.1f} ms ({steps / fused:.1f}x)")


if __name__ == "__main__":
    main()
