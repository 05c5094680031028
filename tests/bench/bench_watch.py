"""Save to sound in ``render watch``: from writing a file to the page playing its new clip, printed against the target.

Run by hand from the project folder (not part of the test suite; needs Debian's chromium and Playwright):

    python tests/bench/bench_watch.py            # 5 saves of each kind
    python tests/bench/bench_watch.py --saves 9

One design plays the default phrase (8.5 s, 48 kHz) on the live page in
headless Chromium, heard and playing. Each save rewrites one file and
waits for the page to swap the clip in. "Save to sound" runs from just
before the write to the moment the page has scheduled the new clip to
sound (its ``data-swap-at``, on the same wall clock), split into:

- detect: the write until the watcher hands the change over (watchfiles,
  inotify, a 30 ms quiet step);
- render: loading, rendering, measuring and the page's copy of the clip;
- page: publishing until the clip is fetched, decoded and scheduled (the
  page schedules 25 ms ahead of its audio clock);
- render CPU: this process's CPU time during the render step (one BLAS
  thread; the server and watcher threads are idle meanwhile), about what it
  takes on an otherwise idle core.

- of it, load: loading the design file (for a design with a ``[construction]``
  and coils given by their ``wire``, a changed construction means a new field
  solve: magnets, steel, sensing, and each coil's impedance from it).

Edits: a network value (input_a load_c), the rig (cable length), the
phrase (one note's fret), and a coil given by its winding (turns: the
winding's closed-form estimate, render.circuit.winding), on studio-reference
and bench-wound; then, reported separately, on the slowest shipped design
(slipway-steel-blades: coils from their wire, a steel-blade construction),
a network value and a construction value (steel_permeability, a new value
every save, so every save needs a new field solve). The field-solve cache
(render.io.cache) is pointed at an empty temporary folder for the run, so no
solve is found from an earlier run.

Target: under 1 s from save to sound for an 8 s phrase on one design, for
edits of networks, rig and phrase. Edits that need a new field solve are
measured and reported separately.
"""

from __future__ import annotations

import argparse
import os
import re
import shutil
import statistics
import sys
import tempfile
import threading
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path[:0] = [str(ROOT), str(ROOT / "tests")]
os.chdir(ROOT)

from bench_render import machine  # noqa: E402

from tests.listening.test_browser import ARGS, _browser_or_skip  # noqa: E402

TARGET_S = 1.0


def edit_key(path: Path, key: str, values: list[str], k: int) -> None:
    text = path.read_text(encoding="utf-8")
    new, n = re.subn(rf'(?m)^({key} = )("[^"]*"|[0-9.]+)', lambda m: m.group(1) + values[k % len(values)], text, count=1)
    assert n == 1, (path, key)
    path.write_text(new, encoding="utf-8")


def edit_note(path: Path, k: int) -> None:
    """Move the phrase's last fretted note up or down a fret."""
    text = path.read_text(encoding="utf-8")
    frets = list(re.finditer(r"(?m)^fret = (\d+)$", text))
    m = frets[-1]
    fret = int(m.group(1)) + (1 if k % 2 == 0 else -1)
    path.write_text(text[: m.start()] + f"fret = {fret}" + text[m.end() :], encoding="utf-8")


def measure(browser, model: Path, folder: Path, kinds: dict, saves: int) -> dict[str, list[tuple[float, ...]]]:
    from render.clip import RenderSettings
    from render.compare.server import LiveServer
    from render.runs.watch import WatchRun, follow_changes

    phrase, rig = folder / "phrase.toml", folder / "rig.toml"
    run = WatchRun([model], dry=phrase, rig=rig, settings=RenderSettings())
    t0 = time.perf_counter()
    run.start()
    print(f"  first render of {model.name} ({run.slots[0].now.entry['seconds']:g} s phrase): {time.perf_counter() - t0:.2f} s, start-up imports included")
    marks: dict[str, float] = {}
    refresh = run.refresh
    load = run._load_design

    def timed_load(slot):
        t = time.perf_counter()
        try:
            return load(slot)
        finally:
            marks["load"] = marks.get("load", 0.0) + time.perf_counter() - t

    run._load_design = timed_load  # type: ignore[method-assign]

    def timed(paths):
        marks["detected"] = time.time()
        marks["load"] = 0.0
        cpu = time.process_time()
        out = refresh(paths)
        marks["cpu"] = time.process_time() - cpu
        marks["published"] = time.time()
        return out

    run.refresh = timed  # type: ignore[method-assign]  # the bench's stopwatch around the real thing
    server = LiveServer(run.board, page=run.page(), port=0).start_thread()
    stop = threading.Event()
    follower = threading.Thread(target=follow_changes, args=(run,), kwargs={"notify": lambda line: None, "stop": stop}, daemon=True)
    follower.start()
    results: dict[str, list[tuple[float, ...]]] = {}
    try:
        page = browser.new_page(viewport={"width": 1280, "height": 800})
        page.goto(server.url)
        page.wait_for_selector('body[data-phase="caution"]', state="attached", timeout=30000)
        page.click("#begin")
        page.click("#play")
        time.sleep(1.0)
        swaps = 0
        for kind, edit in kinds.items():
            results[kind] = []
            for k in range(saves):
                time.sleep(0.4)
                saved = time.time()
                edit(k)
                swaps += 1
                page.wait_for_selector(f'body[data-swaps="{swaps}"]', state="attached", timeout=30000)
                sound = int(page.get_attribute("body", "data-swap-at")) / 1000.0
                results[kind].append((sound - saved, marks["detected"] - saved, marks["published"] - marks["detected"], sound - marks["published"], marks["cpu"], marks["load"]))
        page.close()
    finally:
        stop.set()
        follower.join(timeout=10)
        server.stop()
    return results


