"""Speed of the construction chain (run by hand: ``python tests/bench/bench_construction.py``).

Prints, for each slipway demo design: the field solve and sensing without a
cache (CPU and wall time), a load from the disk cache, and the two-polarisation
synthesis of the default phrase against real time. Targets of our own: a
first load of a few seconds of CPU, a cached load well under a second, the
synthesis faster than real time. Not collected by pytest (no unit test is timed).
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))


def main() -> None:
    with tempfile.TemporaryDirectory() as cache:
        os.environ["RENDER_CACHE_DIR"] = cache
        from render.design import load_design
        from render.design.construction import _sensing, pickup_for
        from render.dry import default_dry_path, load_dry

        for stem in ("slipway-steel-blades", "slipway-steel-poles", "slipway-magnet-blades"):
            path = ROOT / "models" / f"{stem}.toml"
            _sensing.cache_clear()
            w, c = time.perf_counter(), time.process_time()
            d = load_design(path)
            first = (time.perf_counter() - w, time.process_time() - c)
            _sensing.cache_clear()
            w = time.perf_counter()
            load_design(path)
            cached = time.perf_counter() - w
            pk = pickup_for(d)
            w = time.perf_counter()
            dry = load_dry(default_dry_path(), sample_rate=48000, positions=(d.coil_a.position, d.coil_b.position), apertures=(0, 0), pickup=pk)
            synth = time.perf_counter() - w
            print(
                f"{stem:24s} first load {first[0]:6.2f} s wall, {first[1]:6.2f} s CPU;  cached load {cached * 1e3:6.1f} ms;"
                f"  synthesis of {dry.seconds:.1f} s: {synth:5.2f} s ({dry.seconds / synth:.1f}x real time)"
            )


if __name__ == "__main__":
    main()
