"""The SPICE netlist writer (render.circuit.netlist) and ``render netlist``.

The writer is pinned against a netlist written by hand from models/studio-reference.toml
(element by element: names, nodes, values, and the behavioural sources' expressions compared
by evaluating them); ngspice (Debian package ngspice) runs the written netlist as it is, and
its AC response at the amp input is the engine's (itself checked against ngspice's AC analyses
of tests/spice.py's independent netlists in test_against_ngspice.py).
"""

from __future__ import annotations

import math
import re
import subprocess
import tempfile
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from spice import NGSPICE, require_ngspice

from render.circuit.engine import design_responses
from render.circuit.netlist import netlist
from render.design import load_design

ROOT = Path(__file__).resolve().parents[2]
REF = load_design(ROOT / "models" / "studio-reference.toml")

# studio-reference by hand: coils 350 mH, 520 Ω, 40 pF, 220 kΩ core loss, 0.045 V·s/m (coil_b's
# signal reversed), 0.36 m²; inputs 3.9 nF, 1 µF, 22 kΩ; divider 220 k / 220 k on 9 V; feedback
# 110 kΩ ∥ 47 pF; output 10 µF, 220 Ω, 100 kΩ; op-amp A0 = 1e5 (the default), 3 MHz, window 1 … 8 V
# with a 0.5 V knee (the defaults); the default rig: volume full up (wiper at the jack), 25 kΩ pot,
# tone 25 kΩ + 22 nF, 6 m × 100 pF/m + 50 pF, 1 MΩ.
HAND = """
Vvel vel 0 DC 0 AC 1
Vdbdt dbdt 0 DC 0
Baemf a1 0 V = 0.045*V(vel) + 0.36*V(dbdt)
Radc a1 a2 520
La a2 ta 0.35
Raeddy a2 ta 220e3
Caw ta 0 40e-12
Bbemf b1 0 V = -0.045*V(vel) + 0.36*V(dbdt)
Rbdc b1 b2 520
Lb b2 tb 0.35
Rbeddy b2 tb 220e3
Cbw tb 0 40e-12
Caload ta 0 3.9e-9
Caser ta xa 1e-6
Raser xa inv 22e3
Cbload tb 0 3.9e-9
Cbser tb xb 1e-6
Rbser xb pos 22e3
Vbat bat 0 DC 9
Rbiastop bat pos 220e3
Rbiasbottom pos 0 220e3
Rfb out inv 110e3
Cfb out inv 47e-12
Gopx 0 opx pos inv 1
Ropx opx 0 1e5
Copx opx 0 5.305164769729845e-08
Bclamp opx 0 I = 1000*(max(V(opx)-8.5,0)+min(V(opx)-0.5,0))
Bout out 0 V = V(opx) - (min(max(V(opx)-7.5,0),1)^2/2 + max(V(opx)-7.5-1,0)) + (min(max(1.5-V(opx),0),1)^2/2 + max(1.5-V(opx)-1,0))
Ccouple out o1 10e-6
Rout o1 jack 220
Rjack jack 0 100e3
Rtone jack tn 25e3
Ctone tn 0 22e-9
Vvolup jack amp DC 0
Rvoldown amp 0 25e3
Ccable amp 0 650e-12
Ramp amp 0 1e6
"""
COPX = 1 / (2 * math.pi * 3e6)  # the hand value above: 1/(2π·gbw)


def _elements(text):
    """{name: (nodes, value or expression)} of a netlist's element lines (comments, dot lines skipped)."""
    out = {}
    for line in text.splitlines():
        line = line.strip()
        if not line or line[0] in "*.":
            continue
        name, rest = line.split(None, 1)
        if name[0].upper() == "B":
            nodes, expr = rest.split("=", 1)
            kind, *nodes = nodes.split()[::-1]
            out[name] = (tuple(nodes[::-1]), kind + "=" + expr.strip())
        else:
            parts = rest.split()
            if parts[-2:-1] == ["DC"] or (len(parts) > 2 and parts[2] == "DC"):
                out[name] = (tuple(parts[:2]), " ".join(parts[2:]))
            elif name[0].upper() == "G":
                out[name] = (tuple(parts[:4]), float(parts[4]))
            else:
                out[name] = (tuple(parts[:2]), float(parts[2]))
    return out


