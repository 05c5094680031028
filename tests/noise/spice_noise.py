"""ngspice ``.noise`` runs for the noise cross-checks (Debian package ``ngspice``).

The netlists come from ``tests/spice.py`` (written from the design files'
values alone); this module adds the analysis, the temperature, and
noise-only stand-ins for the op-amp's noise, since ngspice's behavioural
op-amp (a controlled source) is noiseless:

- voltage noise e_n: a resistor of e_n²/(4kT) in series with the + input.
  The op-amp's input draws no current, so the resistor changes nothing but
  adds its thermal voltage 4kT·R = e_n² (Johnson–Nyquist).
- current noise i_n at an input: a 1 kΩ resistor alone from a spare node to
  ground (open-circuit thermal voltage √(4kT·1k)) driving a transconductance
  i_n/√(4kT·1k) into that input; unlike a resistor across the input it does
  not load the node.

The GBW op-amp's internal integrator resistor is a modelling device, not a
part, so it is made noiseless (``noisy=0``).

Only the test suite uses this module.
"""

from __future__ import annotations

import math
import subprocess
import tempfile
from pathlib import Path

import numpy as np
from spice import NGSPICE, require_ngspice

from render.circuit.noise import K_BOLTZMANN

PROBE_R = 1e3  # ohm, the thermal source behind each current-noise stand-in


def with_opamp_noise(lines, *, noise_voltage, noise_current, temperature=300.0):
    """The active netlist with the op-amp's e_n and i_n (at each input) as thermal stand-ins."""
    four_kt = 4 * K_BOLTZMANN * temperature
    out = []
    for line in lines:
        words = line.split()
        if words and words[0] in ("Eop", "Gop") and words[3:5] == ["pos", "inv"]:
            words[3] = "posn"
            line = " ".join(words)
        out.append(line)
    out.append(f"Ren pos posn {noise_voltage**2 / four_kt!r}")
    gm = noise_current / math.sqrt(four_kt * PROBE_R)
    for tag, node in (("p", "pos"), ("n", "inv")):
        out += [f"Rin{tag} zin{tag} 0 {PROBE_R!r}", f"Gin{tag} {node} 0 zin{tag} 0 {gm!r}"]
    return out


def run_noise(lines, *, output="amp", source="Vdrive", fmin=20.0, fmax=20e3, per_decade=200, temperature=300.0):
    """ngspice ``.noise`` of v(output); returns (frequency_hz (F,), total density (F,),
    {device name (lower case): its density (F,)}), densities in V/√Hz at ``output``."""
    require_ngspice()
    lines = [line + " noisy=0" if line.split()[:1] == ["Rint"] else line for line in lines]
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        data_path = tmp / "noise.dat"
        ctrl = [
            f".options temp={temperature - 273.15!r}",
            ".control",
            "set wr_vecnames",
            "option numdgt=12",
            f"noise v({output}) {source} dec {per_decade} {fmin!r} {fmax!r} 1",
            "setplot noise1",
            f"wrdata {data_path} all",
            "quit",
            ".endc",
            ".end",
        ]
        (tmp / "c.cir").write_text("\n".join(list(lines) + ctrl) + "\n")
        res = subprocess.run([NGSPICE, "-b", str(tmp / "c.cir")], capture_output=True, text=True, timeout=120)
        if not data_path.exists():
            raise RuntimeError(f"ngspice wrote no noise output:\n{res.stdout[-2000:]}\n{res.stderr[-2000:]}")
        names = data_path.read_text().splitlines()[0].split()
        data = np.loadtxt(data_path, skiprows=1, ndmin=2)
    cols = dict(zip(names, data.T))
    devices = {k[len("onoise_") :]: v for k, v in cols.items() if k.startswith("onoise_") and k != "onoise_spectrum" and not k.endswith(("_1overf", "_thermal"))}
    return cols["frequency"], cols["onoise_spectrum"], devices