def edit_permeability(path: Path, k: int) -> None:
    """A new steel permeability every save (101, 102, …): each one a field solve never made before."""
    edit_key(path, "steel_permeability", [str(101 + k)], 0)


def field_solve_seconds() -> float:
    from render.circuit.winding import awg_diameter
    from render.impedance.coil_model import derive_coil
    from render.impedance.eddy import CorePart, prism_demagnetising_factor
    from render.impedance.materials import STEEL
    from render.magnetics.coil import CoilGeometry

    winding = CoilGeometry(5000, 0.068, 0.013, 0.058, 0.003, 0.009)  # an invented humbucker coil
    dia = awg_diameter(42)
    part = CorePart("slab", 3e-3, STEEL, fill=0.3, demagnetising_factor=prism_demagnetising_factor(0.003, 0.060, 0.009))
    derive_coil(winding, bare_diameter=dia, outer_diameter=1.12 * dia, parts=[part])  # warm
    best = float("inf")
    for _ in range(3):
        t0 = time.perf_counter()
        derive_coil(winding, bare_diameter=dia, outer_diameter=1.12 * dia, parts=[part])
        best = min(best, time.perf_counter() - t0)
    return best


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--saves", type=int, default=5)
    args = parser.parse_args()
    from playwright.sync_api import sync_playwright

    print(f"machine: {machine()}; load average {os.getloadavg()[0]:.1f}")  # others' jobs inflate the wall times, not the render CPU
    with tempfile.TemporaryDirectory() as tmp, tempfile.TemporaryDirectory() as cache, sync_playwright() as pw:
        os.environ["RENDER_CACHE_DIR"] = cache  # no field solve found from an earlier run
        folder = Path(tmp)
        for name in ("studio-reference", "bench-wound", "slipway-steel-blades"):
            shutil.copy(ROOT / "models" / f"{name}.toml", folder / f"{name}.toml")
        shutil.copy(ROOT / "dry_signals" / "default.toml", folder / "phrase.toml")
        (folder / "rig.toml").write_text('[rig]\ncable_length = "6m"\n', encoding="utf-8")
        browser = pw.chromium.launch(executable_path=_browser_or_skip(), args=[*ARGS, "--autoplay-policy=no-user-gesture-required"], headless=True)
        try:
            ref, wound = folder / "studio-reference.toml", folder / "bench-wound.toml"
            print("Save to sound, one design, the default phrase (8.5 s at 48 kHz), median and worst of", args.saves, "saves:")
            results = measure(
                browser,
                ref,
                folder,
                {
                    "network (input_a load_c)": lambda k: edit_key(ref, "load_c", ['"2n7"', '"3n9"', '"4n7"'], k),
                    "rig (cable length)": lambda k: edit_key(folder / "rig.toml", "cable_length", ['"3m"', '"6m"', '"9m"'], k),
                    "phrase (one note's fret)": lambda k: edit_note(folder / "phrase.toml", k),
                },
                args.saves,
            )
            results |= measure(
                browser,
                wound,
                folder,
                {
                    "winding (turns, closed-form estimate)": lambda k: edit_key(wound, "turns", ["1450", "1400", "1350"], k),
                },
                args.saves,
            )
            slip = folder / "slipway-steel-blades.toml"
            solved = measure(
                browser,
                slip,
                folder,
                {
                    "slowest design: network (input_a load_c)": lambda k: edit_key(slip, "load_c", ['"2n7"', '"3n9"', '"4n7"'], k),
                    "slowest design: construction (new solve)": lambda k: edit_permeability(slip, k),
                },
                args.saves,
            )
        finally:
            browser.close()

    def table(rows_by_kind, note):  # note: kind -> what the row is held against
        print(f"  {'edit':42s} {'save to sound':>15s} {'worst':>7s}   {'detect':>7s} {'render':>7s} {'(load)':>7s} {'page':>7s}   {'render CPU':>10s}  (medians, s)")
        for kind, rows in rows_by_kind.items():
            total = [r[0] for r in rows]
            med = [statistics.median(r[i] for r in rows) for i in range(6)]
            print(f"  {kind:42s} {med[0]:13.2f} s {max(total):6.2f}s   {med[1]:7.3f} {med[2]:7.3f} {med[5]:7.3f} {med[3]:7.3f}   {med[4]:10.3f}  {note(kind)}")

    table(results, lambda kind: f"(target {TARGET_S:g} s)")
    print("Edits of slipway-steel-blades (coils from their wire, a steel-blade construction), reported separately:")
    table(solved, lambda kind: "(a new field solve: no target)" if "new solve" in kind else f"(target {TARGET_S:g} s)")
    print("  (render CPU: this process's CPU time during the render step, about what it takes on an idle core; wall times grow with the machine's load)")
    print(f"  a field-solved coil (derive_coil: Neumann sums, eddy currents, ladder fit), alone: {field_solve_seconds():.2f} s per coil")
    print(f"  load average at the end {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()