def _evaluate(expr, voltages):
    """A B-source expression (V(...), min, max, ^, + − * /) at the given node voltages."""
    body = re.sub(r"V\((\w+)\)", lambda m: repr(voltages[m.group(1)]), expr.split("=", 1)[1]).replace("^", "**")
    return eval(body, {"__builtins__": {}}, {"min": min, "max": max})


def test_the_writer_matches_a_hand_written_netlist():
    ours = _elements(netlist(REF))
    hand = _elements(HAND)
    assert COPX == pytest.approx(hand["Copx"][1], rel=1e-15)
    _assert_same_elements(ours, hand, seed=0)


def _assert_same_elements(ours, hand, *, seed):
    """Same elements on the same nodes; values to 1e-12; B-sources agree at 50 random node voltages."""
    assert set(ours) == set(hand)
    rng = np.random.default_rng(seed)
    for name, (nodes, value) in hand.items():
        assert ours[name][0] == nodes, name
        if isinstance(value, float):
            assert ours[name][1] == pytest.approx(value, rel=1e-12), name
        elif name.startswith("B"):
            assert ours[name][1].split("=")[0] == value.split("=")[0], name
            for _ in range(50):  # across the slew limits, the knees and the rails
                v = {n: float(rng.uniform(-2, 11)) for n in ("vel", "dbdt", "opx", "pos", "inv")}
                assert _evaluate(ours[name][1], v) == pytest.approx(_evaluate(value, v), rel=1e-12, abs=1e-12), name
        else:

            def tokens(text):
                return [float(t) if re.fullmatch(r"[-+0-9.eE]+", t) else t for t in text.split()]

            assert tokens(ours[name][1]) == tokens(value), name


def _run(text, tmp, control):
    body = text.replace(".op\n", "").replace(".end\n", "")
    path = Path(tmp) / "n.cir"
    path.write_text(body + "\n".join([".control", *control, "quit", ".endc", ".end"]) + "\n")
    return subprocess.run([NGSPICE, "-b", str(path)], capture_output=True, text=True, timeout=120)


def test_ngspice_runs_the_netlist_as_written():
    require_ngspice()
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "ref.cir"
        path.write_text(netlist(REF))
        res = subprocess.run([NGSPICE, "-b", str(path)], capture_output=True, text=True, timeout=120)
    assert res.returncode == 0, res.stdout[-2000:] + res.stderr[-2000:]
    v = {m.group(1): float(m.group(2)) for m in re.finditer(r"^\s*(\w+)\s+([-+]?[0-9.]+(?:[eE][-+]?[0-9]+)?)\s*$", res.stdout, re.M)}
    # the operating point: the divider's half battery at pos; out = A0/(1 + A0) of it (series_c blocks DC)
    assert v["pos"] == pytest.approx(4.5, rel=1e-6)
    assert v["out"] == pytest.approx(4.5 * 1e5 / (1 + 1e5), rel=1e-6)


@pytest.mark.parametrize("model", ["studio-reference", "odd-pair", "high-rail-18v", "slipway-steel-blades", "measured-blade"])
def test_the_netlists_response_is_the_engines(model):
    # ngspice's AC analysis of the written netlist (1 V of Vvel = 1 m/s of string velocity)
    # against the engine's velocity response at the amp input: within 0.01 dB and 0.1°; the last
    # two designs' coils are fitted RL ladders (derived from the winding and a steel blade, and
    # fitted to a measurement), written as their L and R elements
    require_ngspice()
    d = load_design(ROOT / "models" / f"{model}.toml")
    with tempfile.TemporaryDirectory() as tmp:
        res = _run(netlist(d), tmp, ["set wr_singlescale", "option numdgt=12", "ac dec 10 20 20k", f"wrdata {tmp}/ac.dat v(amp)"])
        data = np.loadtxt(Path(tmp) / "ac.dat")
    assert data.size, res.stdout[-2000:]
    f, h = data[:, 0], data[:, 1] + 1j * data[:, 2]
    ref = design_responses([d]).velocity()(f)[0]
    assert np.max(np.abs(20 * np.log10(np.abs(h / ref)))) < 0.01
    assert np.max(np.abs(np.degrees(np.angle(h / ref)))) < 0.1


