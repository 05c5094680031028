"""ngspice as the circuit reference: netlists written here, from the design
file's values and the circuit's topology (coils, input networks, difference
amplifier, output network, controls, cable), independently of the engine's
algebra (Debian package ``ngspice``, batch mode, ``wrdata``).

Only the test suite uses this module.
"""

from __future__ import annotations

import math
import os
import shutil
import subprocess
import tempfile
from pathlib import Path

import numpy as np
import pytest

NGSPICE = shutil.which("ngspice")


def require_ngspice():
    """Skip without ngspice on a user's machine; fail under CI=true."""
    if NGSPICE:
        return
    msg = "ngspice not found (Debian package 'ngspice'); the circuit cross-checks need it"
    if os.environ.get("CI") == "true":
        pytest.fail(msg + " and CI=true requires it")
    pytest.skip(msg)


def _taper(r, kind):
    # audio taper (81^r - 1)/80 (common practice, no source)
    return (81.0**r - 1.0) / 80.0 if kind == "audio" else r


def _coil_lines(tag, coil, hot, cold, gain_node, gain):
    """EMF (VCVS from the drive node), R_dc, L (with its loss) from cold to hot."""
    lines = [
        f"E{tag} {tag}1 {cold} {gain_node} 0 {gain!r}",
        f"R{tag}dc {tag}1 {tag}2 {coil.resistance!r}",
    ]
    if coil.ladder is not None:
        # the RL ladder in Foster form (as loaded, its DC inductance is the coil's inductance):
        # L0, then each section L_k ∥ R_k, in series from {tag}2 to hot
        lad = coil.ladder
        assert abs(lad.dc_inductance / coil.inductance - 1) < 1e-12
        prev = f"{tag}2"
        n = len(lad.inductances)
        if lad.series_inductance > 0:
            nxt = hot if n == 0 else f"{tag}lad0"
            lines.append(f"L{tag} {prev} {nxt} {lad.series_inductance!r}")
            prev = nxt
        for k, (lk, rk) in enumerate(zip(lad.inductances, lad.resistances)):
            nxt = hot if k == n - 1 else f"{tag}lad{k + 1}"
            lines += [f"L{tag}sec{k} {prev} {nxt} {lk!r}", f"R{tag}sec{k} {prev} {nxt} {rk!r}"]
            prev = nxt
        lines.append(f"C{tag}w {hot} {cold} {coil.capacitance!r}")
        return lines
    lines.append(f"L{tag} {tag}2 {hot} {coil.inductance!r}")
    if coil.eddy_resistance:
        lines.append(f"R{tag}p {tag}2 {hot} {coil.eddy_resistance!r}")
    if coil.eddy_coupling:
        l2 = coil.inductance
        r2 = 2 * math.pi * coil.eddy_corner * l2
        # shorted secondary (own element and node names: "R{tag}s" is the input's series_r)
        lines += [
            f"L{tag}sec {tag}sec1 0 {l2!r}",
            f"R{tag}sec {tag}sec1 0 {r2!r}",
            f"K{tag} L{tag} L{tag}sec {math.sqrt(coil.eddy_coupling)!r}",
        ]
    lines.append(f"C{tag}w {hot} {cold} {coil.capacitance!r}")
    return lines


def _rig_lines(jack, rig, *, passive):
    vpot = rig.passive_pot if passive else rig.volume_pot
    tpot = rig.passive_pot if passive else rig.tone_pot
    tcap = rig.passive_tone_cap if passive else rig.tone_cap
    frac = _taper(rig.volume, rig.volume_taper)
    rt = tpot * _taper(rig.tone, rig.tone_taper)
    ru, rd = vpot * (1 - frac), max(vpot * frac, 1e-3)
    lines = []
    if rt > 0:
        lines += [f"Rtone {jack} tn {rt!r}", f"Ctone tn 0 {tcap!r}"]
    else:
        lines += [f"Ctone {jack} 0 {tcap!r}"]
    if ru > 0:
        lines.append(f"Rvu {jack} amp {ru!r}")
    else:
        lines.append(f"Vvu {jack} amp DC 0")  # wiper at the jack: a short
    lines += [
        f"Rvd amp 0 {rd!r}",
        f"Camp amp 0 {rig.cable_length * rig.cable_capacitance + rig.amp_c!r}",
        f"Ramp amp 0 {rig.amp_r!r}",
    ]
    return lines


