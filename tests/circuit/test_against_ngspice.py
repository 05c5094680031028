"""The engine's transfer functions against ngspice AC analyses.

Reference: ngspice (Debian package ``ngspice``), run in batch mode on
netlists that ``tests/spice.py`` writes from each design's values alone,
element by element, without the engine's algebra. For every shipped
design and for a seeded set of random valid designs, magnitude must agree
within 0.001 dB and phase within 0.01° at every point of a 200-per-decade
sweep from 20 Hz to 20 kHz (the README's figure; measured when last
tightened, Debian's ngspice-39: at most 2.8e-4 dB and 3.0e-3°, both in a
hum response close to a null; run with -s to print the worst), for:

- the active velocity response (string velocity -> amp input),
- the common-mode (hum) response (uniform dB/dt -> amp input),
- the passive reference's velocity and hum responses,
- each coil's EMF alone (active and passive), and
- the output impedance at the jack (active and passive).

Deep cancellations: where a response is a residue more than 80 dB below
the sum of its two coils' separate contributions (a hum null, or the
passive hum of two identical coils, which is exactly zero), its dB and
phase are ill-conditioned for ngspice itself (its own relative error with
a 1e10-gain VCVS standing in for the ideal op-amp is about 1e-7). There
the check is the error relative to that sum instead, 1e-6.
"""

from __future__ import annotations

import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np
import pytest
from spice import active_netlist, jack_probe, passive_netlist, require_ngspice, run_ac

from render.circuit.engine import design_responses
from render.circuit.rig import volume_fraction
from render.design import load_design, parse_design

from .designgen import random_design_dict

ROOT = Path(__file__).resolve().parents[2]
MODELS = sorted((ROOT / "models").glob("*.toml"))
N_RANDOM = 60
SEED = 20240611

TOL_DB = 0.001  # magnitude, dB (ngspice; the README states it)
TOL_DEG = 0.01  # phase, degrees (ngspice)
DEEP = 1e-4  # 80 dB below the sum of the coils' separate contributions
TOL_DEEP = 1e-6  # error relative to that sum at such points

QUANTITIES = (
    "velocity",
    "hum",
    "passive_velocity",
    "passive_hum",
    "from_a",
    "from_b",
    "passive_from_a",
    "passive_from_b",
    "z_out",
    "z_out_passive",
)


def _random_designs():
    rng = np.random.default_rng(SEED)
    return [parse_design(random_design_dict(rng, i), source=f"random-{i}") for i in range(N_RANDOM)]


RANDOM = _random_designs()
CASES = {f"model-{p.stem}": load_design(p) for p in MODELS} | {d.name: d for d in RANDOM}


def _weights(d):
    sig = (d.coil_a.signal_polarity * d.coil_a.sensitivity, d.coil_b.signal_polarity * d.coil_b.sensitivity)
    hum = (d.coil_a.hum_polarity * d.coil_a.turns_area, d.coil_b.hum_polarity * d.coil_b.turns_area)
    return sig, hum


def _simulate(d):
    """ngspice results for one design: {quantity: (f, v, scale)}."""
    (sa, sb), (ha, hb) = _weights(d)
    jobs = {
        "from_a": (active_netlist(d, wa=1.0, wb=0.0), "amp"),
        "from_b": (active_netlist(d, wa=0.0, wb=1.0), "amp"),
        "velocity": (active_netlist(d, wa=sa, wb=sb), "amp"),
        "hum": (active_netlist(d, wa=ha, wb=hb), "amp"),
        "passive_from_a": (passive_netlist(d, wa=1.0, wb=0.0), "amp"),
        "passive_from_b": (passive_netlist(d, wa=0.0, wb=1.0), "amp"),
        "passive_velocity": (passive_netlist(d, wa=sa, wb=sb), "amp"),
        "passive_hum": (passive_netlist(d, wa=ha, wb=hb), "amp"),
        "z_out": (jack_probe(active_netlist(d, wa=0.0, wb=0.0, rig=False)), "jack"),
        "z_out_passive": (jack_probe(passive_netlist(d, wa=0.0, wb=0.0, rig=False)), "jack"),
    }
    out = {name: run_ac(lines, [node], [20.0, 20e3])[node] for name, (lines, node) in jobs.items()}
    res = {}
    for name, (f, v) in out.items():
        if name in ("velocity", "hum", "passive_velocity", "passive_hum"):
            pre = "passive_" if name.startswith("passive") else ""
            wa, wb = (sa, sb) if name.endswith("velocity") else (ha, hb)
            scale = np.abs(wa * out[pre + "from_a"][1]) + np.abs(wb * out[pre + "from_b"][1])
        else:
            scale = np.abs(v)
        res[name] = (f, v, scale)
    return res


