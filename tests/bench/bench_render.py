"""Speed and memory of the render, printed as figures and ratios against the targets.

Run by hand from the project folder (not part of the test suite):

    python tests/bench/bench_render.py            # everything (about 2 minutes)
    python tests/bench/bench_render.py --quick    # skip the one-hour memory run

KeptFigures: real-time factor per design for a 60 s clip (compute only, one
core; target ≥ 200×), a 10 s clip's compute (target ≤ 0.1 s), the wall time
of the default main job (target ≤ 3 s for 10 designs on 2 cores, start-up
included), the ratio against an ngspice transient of the same circuit and
clip (target ≥ 100×), Monte Carlo trials per second (2000 trials ≤ 2 s), a
fit (≤ 30 s), and the peak memory of a one-hour recording (target < 500 MB).
"""

from __future__ import annotations

import argparse
import os
import platform
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))
os.chdir(ROOT)

FS = 48000


def line(name, value, target=None):
    t = f"   (target {target})" if target else ""
    print(f"  {name:52s} {value}{t}")


def machine():
    import threadpoolctl

    cpu = platform.processor() or platform.machine()
    try:
        for ln in Path("/proc/cpuinfo").read_text().splitlines():
            if ln.startswith("model name"):
                cpu = ln.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    blas = ", ".join(f"{i['internal_api']} {i.get('num_threads')} threads" for i in threadpoolctl.threadpool_info())
    return f"{cpu}; {os.cpu_count()} cores; Python {platform.python_version()}; numpy {np.__version__}; {blas}"


def bench_rtf(designs):
    from render.chain.stream import make_plan, render_signal
    from render.clip import RenderSettings as Settings
    from render.runs.clips import dry_for

    print("Real-time factor, 60 s of the default phrase (looped), compute only, one core, best of 3:")
    rtfs = []
    for d in designs:
        v = dry_for(d, ROOT / "dry_signals" / "default.toml", Settings()).velocity
        v = np.tile(v, (1, int(np.ceil(60 * FS / v.shape[1]))))[:, : 60 * FS]
        plan = make_plan(d, sample_rate=FS)
        dt = float("inf")
        for _ in range(3):  # best of three, as timeit does: the first run also pays for page faults
            t0 = time.process_time()
            render_signal(d, v, sample_rate=FS, plan=plan)
            dt = min(dt, time.process_time() - t0)
        rtfs.append(60 / dt)
        line(d.name, f"{60 / dt:7.0f}× real time ({dt * 1000:.0f} ms for 60 s; 10 s ≈ {dt / 6 * 1000:.0f} ms)", "≥ 200×; 10 s ≤ 100 ms")
    return min(rtfs)


def bench_main_job():
    print("End-to-end: the default main job (render clips, every models/*.toml), start-up included:")
    # as after any earlier run: the package's bytecode is there (PYTHONDONTWRITEBYTECODE, set on
    # some machines, would otherwise make every run compile the package's sources again)
    import compileall

    compileall.compile_dir(str(ROOT / "render"), quiet=1)
    shipped = sorted((ROOT / "models").glob("*.toml"))
    out = {}
    with tempfile.TemporaryDirectory() as tmp:
        # ten designs: the shipped ones plus copies, as a designer's folder would hold (with the folders
        # their files name relative to themselves: measured coils, bobbins)
        import shutil

        for sub in (p for p in (ROOT / "models").iterdir() if p.is_dir()):
            shutil.copytree(sub, Path(tmp) / sub.name)
        ten = []
        for i in range(10):
            src = shipped[i % len(shipped)]
            dst = Path(tmp) / f"{i:02d}-{src.name}"
            dst.write_text(src.read_text().replace(f'name = "{src.stem}"', f'name = "{i:02d}-{src.stem}"'))
            ten.append(str(dst))
        for label, files in ((f"{len(shipped)} shipped designs", []), ("10 designs", ten)):
            for jobs in (1, 2):
                for plots in ("--plots", "--no-plots"):
                    runs = []
                    for k in range(5 if jobs == 2 else 1):  # the target case five times: a shared machine wobbles
                        t0 = time.perf_counter()
                        subprocess.run(
                            [sys.executable, "-m", "render", "clips", *files, "--out", str(Path(tmp) / f"o{jobs}{plots}{len(files)}-{k}"), "--jobs", str(jobs), plots], check=True, capture_output=True
                        )
                        runs.append(time.perf_counter() - t0)
                    dt = float(np.median(runs))
                    out[(label, jobs, plots)] = dt
                    target = "10 designs ≤ 3 s on 2 cores" if label == "10 designs" and jobs == 2 else None
                    spread = f" (median of {len(runs)}; {min(runs):.2f}–{max(runs):.2f} s)" if len(runs) > 1 else ""
                    line(f"{label}, --jobs {jobs}, {plots}", f"{dt:.2f} s wall{spread}", target)
    return out


