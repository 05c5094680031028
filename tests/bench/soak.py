"""Soak: many renders in one process, with resident memory printed as it goes.

    python tests/bench/soak.py                # 200 renders
    python tests/bench/soak.py --renders 50   # a shorter one

Each render plays the default phrase (0.25 s) through the next design of
``models/`` (turn by turn, with the passive reference, the noise floor and hum
switched on and off in turn), and writes its WAV and JSON record atomically
into one temporary folder, replacing the last; every 25th also writes a
spectrogram, so a leaked plot would show. After a warm-up the resident set may
not grow by more than ``--bound-mb`` (40 MB: our own bound, about a tenth of a
render process's size; common practice, no source); the script exits 1 if it does.
"""

from __future__ import annotations

import argparse
import glob
import json
import resource
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
WARM_UP = 20  # renders before the baseline is taken: imports, first-call caches, allocator pools
BOUND_MB = 40.0


def resident_mb() -> float:
    """Resident set size now (VmRSS), MB; the peak from getrusage where /proc is missing."""
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("VmRSS:"):
                    return int(line.split()[1]) / 1024.0
    except OSError:
        pass
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return peak / 1024.0 if sys.platform != "darwin" else peak / 2**20


def soak(renders: int = 200, *, every: int = 20, seconds: float = 0.25, out=None, show=print) -> list[tuple[int, float]]:
    """Render ``renders`` times in this process; returns (render count, resident MB) at each report."""
    from render.clip import RenderSettings as Settings
    from render.design import load_design
    from render.io.atomic import write_text
    from render.io.wav import write_float_wav
    from render.report.plots import spectrogram_plot
    from render.report.records import clip_record as record
    from render.runs.clips import render_design

    designs = [load_design(p) for p in sorted(glob.glob(str(ROOT / "models" / "*.toml")))]
    dry = ROOT / "dry_signals" / "default.toml"
    folder = Path(out or tempfile.mkdtemp(prefix="render-soak-"))
    series = []
    began = time.monotonic()
    for i in range(renders):
        design = designs[i % len(designs)]
        settings = Settings(seconds=seconds, seed=i, passive=i % 3 == 0, noise=i % 4 == 1, hum=i % 5 != 2)
        clip = render_design(design, dry, settings)
        rec = record(clip, settings=settings, volts_full_scale=5.0, rig_record={"file": None}, dry_path=dry)
        write_float_wav(folder / "soak.wav", clip.volts / 5.0, settings.sample_rate, overwrite=True)
        write_text(folder / "soak.json", json.dumps(rec, allow_nan=False) + "\n", overwrite=True)
        if i % 25 == 0:
            spectrogram_plot(folder / "soak.png", clip.volts, sample_rate=settings.sample_rate, title="soak", overwrite=True)
        done = i + 1
        if done % every == 0 or done == renders or done == 1:
            mb = resident_mb()
            series.append((done, mb))
            show(f"{done:5d} renders  {mb:8.1f} MB resident  {time.monotonic() - began:7.1f} s")
    return series


def growth_mb(series, warm_up: int = WARM_UP) -> float:
    """How far the resident set rose above its level just after the warm-up, MB."""
    after = [mb for n, mb in series if n >= warm_up]
    return max(after) - after[0] if after else 0.0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--renders", type=int, default=200)
    ap.add_argument("--every", type=int, default=20, help="print the resident set every N renders")
    ap.add_argument("--bound-mb", type=float, default=BOUND_MB)
    args = ap.parse_args(argv)
    import shutil

    folder = tempfile.mkdtemp(prefix="render-soak-")
    try:
        series = soak(args.renders, every=args.every, out=folder)
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    grew = growth_mb(series)
    print(f"resident set grew {grew:.1f} MB after the first {WARM_UP} renders (bound {args.bound_mb:g} MB)")
    if grew > args.bound_mb:
        print("FAIL: memory keeps growing from render to render", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.path.insert(0, str(ROOT))
    sys.exit(main())