def test_render_netlist_command(tmp_path):
    from render.cli import main

    runner = CliRunner()
    res = runner.invoke(main, ["netlist", str(ROOT / "models" / "studio-reference.toml")])
    assert res.exit_code == 0 and res.output == netlist(REF)
    out = tmp_path / "ref.cir"
    res = runner.invoke(main, ["netlist", str(ROOT / "models" / "studio-reference.toml"), "--out", str(out)])
    assert res.exit_code == 0 and out.read_text() == netlist(REF)
    res = runner.invoke(main, ["netlist", str(ROOT / "models" / "studio-reference.toml"), "--out", str(out)])
    assert res.exit_code == 1 and "exists" in res.output


def test_a_construction_designs_netlist_says_its_emf_is_the_strings_mean_sensitivity(tmp_path):
    # the netlist is linear: with a [construction] each coil's EMF per m/s is the mean of the strings'
    # vertical sensitivities that render sense prints (their arithmetic mean), and the header says so
    import json

    from render.cli import main

    path = ROOT / "models" / "slipway-steel-poles.toml"
    res = CliRunner().invoke(main, ["netlist", str(path)])
    assert res.exit_code == 0, res.output
    assert "the strings' mean vertical sensitivity at rest" in res.output and "render sense gives each string's" in res.output
    coef = {k: float(re.search(rf"^B{k}emf \S+ 0 V = (\S+)\*V\(vel\)", res.output, re.M).group(1)) for k in "ab"}
    res = CliRunner().invoke(main, ["sense", str(path), "--json", str(tmp_path / "s.json")])
    assert res.exit_code == 0, res.output
    coils = json.loads((tmp_path / "s.json").read_text())["coils"]
    for k in "ab":
        mean = float(np.mean([s["sensitivity_v_s_per_m"] for s in coils[f"coil_{k}"]]))
        assert abs(coef[k]) == pytest.approx(abs(mean), rel=1e-9)
    plain = CliRunner().invoke(main, ["netlist", str(ROOT / "models" / "studio-reference.toml")]).output
    assert "mean vertical sensitivity" not in plain


def test_a_rigs_hum_sources_drive_their_own_nodes_and_ngspice_gives_render_hums_figures():
    # near a transformer (a 0.05 A·m² dipole along z, 0.5 m along the strings) each coil sees its own flux:
    # the netlist drives node hum1 with the source's dm/dt, each coil's EMF hum_polarity·k·V(hum1). ngspice's
    # AC analysis with Vhum1 = 1 (and Vvel = 0), times 2π·f·m·profile_h, is render hum's hum at the amp input
    # at that harmonic, per coil and together, within 0.01 dB
    require_ngspice()
    from render.analysis.hum import hum
    from render.design import apply_rig, load_rig

    d = apply_rig(load_design(ROOT / "models" / "bobbins" / "studio-bobbin.toml"), load_rig(ROOT / "rigs" / "near-transformer.toml"))
    text = netlist(d)
    assert "Vhum1 hum1 0 DC 0" in text and "Vdbdt" not in text and "V(dbdt)" not in text
    report = hum(d)
    src = d.hum.sources[0]
    for h in (1, 3):
        f = h * d.hum.mains
        drive = text.replace("Vvel vel 0 DC 0 AC 1", "Vvel vel 0 DC 0 AC 0").replace("Vhum1 hum1 0 DC 0", "Vhum1 hum1 0 DC 0 AC 1")
        with tempfile.TemporaryDirectory() as tmp:
            res = _run(drive, tmp, ["set wr_singlescale", "option numdgt=12", f"ac lin 1 {f} {f}", f"wrdata {tmp}/ac.dat v(amp)"])
            data = np.atleast_2d(np.loadtxt(Path(tmp) / "ac.dat"))
        assert data.size, res.stdout[-2000:]
        ours = abs(data[0, 1] + 1j * data[0, 2]) * 2 * math.pi * f * src.moment * d.hum.harmonics[h - 1]
        want = report.harmonics[h - 1].output_v
        assert 20 * math.log10(ours / want) == pytest.approx(0.0, abs=0.01)
    # a design with point coils gets render hum's warning about them
    from render.cli import main

    res = CliRunner().invoke(main, ["netlist", str(ROOT / "models" / "studio-reference.toml"), "--rig", str(ROOT / "rigs" / "near-transformer.toml")])
    assert res.exit_code == 0 and "warning:" in res.output and "have no geometry: a dipole source is taken as a uniform field" in res.output