def bench_ngspice(design, seconds=1.0):
    from spice import NGSPICE, active_netlist, run_transient

    from render.chain.stream import make_plan, render_signal

    print(f"Against an ngspice transient of the same circuit and clip ({seconds:g} s, 1 µs steps, trapezoidal):")
    if not NGSPICE:
        line("ngspice", "not installed; skipped")
        return None
    t = np.arange(int(seconds * 192000) + 1) / 192000
    x = 1e-2 * np.sin(2 * np.pi * 330 * t) * np.exp(-3 * t)
    wa = design.coil_a.signal_polarity * design.coil_a.sensitivity
    wb = design.coil_b.signal_polarity * design.coil_b.sensitivity
    t0 = time.perf_counter()
    run_transient(active_netlist(design, wa=wa, wb=wb), t, x, stop=seconds, step=1e-6)
    spice_s = time.perf_counter() - t0
    plan = make_plan(design, sample_rate=FS)
    v = np.interp(np.arange(int(seconds * FS)) / FS, t, x)
    t0 = time.perf_counter()
    render_signal(design, v, sample_rate=FS, plan=plan)
    ours = time.perf_counter() - t0
    line("ngspice", f"{spice_s:.2f} s wall ({spice_s / seconds:.2f}× the clip length)")
    line("render (plan built once)", f"{ours * 1000:.1f} ms")
    line("ratio", f"{spice_s / ours:.0f}× faster", "≥ 100×")
    return spice_s / ours


def bench_mc(design):
    from render.analysis.hum import hum_tolerances

    print("Monte Carlo of hum rejection (resistors 1 %, capacitors 5 %, turns 2 %):")
    hum_tolerances(design, trials=100, seed=0)
    t0 = time.perf_counter()
    hum_tolerances(design, trials=2000, seed=0)
    dt = time.perf_counter() - t0
    line("2000 trials", f"{dt:.3f} s ({2000 / dt:,.0f} trials/s)", "≤ 2 s")
    return dt


def bench_fit():
    print("Fit: five free parts (two tied), five aims:")
    t0 = time.perf_counter()
    with tempfile.TemporaryDirectory() as tmp:
        subprocess.run([sys.executable, "-m", "render", "fit", "models/fits/brighter-reference.toml", "--out", str(Path(tmp) / "f")], check=True, capture_output=True)
    dt = time.perf_counter() - t0
    line("render fit models/fits/brighter-reference.toml", f"{dt:.1f} s wall", "≤ 30 s")
    return dt


def bench_memory(hours=1.0):
    import soundfile as sf

    print(f"Peak memory, a {hours:g}-hour recording (one design, streamed, no plots):")
    time_bin = shutil.which("time") or "/usr/bin/time"
    with tempfile.TemporaryDirectory() as tmp:
        wav = Path(tmp) / "long.flac"
        n = int(hours * 3600 * FS)
        with sf.SoundFile(wav, "w", samplerate=FS, channels=1, format="FLAC", subtype="PCM_16") as f:
            t = np.arange(FS * 10) / FS
            tile = (0.3 * np.sin(2 * np.pi * 196 * t) * np.exp(-(t % 2.5))).astype(np.float32)
            for _ in range(n // tile.size):
                f.write(tile)
        t0 = time.perf_counter()
        r = subprocess.run(
            [time_bin, "-v", sys.executable, "-m", "render", "clips", "models/studio-reference.toml", "--dry", str(wav), "--velocity-scale", "4", "--out", str(Path(tmp) / "o"), "--no-plots"],
            capture_output=True,
            text=True,
        )
        dt = time.perf_counter() - t0
        rss = next((int(ln.split(":")[1]) for ln in r.stderr.splitlines() if "Maximum resident set size" in ln), None)
        if r.returncode:
            print(r.stderr[-2000:])
        line("peak resident memory", f"{rss / 1024:.0f} MB" if rss else "unknown", "< 500 MB")
        line("wall time", f"{dt:.1f} s ({hours * 3600 / dt:.0f}× real time, reading FLAC, writing float WAV)")
        return rss


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="skip the one-hour memory run")
    a = ap.parse_args()
    from render.design import load_design

    designs = [load_design(p) for p in sorted((ROOT / "models").glob("*.toml"))]
    print("Machine:", machine())
    bench_rtf(designs)
    bench_main_job()
    bench_ngspice(designs[[d.name for d in designs].index("studio-reference")])
    bench_mc(load_design(ROOT / "models" / "odd-pair.toml"))
    bench_fit()
    if not a.quick:
        bench_memory()
    print(f"(this process peaked at {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MB)")


if __name__ == "__main__":
    main()