def active_netlist(d, *, wa, wb, rig=True):
    """The active circuit, coil EMFs wa·V(drive) and wb·V(drive).

    ``rig=False`` leaves the jack open (no controls, cable or amp), for
    measuring the output impedance with :func:`jack_probe`.
    """
    a, b, ia, ib = d.coil_a, d.coil_b, d.input_a, d.input_b
    L = ["* active pickup", "Vdrive drive 0 DC 0 AC 1"]
    L += _coil_lines("a", a, "ta", "0", "drive", wa)
    L += _coil_lines("b", b, "tb", "0", "drive", wb)
    for tag, net, node in (("a", ia, "inv"), ("b", ib, "pos")):
        if net.load_r:
            L.append(f"R{tag}l t{tag} 0 {net.load_r!r}")
        if net.load_c:
            L.append(f"C{tag}l t{tag} 0 {net.load_c!r}")
        L += [f"C{tag}s t{tag} x{tag} {net.series_c!r}", f"R{tag}s x{tag} {node} {net.series_r!r}"]
    L += [
        f"Vbat bat 0 DC {d.supply.battery!r}",
        f"Rbt bat pos {ib.bias_top!r}",
        f"Rbb pos 0 {ib.bias_bottom!r}",
    ]
    if ib.shunt_c:
        L.append(f"Cbn pos 0 {ib.shunt_c!r}")
    L.append(f"Rf out inv {d.feedback.r!r}")
    if d.feedback.c:
        L.append(f"Cf out inv {d.feedback.c!r}")
    a0 = d.supply.open_loop_gain  # the design's open-loop DC gain (a VCVS of that gain without gbw)
    if d.supply.gbw:
        L += [
            "Gop 0 nint pos inv 1",
            f"Rint nint 0 {a0!r}",
            f"Cint nint 0 {1 / (2 * math.pi * d.supply.gbw)!r}",
            "Eop out 0 nint 0 1",
        ]
    else:
        L.append(f"Eop out 0 pos inv {a0!r}")
    L += [f"Cc out o1 {d.output.coupling_c!r}", f"Ro o1 jack {d.output.series_r!r}"]
    if d.output.shunt_r:
        L.append(f"Rsh jack 0 {d.output.shunt_r!r}")
    if rig:
        L += _rig_lines("jack", d.rig, passive=False)
    return L


def passive_netlist(d, *, wa, wb, rig=True):
    """Passive reference: ground - coil_b (reversed) - m - coil_a - jack."""
    L = ["* passive reference", "Vdrive drive 0 DC 0 AC 1"]
    L += _coil_lines("b", d.coil_b, "0", "m", "drive", wb)
    L += _coil_lines("a", d.coil_a, "jack", "m", "drive", wa)
    if rig:
        L += _rig_lines("jack", d.rig, passive=True)
    return L


def jack_probe(netlist_lines):
    """Add a 1 A AC current into the jack: V(jack) is then the impedance there (ohm).

    Use with both EMF weights zero and ``rig=False``.
    """
    return list(netlist_lines) + ["Iprobe 0 jack DC 0 AC 1"]


def run_ac(netlist_lines, nodes, frequencies_hz):
    """AC analysis over the span of ``frequencies_hz``, 200 points a decade (``ac dec 200``).

    Returns {node: (frequency array in Hz, complex voltage array)}: ngspice's own
    frequencies from min to max of ``frequencies_hz``, not those frequencies
    themselves; interpolate (or compare at ngspice's points) to check a response.
    """
    require_ngspice()
    f = np.asarray(frequencies_hz, float)
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        out = {}
        lines = list(netlist_lines)
        ctrl = [".control", "set wr_singlescale", "set wr_vecnames", "option numdgt=12"]
        ctrl.append(f"ac dec 200 {f.min():.6g} {f.max():.6g}")
        for node in nodes:
            ctrl.append(f"wrdata {tmp / (node + '.dat')} v({node})")
        ctrl += ["quit", ".endc", ".end"]
        (tmp / "c.cir").write_text("\n".join(lines + ctrl) + "\n")
        res = subprocess.run([NGSPICE, "-b", str(tmp / "c.cir")], capture_output=True, text=True, timeout=120)
        for node in nodes:
            path = tmp / (node + ".dat")
            if not path.exists():
                raise RuntimeError(f"ngspice wrote no output for {node}:\n{res.stdout[-2000:]}\n{res.stderr[-2000:]}")
            data = np.loadtxt(path, skiprows=1)
            out[node] = (data[:, 0], data[:, 1] + 1j * data[:, 2])
        return out


def run_transient(netlist_lines, t, x, *, stop, step, node="amp", options=(".options reltol=1e-6 method=trap",), max_step=None):
    """Transient analysis with the drive node fed from samples (XSPICE filesource, linear interpolation).

    ngspice-39 refuses ``PWL file=`` ("parameter value out of range"), hence
    the filesource model. ``t``, ``x``: the drive's sample times (s) and
    values; returns (times (s), v(node)) as ngspice writes them.
    """
    require_ngspice()
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        np.savetxt(tmp / "drive.txt", np.column_stack([t, x]), fmt="%.12e")
        lines = [ln for ln in netlist_lines if not ln.startswith("Vdrive")]
        lines += [
            "Rdrive drive 0 1e6",
            "Adrive %v([drive]) drivesrc",
            f'.model drivesrc filesource (file="{tmp / "drive.txt"}" amploffset=[0] amplscale=[1] timeoffset=0 timescale=1 timerelative=false amplstep=false)',
            *options,
            ".control",
            "set wr_singlescale",
            "option numdgt=12",
            f"tran {step!r} {stop!r} 0 {(max_step or step)!r}",
            f"wrdata {tmp / 'out.dat'} v({node})",
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
    return data[:, 0], data[:, 1]