# The writer's two other op-amp branches, by hand from the module text, on studio-reference:
# - slew_rate = "13V/us" (13e6 V/s): the transconductance limited to ±SR·C, C = 1/(2π·3 MHz), so
#   ±13e6/(2π·3e6) = ±13/(6π) = ±0.6896714200648798 A, with the A0 = 1e5 ohms written as the −V(opx)/A0 term;
# - no gbw: the gbw branch's elements with gbw = 1e11 Hz (the module's STATIC_GBW_HZ), so
#   C = 1/(2π·1e11) = 1.5915494309189535e-12 F.
SLEW_OPAMP = """
Bopx 0 opx I = max(-0.6896714200648798, min(0.6896714200648798, V(pos)-V(inv)-V(opx)/1e5))
Copx opx 0 5.305164769729845e-08
Bclamp opx 0 I = 1000*(max(V(opx)-8.5,0)+min(V(opx)-0.5,0))
"""
NO_GBW_OPAMP = """
Gopx 0 opx pos inv 1
Ropx opx 0 1e5
Copx opx 0 1.5915494309189535e-12
Bclamp opx 0 I = 1000*(max(V(opx)-8.5,0)+min(V(opx)-0.5,0))
"""
GBW_OPAMP = ("Gopx", "Ropx", "Copx", "Bclamp")
SLEW_RATE_V_PER_S = 13e6


def _hand(opamp: str) -> str:
    """HAND with its op-amp (gbw, no slew limit) replaced by another branch's lines."""
    kept = [line for line in HAND.strip().splitlines() if line.split()[0] not in GBW_OPAMP]
    at = next(i for i, line in enumerate(kept) if line.startswith("Bout"))
    return "\n".join(kept[:at] + opamp.strip().splitlines() + kept[at:]) + "\n"


def _variant(**supply):
    import dataclasses

    return dataclasses.replace(REF, supply=dataclasses.replace(REF.supply, **supply))


@pytest.mark.parametrize("branch", ["slew rate", "no gbw"])
def test_the_writers_other_op_amp_branches_match_hand_written_netlists(branch):
    design = _variant(slew_rate=SLEW_RATE_V_PER_S) if branch == "slew rate" else _variant(gbw=None, slew_rate=None)
    hand = _elements(_hand(SLEW_OPAMP if branch == "slew rate" else NO_GBW_OPAMP))
    ours = _elements(netlist(design))
    _assert_same_elements(ours, hand, seed=1)


