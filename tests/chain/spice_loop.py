"""ngspice transients of a whole design with its op-amp model (the netlist writer's elements,
render.circuit.netlist, which tests/circuit/test_netlist.py pins against a hand-written netlist),
driven by a string velocity read from samples (XSPICE filesource, linear interpolation, as in
tests/spice.py). Only the test suite uses this module.
"""

from __future__ import annotations

import subprocess
import tempfile
from pathlib import Path

import numpy as np
from spice import NGSPICE, require_ngspice


def loop_transient(design, t, velocity, *, stop, max_step=1e-6, nodes=("out", "amp")):
    """(times (s), {node: volts}) of an ngspice transient of ``design`` (rig included).

    t, velocity : the drive's sample times (s) and string velocity (m/s) at both sensing points.
    An op-amp without gbw is the writer's: the same model with gbw = 1e11 Hz
    (render.circuit.netlist.STATIC_GBW_HZ), whose loop is 10⁵ times faster than anything in the
    audio band (the static op-amp x = A0·(V+ − V−) is this model's limit as gbw → ∞).
    """
    from render.circuit.netlist import circuit_lines

    require_ngspice()
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        np.savetxt(tmp / "vel.txt", np.column_stack([t, velocity]), fmt="%.12e")
        lines = ["* loop transient"] + [ln for ln in circuit_lines(design) if not ln.startswith("Vvel ")]
        lines += [
            "Rvel vel 0 1e6",
            "Avel %v([vel]) velsrc",
            f'.model velsrc filesource (file="{tmp / "vel.txt"}" amploffset=[0] amplscale=[1] timeoffset=0 timescale=1 timerelative=false amplstep=false)',
            ".options method=gear reltol=1e-6",
            ".control",
            "set wr_singlescale",
            "option numdgt=12",
            f"tran {max_step!r} {stop!r} 0 {max_step!r}",
            f"wrdata {tmp / 'out.dat'} " + " ".join(f"v({n})" for n in nodes),
            "quit",
            ".endc",
            ".end",
        ]
        (tmp / "tran.cir").write_text("\n".join(lines) + "\n")
        res = subprocess.run([NGSPICE, "-b", str(tmp / "tran.cir")], capture_output=True, text=True, timeout=600)
        out = tmp / "out.dat"
        if not out.exists():
            raise RuntimeError(f"ngspice wrote no output:\n{res.stdout[-2000:]}\n{res.stderr[-2000:]}")
        data = np.loadtxt(out)
    if abs(data[-1, 0] - stop) > 1e-6 * stop:
        raise RuntimeError(f"ngspice stopped at {data[-1, 0]} s of {stop} s:\n{res.stdout[-2000:]}")
    return data[:, 0], {n: data[:, 1 + i] for i, n in enumerate(nodes)}  # wr_singlescale: time, then one column per vector


def sine_burst(velocity_peak: float, rate: float, *, periods: int, frequency_hz: float, after_s: float):
    """(t, v): ``periods`` periods of a sine of string velocity (m/s peak) at ``frequency_hz``, then ``after_s`` of rest, sampled at ``rate``."""
    n_burst = int(round(periods * rate / frequency_hz))
    n = n_burst + int(round(after_s * rate))
    t = np.arange(n) / rate
    return t, np.where(np.arange(n) < n_burst, velocity_peak * np.sin(2 * np.pi * frequency_hz * t), 0.0)
