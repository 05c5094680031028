"""Speed of the render with the preamp's loop solved in time, printed as figures and ratios.

Run by hand from the project folder (not part of the test suite):

    python tests/bench/bench_loop.py            # everything (a few minutes)
    python tests/bench/bench_loop.py --quick    # the real-time factors only

Figures:

- the default main job (``render clips`` with 10 designs, 2 jobs, start-up included) against
  the renderer before the loop (git commit BEFORE, extracted to a temporary folder), with a
  warm compile cache (target ≤ 1.5× before), and the cold start (an empty numba cache)
  reported separately;
- the loop's compile time on first use (cold) and its load time from numba's cache (warm);
- a hard-clipped 60 s clip's real-time factor on one core, compute only, best of 3 (target
  ≥ 40×): the default phrase with its string velocity ×100 (notes clip nearly all the time), and
  a 1 kHz sine 20 dB past the clip onset; and, reported, a 5 kHz sine slewing at a slew_rate of
  5e4 V/s (the slew limit's check on every step).

The machine's load moves every figure; the main job runs five times each way, interleaved.
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
os.chdir(ROOT)
os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

FS = 48000
BEFORE = "0b0afc1"  # the last commit with the memoryless soft limit


def line(name, value, target=None):
    t = f"   (target {target})" if target else ""
    print(f"  {name:56s} {value}{t}")


def bench_rtf():
    from render.analysis.bias import onset
    from render.chain.stream import make_plan, render_signal
    from render.clip import RenderSettings as Settings
    from render.design import load_design
    from render.runs.clips import dry_for

    print("Real-time factor of a hard-clipped 60 s clip, compute only, one core, best of 3:")
    d = load_design(ROOT / "models" / "studio-reference.toml")
    plan = make_plan(d, sample_rate=FS)
    render_signal(d, np.zeros(FS), sample_rate=FS, plan=plan)  # the compiled loop loaded (or compiled) outside the timing
    phrase = dry_for(d, ROOT / "dry_signals" / "default.toml", Settings()).velocity
    phrase = 100 * np.tile(phrase, (1, int(np.ceil(60 * FS / phrase.shape[1]))))[:, : 60 * FS]
    o = onset(d)
    t = np.arange(60 * FS) / FS
    sine = 10 * min(o["velocity_up_m_per_s"], o["velocity_down_m_per_s"]) * np.sin(2 * np.pi * 1000 * t)
    # a slewing op-amp (slew_rate 5e4 V/s, as tests/chain/test_slew_against_ngspice.py): a 5 kHz sine at 0.8 times
    # the clip onset, whose linear output rises at up to 74,000 V/s, slews without nearing a knee
    import dataclasses

    slewing = dataclasses.replace(d, supply=dataclasses.replace(d.supply, slew_rate=5e4))
    slew_plan = make_plan(slewing, sample_rate=FS)
    slew_sine = 0.8 * min(o["velocity_up_m_per_s"], o["velocity_down_m_per_s"]) * np.sin(2 * np.pi * 5000 * t)
    out = {}
    cases = (
        ("default phrase, string velocity ×100", d, plan, phrase, "≥ 40×"),
        ("1 kHz sine, 20 dB past the clip onset", d, plan, sine, "≥ 40×"),
        ("5 kHz sine slewing at 5e4 V/s (no knee)", slewing, slew_plan, slew_sine, None),
    )
    for label, design, p, v, target in cases:
        best = float("inf")
        for _ in range(3):
            t0 = time.process_time()
            r = render_signal(design, v, sample_rate=FS, plan=p)
            best = min(best, time.process_time() - t0)
        out[label] = 60 / best
        line(label, f"{60 / best:5.0f}× real time ({best:.2f} s; limited {100 * r['clipped_fraction']:.0f} % of the oversampled steps)", target)
    return out


COMPILE_SNIPPET = """
import time, numpy as np
t0 = time.perf_counter()
from render.chain.stream import render_signal
from render.design import load_design
d = load_design("models/studio-reference.toml")
render_signal(d, 100 * np.sin(2 * np.pi * 220 * np.arange(4800) / 48000), sample_rate=48000)
print(time.perf_counter() - t0)
"""


def bench_compile():
    print("The loop's compiled code (numba, cache=True): a 0.1 s clipped render in a new process, imports included:")
    with tempfile.TemporaryDirectory() as tmp:
        env = dict(os.environ, NUMBA_CACHE_DIR=tmp, PYTHONPATH=str(ROOT))
        for label in ("cold (empty cache: compiles)", "warm (from the cache)"):
            out = subprocess.run([sys.executable, "-c", COMPILE_SNIPPET], cwd=ROOT, env=env, check=True, capture_output=True, text=True)
            line(label, f"{float(out.stdout.strip()):.2f} s")


def _clips(cwd, files, out, env):
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-m", "render", "clips", *files, "--out", str(out), "--jobs", "2"], cwd=cwd, env=env, check=True, capture_output=True)
    return time.perf_counter() - t0


def bench_main_job():
    print("The default main job: render clips, 10 designs, --jobs 2, start-up included:")
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        shipped = sorted((ROOT / "models").glob("*.toml"))
        ten = []
        for i in range(10):
            src = shipped[i % len(shipped)]
            dst = tmp / f"{i:02d}-{src.name}"
            dst.write_text(src.read_text().replace(f'name = "{src.stem}"', f'name = "{i:02d}-{src.stem}"'))
            ten.append(str(dst))
        # the two renderers side by side, each run from a folder holding its package and the dry signals
        now, before = tmp / "now", tmp / "before"
        now.mkdir()
        (now / "render").symlink_to(ROOT / "render")
        before.mkdir()
        have_before = shutil.which("git") is not None
        if have_before:
            archive = subprocess.run(["git", "-C", str(ROOT), "archive", BEFORE, "render"], capture_output=True)
            have_before = archive.returncode == 0
            if have_before:
                subprocess.run(["tar", "-x", "-C", str(before)], input=archive.stdout, check=True)
        for folder in (now, before):
            (folder / "dry_signals").symlink_to(ROOT / "dry_signals")
        env = dict(os.environ)
        env.pop("PYTHONPATH", None)
        cold = dict(env, NUMBA_CACHE_DIR=str(tmp / "numba-cold"))
        warm = dict(env, NUMBA_CACHE_DIR=str(tmp / "numba-warm"))
        line("cold start (empty compile cache)", f"{_clips(now, ten, tmp / 'cold', cold):.2f} s wall (the loop compiles only if a clip clips)")
        _clips(now, ten, tmp / "warmup", warm)
        runs = {"now": [], "before": []}
        for k in range(5):
            runs["now"].append(_clips(now, ten, tmp / f"n{k}", warm))
            if have_before:
                runs["before"].append(_clips(before, ten, tmp / f"b{k}", warm))
        n = float(np.median(runs["now"]))
        line("with the loop, warm compile cache", f"{n:.2f} s wall (median of 5; {min(runs['now']):.2f}–{max(runs['now']):.2f} s)")
        if have_before:
            b = float(np.median(runs["before"]))
            line(f"before (commit {BEFORE})", f"{b:.2f} s wall (median of 5; {min(runs['before']):.2f}–{max(runs['before']):.2f} s)")
            line("ratio", f"{n / b:.2f}×", "≤ 1.5×")
        else:
            line(f"before (commit {BEFORE})", "not available (no git or no such commit here)")


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="the real-time factors only")
    a = ap.parse_args()
    bench_rtf()
    if not a.quick:
        bench_compile()
        bench_main_job()


if __name__ == "__main__":
    main()
