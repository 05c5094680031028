"""Random but plausible design dictionaries, for the ngspice cross-check and
the engine benchmark.

Every value is drawn log-uniformly from a range a pickup designer might use
(our own ranges: common practice, no source). Optional parts are present
or absent at random, so are both core-loss models (alone and together), a
GBW-limited op-amp and the rig's settings. The result is a plain dict of
TOML-like tables, to be passed through :func:`render.design.parse_design`
so it goes through the loader's validation like a file would.
"""

from __future__ import annotations

import numpy as np


def _lu(rng, lo, hi):
    """Log-uniform draw in [lo, hi]."""
    return float(np.exp(rng.uniform(np.log(lo), np.log(hi))))


def _coil(rng, loss):
    c = {
        "inductance": _lu(rng, 0.01, 8.0),
        "resistance": _lu(rng, 30.0, 12e3),
        "capacitance": _lu(rng, 15e-12, 400e-12),
        "sensitivity": _lu(rng, 0.005, 0.5),
        "turns_area": _lu(rng, 0.02, 3.0),
        "position": _lu(rng, 0.02, 0.16),
        "aperture": float(rng.uniform(0.0, 0.02)),
    }
    if loss in ("resistance", "both"):
        c["eddy_resistance"] = _lu(rng, 30e3, 5e6)
    if loss in ("coupling", "both"):
        c["eddy_coupling"] = float(rng.uniform(0.02, 0.9))
        c["eddy_corner"] = _lu(rng, 200.0, 40e3)
    if rng.random() < 0.3:
        c["signal_polarity"] = int(rng.choice([-1, 1]))
    if rng.random() < 0.2:
        c["hum_polarity"] = int(rng.choice([-1, 1]))
    return c


def _input(rng, with_bias):
    t = {"series_c": _lu(rng, 10e-9, 10e-6), "series_r": _lu(rng, 1e3, 100e3)}
    if rng.random() < 0.5:
        t["load_r"] = _lu(rng, 10e3, 3e6)
    if rng.random() < 0.5:
        t["load_c"] = _lu(rng, 100e-12, 10e-9)
    if with_bias:
        top = _lu(rng, 22e3, 2e6)
        t["bias_top"] = top
        t["bias_bottom"] = top * _lu(rng, 0.75, 1.33)  # keeps the bias inside the linear window
        if rng.random() < 0.5:
            t["shunt_c"] = _lu(rng, 10e-12, 10e-9)
    return t


def _rig(rng):
    r = {}
    if rng.random() < 0.7:
        r["volume_pot"] = _lu(rng, 10e3, 1e6)
        r["volume"] = float(rng.choice([1.0, 1.0, 1.0, 0.0, rng.uniform(0.05, 1.0), rng.uniform(0.05, 1.0)]))
        r["volume_taper"] = str(rng.choice(["audio", "linear"]))
        r["tone_pot"] = _lu(rng, 10e3, 1e6)
        r["tone"] = float(rng.choice([1.0, 0.0, rng.uniform(0.05, 1.0)]))
        r["tone_taper"] = str(rng.choice(["audio", "linear"]))
        r["tone_cap"] = _lu(rng, 2.2e-9, 100e-9)
        r["cable_length"] = float(rng.choice([0.0, _lu(rng, 0.3, 30.0)]))
        r["cable_capacitance"] = _lu(rng, 40e-12, 250e-12)
        r["amp_r"] = _lu(rng, 100e3, 10e6)
        r["amp_c"] = float(rng.choice([0.0, _lu(rng, 5e-12, 300e-12)]))
        r["passive_pot"] = _lu(rng, 100e3, 1e6)
        r["passive_tone_cap"] = _lu(rng, 4.7e-9, 47e-9)
    return r


LOSSES = ("none", "resistance", "coupling", "both")


def random_design_dict(rng: np.random.Generator, i: int = 0) -> dict:
    """One random design as a dict of tables; design ``i`` cycles the loss models
    and the op-amp model so that every combination occurs in any 8 designs."""
    loss_a = LOSSES[i % 4]
    loss_b = LOSSES[(i // 2 + 1) % 4] if rng.random() < 0.7 else loss_a
    d = {
        "name": f"random-{i}",
        "coil_a": _coil(rng, loss_a),
        "coil_b": _coil(rng, loss_b),
        "input_a": _input(rng, False),
        "input_b": _input(rng, True),
        "feedback": {"r": _lu(rng, 10e3, 1e6)},
        "output": {"coupling_c": _lu(rng, 100e-9, 47e-6), "series_r": _lu(rng, 47.0, 10e3)},
        "supply": {"battery": float(rng.choice([9.0, 18.0]))},
    }
    if rng.random() < 0.5:
        d["feedback"]["c"] = _lu(rng, 5e-12, 1e-9)
    if rng.random() < 0.5:
        d["output"]["shunt_r"] = _lu(rng, 10e3, 1e6)
    if (i // 4) % 2 == 0:
        d["supply"]["gbw"] = _lu(rng, 300e3, 20e6)
    rig = _rig(rng)
    if rig:
        d["rig"] = rig
    return d