@pytest.mark.parametrize("branch", ["slew rate", "no gbw"])
def test_ngspice_runs_the_hand_written_branches(branch):
    # ngspice runs each hand-written netlist: its operating point is the divider's half battery at pos and
    # A0/(1 + A0) of it at out (series_c blocks DC). With the slew limit, a 12 V step on the battery lifts pos
    # by 1 V at once (220k ∥ 22k against 220k, the capacitors shorts at the edge: 1/12 of the step), so the
    # open-loop state must move by volts: it slews at the 13 V/µs written, to ngspice's step (0.5 %).
    require_ngspice()
    text = _hand(SLEW_OPAMP if branch == "slew rate" else NO_GBW_OPAMP)
    nodeset = ".nodeset v(pos)=4.5 v(inv)=4.499955 v(opx)=4.499955 v(out)=4.499955\n"
    with tempfile.TemporaryDirectory() as tmp:
        op = subprocess.run([NGSPICE, "-b", "/dev/stdin"], input="* hand\n" + text + nodeset + ".op\n.end\n", capture_output=True, text=True, timeout=120)
        assert op.returncode == 0, op.stdout[-2000:] + op.stderr[-2000:]
        v = {m.group(1): float(m.group(2)) for m in re.finditer(r"^\s*(\w+)\s+([-+]?[0-9.]+(?:[eE][-+]?[0-9]+)?)\s*$", op.stdout, re.M)}
        assert v["pos"] == pytest.approx(4.5, rel=1e-6)
        assert v["out"] == pytest.approx(4.5 * 1e5 / (1 + 1e5), rel=1e-6)
        if branch == "slew rate":
            stepped = text.replace("Vbat bat 0 DC 9", "Vbat bat 0 DC 9 PULSE(9 21 10u 1n 1n 1 2)")
            control = ["set wr_singlescale", "option numdgt=12", "tran 10n 30u 0 10n", f"wrdata {tmp}/tr.dat v(opx)"]
            res = _run("* hand\n" + stepped + nodeset + ".end\n", tmp, control)
            data = np.loadtxt(Path(tmp) / "tr.dat")
            assert data.size, res.stdout[-2000:]
            t, x = data[:, 0], data[:, 1]
            rate = np.abs(np.diff(x) / np.diff(t))
            assert rate.max() == pytest.approx(SLEW_RATE_V_PER_S, rel=5e-3)


def test_a_design_without_gbw_runs_its_own_transient_into_clipping_as_written(tmp_path):
    # the file's own commented .tran recipe, done as it says (Vvel replaced by a sine, the block
    # uncommented), at 10 m/s peak: far past the clip onset of tests/smoke/designs/edge-no-gbw.toml.
    # Written as the static op-amp (x = A0·(V+ − V−)) this stopped at a clip edge with ngspice 39
    # ("timestep too small"); written with gbw = 1e11 Hz it runs to the end and swings the window.
    require_ngspice()
    d = load_design(ROOT / "tests" / "smoke" / "designs" / "edge-no-gbw.toml")
    lines = netlist(d).splitlines()
    start = lines.index("* .options method=gear reltol=1e-6")
    stop = lines.index("* .endc", start)
    lines[start : stop + 1] = [ln[2:] for ln in lines[start : stop + 1]]
    lines = [ln.replace("SIN(0 0.2 1k)", "SIN(0 10 1k)") if ln.startswith("* Vvel") else ln for ln in lines]
    lines = [ln for ln in lines if not ln.startswith("Vvel ")]
    lines = [ln[2:] if ln.startswith("* Vvel") else ln for ln in lines]
    lines = [ln.replace("tran 1u 0.2 0 1u", "tran 1u 0.01 0 1u").replace("transient.txt", str(tmp_path / "tr.txt")) for ln in lines]
    text = "\n".join(lines) + "\n"
    assert "tran 1u 0.01 0 1u" in text and "Vvel vel 0 DC 0 AC 1 SIN(0 10 1k)" in text
    res = subprocess.run([NGSPICE, "-b", "/dev/stdin"], input=text, capture_output=True, text=True, timeout=300, cwd=tmp_path)
    data = np.loadtxt(tmp_path / "tr.txt")
    assert data.size and data[-1, 0] == pytest.approx(0.01, rel=1e-6), res.stdout[-2000:]
    out = data[:, 1]  # wrdata without wr_singlescale: time, v(out), time, v(amp)
    assert out.max() == pytest.approx(d.limit_high_v, abs=0.05) and out.min() == pytest.approx(d.limit_low_v, abs=0.05)
    assert "no gbw (written as gbw 1e+11 Hz" in text and "gbw for a transient" not in text