@pytest.fixture(scope="module")
def reference():
    """All ngspice runs, two at a time (one process per circuit, ~10 ms each).

    After the module's tests, prints the worst deviations seen (shown with -s).
    """
    require_ngspice()
    t0 = time.perf_counter()
    with ThreadPoolExecutor(max_workers=2) as pool:
        sims = dict(zip(CASES, pool.map(_simulate, CASES.values())))
    print(f"\nngspice: {len(CASES) * len(QUANTITIES)} AC analyses in {time.perf_counter() - t0:.1f} s")
    yield sims
    print("\nworst deviation from ngspice, 20 Hz - 20 kHz:")
    for q, (db, deg, rel, n_deep, case) in WORST.items():
        print(f"  {q:17s} {db:.2e} dB  {deg:.2e} deg  (worst dB in {case}; {n_deep} deep-cancellation points, worst {rel:.1e})")


def _engine(d, name):
    r = design_responses([d])
    return {
        "velocity": r.velocity,
        "hum": r.hum,
        "passive_velocity": r.passive_velocity,
        "passive_hum": r.passive_hum,
        "from_a": r.from_a,
        "from_b": r.from_b,
        "passive_from_a": lambda: r.passive_from_a,
        "passive_from_b": lambda: r.passive_from_b,
        "z_out": lambda: r.z_out,
        "z_out_passive": lambda: r.z_out_passive,
    }[name]()


def deviation(h, v, scale):
    """Worst dB and degree deviations of h from v, and the worst deep-cancellation error.

    Returns (max |dB|, max |deg|, max |h − v|/scale at deep points, number of deep points).
    """
    deep = np.abs(v) <= DEEP * scale
    ok = ~deep
    db = np.abs(20 * np.log10(np.abs(h[ok]) / np.abs(v[ok]))) if ok.any() else np.zeros(1)
    deg = np.abs(np.degrees(np.angle(h[ok] / v[ok]))) if ok.any() else np.zeros(1)
    rel = np.abs(h[deep] - v[deep]) / scale[deep] if deep.any() else np.zeros(1)
    return float(db.max()), float(deg.max()), float(rel.max()), int(deep.sum())


WORST: dict[str, list] = {}


@pytest.mark.parametrize("quantity", QUANTITIES)
@pytest.mark.parametrize("case", list(CASES))
def test_engine_matches_ngspice(reference, case, quantity):
    f, v, scale = reference[case][quantity]
    assert f[0] == pytest.approx(20.0) and f[-1] == pytest.approx(20e3) and f.size > 500
    h = _engine(CASES[case], quantity)(f)[0]
    db, deg, rel, n_deep = deviation(h, v, scale)
    w = WORST.setdefault(quantity, [0.0, 0.0, 0.0, 0, ""])
    if db > w[0]:
        w[0], w[4] = db, case
    w[1], w[2], w[3] = max(w[1], deg), max(w[2], rel), w[3] + n_deep
    # tolerance: 0.001 dB and 0.01 degrees against ngspice, 20 Hz to 20 kHz
    assert db < TOL_DB, f"{case} {quantity}: magnitude off by {db:.3g} dB"
    assert deg < TOL_DEG, f"{case} {quantity}: phase off by {deg:.3g} degrees"
    assert rel < TOL_DEEP, f"{case} {quantity}: deep-cancellation residue off by {rel:.3g} of the coils' sum"


def test_random_designs_cover_the_options():
    """The random set has each optional part both present and absent, both loss models
    alone and together, GBW on and off, and the rig variations (else the check above is weaker)."""

    def both(pred):
        hits = [pred(d) for d in RANDOM]
        return any(hits) and not all(hits)

    coils = lambda d: (d.coil_a, d.coil_b)  # noqa: E731
    assert both(lambda d: d.input_a.load_r is not None)
    assert both(lambda d: d.input_b.load_r is not None)
    assert both(lambda d: d.input_a.load_c is not None)
    assert both(lambda d: d.input_b.load_c is not None)
    assert both(lambda d: d.input_b.shunt_c is not None)
    assert both(lambda d: d.feedback.c is not None)
    assert both(lambda d: d.output.shunt_r is not None)
    assert both(lambda d: d.supply.gbw is not None)
    kinds = {(c.eddy_resistance is not None, c.eddy_coupling is not None) for d in RANDOM for c in coils(d)}
    assert kinds == {(False, False), (True, False), (False, True), (True, True)}
    assert both(lambda d: d.rig.volume == 1.0)
    assert any(0.0 < d.rig.volume < 1.0 for d in RANDOM) and any(d.rig.volume == 0.0 for d in RANDOM)
    assert both(lambda d: d.rig.tone == 1.0)
    assert any(d.rig.tone == 0.0 for d in RANDOM) and any(0.0 < d.rig.tone < 1.0 for d in RANDOM)
    assert both(lambda d: d.rig.volume_taper == "audio") and both(lambda d: d.rig.tone_taper == "audio")
    assert any(0.0 < volume_fraction(d.rig.volume, d.rig.volume_taper) < 1.0 and d.rig.volume_taper == "audio" for d in RANDOM)
    assert both(lambda d: d.rig.cable_length == 0.0)
    assert both(lambda d: d.rig.amp_c == 0.0)
    assert both(lambda d: d.coil_b.signal_polarity == -1)
    assert both(lambda d: d.coil_a.hum_polarity == d.coil_b.hum_polarity)
