"""A design and its rig as a SPICE netlist that ngspice runs as written.

The netlist is the circuit the renderer simulates, element for element:
the two coils (EMF, DC resistance, inductance with its core loss, winding
capacitance), the input networks, the bias divider on the battery, the
feedback, the op-amp, the output network and the rig (tone and volume
controls, cable and amplifier input). A designer can check any figure in
their own simulator from it.

Sources (both 0 V at DC, so the operating point is the circuit's own):

- ``Vvel`` at node ``vel``: string velocity, 1 V standing for 1 m/s at both
  coils' sensing points (AC magnitude 1: responses come out per m/s);
- ``Vdbdt`` at node ``dbdt``: the hum field's derivative, 1 V standing for
  1 T/s;
- with a rig's ``[[hum.source]]`` tables, ``Vhum1``, ``Vhum2``, … at nodes
  ``hum1``, ``hum2``, … instead: each source's rate of change, 1 V standing
  for 1 A·m²/s of a dipole's moment or 1 T/s of a uniform source's field.

Each coil's EMF is a behavioural source, signal_polarity · sensitivity ·
V(vel) + hum_polarity · turns_area · V(dbdt) (Faraday); with sources, the
hum terms are hum_polarity · k_j · V(hum_j), k_j the coil's flux linkage per
unit strength of source j (:func:`render.magnetics.hum.coupling`: Wb per
A·m² or per T; the winding's filaments and, with a construction, its steel).

The op-amp (:mod:`render.chain.loop`, as equations):

- its open-loop state x at node ``opx``: a transconductance of 1 S into A0
  ohms in parallel with 1/(2π·gbw) farads, so τ·dx/dt = A0·(V+ − V−) − x
  with τ = A0/(2π·gbw), and with a slew rate that current limited to
  ±SR/(2π·gbw) amperes, so |dx/dt| ≤ SR. A design without gbw (the static
  op-amp x = A0·(V+ − V−), the limit gbw → ∞) is written with gbw =
  STATIC_GBW_HZ = 1e11 Hz: its loop is then 10⁵ times faster than anything
  in the audio band (the response moves by less than 1e-4 dB up to 20 kHz),
  and a transient into clipping runs as written, where the algebraic loop of
  gain A0 through the window defeats ngspice's Newton iteration at the clip
  edges ("timestep too small");
- the state's limits [low − knee, high + knee]: a current source that
  pulls x back with 1000 S beyond them (x then passes a limit by the input
  difference over 1000, a few millivolts at most, where f is flat anyway);
- the output ``out``: a behavioural voltage source applying the window
  f(x) = x − ψ(x − (high − knee)) + ψ((low + knee) − x), with
  ψ(u) = min(max(u, 0), 2·knee)²/(4·knee) + max(u − 2·knee, 0), the
  quadratic knee of :mod:`render.chain.limit` written with min and max.

Node names:

    vel, dbdt         the drives (above)
    a1, a2            coil_a inside: after the EMF, after the DC resistance
    al0, al1, …       inside coil_a's RL ladder, when it has one (L0, then each L_k ∥ R_k)
    ta, tb            coil_a's and coil_b's terminals (cold ends at ground)
    xa, xb            between series_c and series_r
    inv, pos          the op-amp's inverting and non-inverting inputs
    bat               the battery +
    opx               the op-amp's open-loop state x
    out               the op-amp output
    o1                between the output's coupling_c and series_r
    jack              the output jack
    tn                the tone control's pot and capacitor
    amp               the amplifier input (the volume pot's wiper, at the cable's end)

One analysis runs as written (``.op``); commented ``.ac``, ``.noise`` and
``.tran`` examples follow it.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from .ladder import coil_ladder
from .rig import volume_fraction

if TYPE_CHECKING:
    from ..design import Design

MIN_R = 1e-3  # ohm: a pot section at its end stop (as render.circuit.params)
CLAMP_S = 1e3  # siemens pulling the op-amp state back inside its limits
STATIC_GBW_HZ = 1e11  # the gbw written for an op-amp without one (module text)
NODES = ("vel", "dbdt", "a1", "a2", "b1", "b2", "ta", "tb", "xa", "xb", "inv", "pos", "bat", "opx", "out", "o1", "jack", "tn", "amp")


def _v(x: float) -> str:
    """A value exactly as Python holds it (shortest repr that reads back the same)."""
    return repr(float(x))


def hum_drives(design) -> list[tuple[str, tuple[float, float]]]:
    """Each hum drive node and its coefficient in each coil's EMF (hum_polarity · flux linkage per unit).

    Without ``[[hum.source]]``: node ``dbdt`` with each coil's turns_area (m²). With them: node
    ``hum<j>`` per source with the coil's linkage per unit strength (:func:`render.magnetics.hum.coupling`).
    """
    a, b = design.coil_a, design.coil_b
    if not design.hum.sources:
        return [("dbdt", (a.hum_polarity * a.turns_area, b.hum_polarity * b.turns_area))]
    from ..magnetics.hum import coupling
    from ..magnetics.pickup import placed_coils

    k = coupling(placed_coils(design), design.hum.sources)
    return [(f"hum{j + 1}", (a.hum_polarity * float(k[0, j]), b.hum_polarity * float(k[1, j]))) for j in range(k.shape[1])]


def _coil(tag: str, coil, hot: str, hum: list[tuple[str, float]]) -> list[str]:
    sig = coil.signal_polarity * coil.sensitivity
    terms = "".join(f" + {_v(k)}*V({node})" for node, k in hum)
    lines = [
        f"B{tag}emf {tag}1 0 V = {_v(sig)}*V(vel){terms}",
        f"R{tag}dc {tag}1 {tag}2 {_v(coil.resistance)}",
    ]
    ladder = coil_ladder(coil)
    if ladder is not None:
        return lines + _ladder(tag, ladder, hot) + [f"C{tag}w {hot} 0 {_v(coil.capacitance)}"]
    lines.append(f"L{tag} {tag}2 {hot} {_v(coil.inductance)}")
    if coil.eddy_resistance:
        lines.append(f"R{tag}eddy {tag}2 {hot} {_v(coil.eddy_resistance)}")
    if coil.eddy_coupling:
        # shorted secondary (render.circuit.coil): L2 = L1, R2 = 2π·eddy_corner·L2, coupling √k²
        l2 = coil.inductance
        lines += [
            f"L{tag}sec {tag}s 0 {_v(l2)}",
            f"R{tag}sec {tag}s 0 {_v(2 * math.pi * coil.eddy_corner * l2)}",
            f"K{tag} L{tag} L{tag}sec {_v(math.sqrt(coil.eddy_coupling))}",
        ]
    lines.append(f"C{tag}w {hot} 0 {_v(coil.capacitance)}")
    return lines


def _ladder(tag: str, ladder, hot: str) -> list[str]:
    """The coil's RL ladder (render.circuit.ladder): L0, then each section L_k ∥ R_k, in series to ``hot``."""
    nodes = [f"{tag}2"] + [f"{tag}l{k}" for k in range(len(ladder.inductances))] + [hot]
    if ladder.series_inductance <= 0:
        nodes = [nodes[0]] + nodes[2:]
    lines, i = [], 0
    if ladder.series_inductance > 0:
        lines.append(f"L{tag} {nodes[0]} {nodes[1]} {_v(ladder.series_inductance)}")
        i = 1
    for k, (lk, rk) in enumerate(zip(ladder.inductances, ladder.resistances)):
        a, b = nodes[i + k], nodes[i + k + 1]
        lines += [f"L{tag}k{k + 1} {a} {b} {_v(lk)}", f"R{tag}k{k + 1} {a} {b} {_v(rk)}"]
    return lines


def _input(tag: str, net, node: str) -> list[str]:
    t = f"t{tag}"
    lines = []
    if net.load_r:
        lines.append(f"R{tag}load {t} 0 {_v(net.load_r)}")
    if net.load_c:
        lines.append(f"C{tag}load {t} 0 {_v(net.load_c)}")
    lines += [f"C{tag}ser {t} x{tag} {_v(net.series_c)}", f"R{tag}ser x{tag} {node} {_v(net.series_r)}"]
    return lines


def _psi(u: str, knee: float) -> str:
    return f"(min(max({u},0),{_v(2 * knee)})^2/{_v(4 * knee)}+max({u}-{_v(2 * knee)},0))"


def op_amp_lines(design: Design) -> list[str]:
    """The op-amp as SPICE elements (module text), from ``pos``, ``inv`` to ``out``."""
    s = design.supply
    low, high, knee = design.limit_low_v, design.limit_high_v, s.knee
    a0 = s.open_loop_gain
    lines = []
    c = 1.0 / (2 * math.pi * (s.gbw or STATIC_GBW_HZ))
    if s.slew_rate:
        lim = s.slew_rate * c
        lines.append(f"Bopx 0 opx I = max({_v(-lim)}, min({_v(lim)}, V(pos)-V(inv)-V(opx)/{_v(a0)}))")
    else:
        lines += ["Gopx 0 opx pos inv 1", f"Ropx opx 0 {_v(a0)}"]
    lines += [
        f"Copx opx 0 {_v(c)}",
        f"Bclamp opx 0 I = {_v(CLAMP_S)}*(max(V(opx)-{_v(high + knee)},0)+min(V(opx)-{_v(low - knee)},0))",
    ]
    lines.append(f"Bout out 0 V = V(opx) - {_psi(f'V(opx)-{_v(high - knee)}', knee)} + {_psi(f'{_v(low + knee)}-V(opx)', knee)}")
    # where the operating point lies (A0/(1 + A0) times the divider's voltage at opx and out): only a
    # starting guess for ngspice's search, which the slew limit's min/max would otherwise stall
    dc = design.bias_v * a0 / (1.0 + a0)
    lines.append(f".nodeset v(pos)={_v(design.bias_v)} v(inv)={_v(dc)} v(opx)={_v(dc)} v(out)={_v(dc)}")
    return lines


def _rig(rig) -> list[str]:
    frac = volume_fraction(rig.volume, rig.volume_taper)
    rt = rig.tone_pot * volume_fraction(rig.tone, rig.tone_taper)
    ru, rd = rig.volume_pot * (1.0 - frac), max(rig.volume_pot * frac, MIN_R)
    lines = [f"Rtone jack tn {_v(rt)}", f"Ctone tn 0 {_v(rig.tone_cap)}"] if rt > 0 else [f"Ctone jack 0 {_v(rig.tone_cap)}"]
    lines.append(f"Rvolup jack amp {_v(ru)}" if ru > 0 else "Vvolup jack amp DC 0")
    lines += [
        f"Rvoldown amp 0 {_v(rd)}",
        f"Ccable amp 0 {_v(rig.cable_length * rig.cable_capacitance + rig.amp_c)}",
        f"Ramp amp 0 {_v(rig.amp_r)}",
    ]
    return lines


def circuit_lines(design: Design, *, rig: bool = True) -> list[str]:
    """The element lines (no comments, analyses or .end): coils, networks, op-amp, output, rig."""
    d = design
    drives = hum_drives(d)
    lines = ["Vvel vel 0 DC 0 AC 1"] + [f"V{node} {node} 0 DC 0" for node, _ in drives]
    lines += _coil("a", d.coil_a, "ta", [(n, k[0]) for n, k in drives]) + _coil("b", d.coil_b, "tb", [(n, k[1]) for n, k in drives])
    lines += _input("a", d.input_a, "inv") + _input("b", d.input_b, "pos")
    ib = d.input_b
    assert ib.bias_top is not None and ib.bias_bottom is not None  # input_b always has its divider
    lines += [f"Vbat bat 0 DC {_v(d.supply.battery)}", f"Rbiastop bat pos {_v(ib.bias_top)}", f"Rbiasbottom pos 0 {_v(ib.bias_bottom)}"]
    if ib.shunt_c:
        lines.append(f"Cshunt pos 0 {_v(ib.shunt_c)}")
    lines.append(f"Rfb out inv {_v(d.feedback.r)}")
    if d.feedback.c:
        lines.append(f"Cfb out inv {_v(d.feedback.c)}")
    lines += op_amp_lines(d)
    lines += [f"Ccouple out o1 {_v(d.output.coupling_c)}", f"Rout o1 jack {_v(d.output.series_r)}"]
    if d.output.shunt_r:
        lines.append(f"Rjack jack 0 {_v(d.output.shunt_r)}")
    if rig:
        lines += _rig(d.rig)
    return lines


OPAMP_NOISE_T = 300.0  # K, render noise's default temperature: the stand-ins below are sized for it


def _opamp_noise_stanza(d: Design) -> list[str]:
    """Commented lines that add the op-amp's noise (absent above: its sources are noiseless) as thermal stand-ins.

    Each resistor R sits alone from a spare node to ground, so that node carries its open-circuit
    thermal voltage √(4kTR) (Johnson–Nyquist); a noiseless transconductance g turns it into a current
    g·√(4kTR). Into ``opx`` with g = 1 S (the op-amp's own transconductance) it is the voltage noise e_n
    at the + input; into ``pos`` and ``inv`` with g = 1 µS it is the current noise i_n at each input.
    R = (density/g)²/(4kT), at :data:`OPAMP_NOISE_T`. None of them loads a node of the circuit.
    """
    from .noise import K_BOLTZMANN

    four_kt = 4 * K_BOLTZMANN * OPAMP_NOISE_T
    en, i_n = d.supply.noise_voltage, d.supply.noise_current
    return [
        "* (this .noise example leaves out the op-amp's own noise: its controlled sources are noiseless, so it",
        "*  gives the resistors' noise only, less than render noise's total; to add the op-amp's voltage noise",
        f"*  {en:g} V/sqrt(Hz) and current noise {i_n:g} A/sqrt(Hz) at each input, as render noise does at {OPAMP_NOISE_T:g} K",
        "*  (ngspice's default temperature is 300.15 K, 0.0002 dB away), uncomment these thermal stand-ins too:)",
        f"* Ren nen 0 {_v(en**2 / four_kt)}",
        "* Gen 0 opx nen 0 1",
        f"* Rinp ninp 0 {_v((i_n / 1e-6) ** 2 / four_kt)}",
        "* Ginp 0 pos ninp 0 1e-06",
        f"* Rinn ninn 0 {_v((i_n / 1e-6) ** 2 / four_kt)}",
        "* Ginn 0 inv ninn 0 1e-06",
    ]


def netlist(design: Design, *, rig_source: str | None = None) -> str:
    """The whole netlist as text (module text): title, documentation, elements, analyses.

    design : a validated design with its rig applied
    rig_source : where the rig came from, for the title comment (None: the design's own)
    returns : str, ending in ".end" and a newline
    """
    d = design
    s = d.supply
    head = [
        f"* {d.name}: the active pickup and its rig (render netlist)",
        f"* design: {d.source or d.name}" + (f"; rig: {rig_source}" if rig_source else ""),
        "*",
        "* drives: Vvel (node vel): string velocity, 1 V = 1 m/s at both sensing points, AC 1;",
        "*         Vdbdt (node dbdt): hum field derivative, 1 V = 1 T/s" if not d.hum.sources else "*         Vhum1.. (nodes hum1..): the rig's hum sources (below)",
        *(
            [
                "*         with a [construction], each coil's EMF per m/s is the strings' mean vertical sensitivity at rest, the",
                "*         linear small-signal stand-in; render sense gives each string's, and render clips senses each string",
                "*         in two polarisations, not linearly",
            ]
            if d.construction is not None
            else []
        ),
        "* nodes:  a1 a2 b1 b2 coil insides; ta tb coil terminals; xa xb series_c to series_r;",
        "*         inv pos op-amp inputs; bat battery +; opx op-amp open-loop state; out op-amp output;",
        "*         o1 coupling_c to series_r; jack output jack; tn tone; amp amplifier input",
        f"* op-amp: open-loop gain {s.open_loop_gain:g}"
        + (f", gbw {s.gbw:g} Hz" if s.gbw else f", no gbw (written as gbw {STATIC_GBW_HZ:g} Hz, far above the audio band)")
        + (f", slew rate {s.slew_rate:g} V/s" if s.slew_rate else "")
        + f"; output window {d.limit_low_v:g} .. {d.limit_high_v:g} V, knee {s.knee:g} V",
        "*",
    ]
    if d.hum.sources:
        n = len(d.hum.sources)
        drives = "Vhum1" if n == 1 else f"Vhum1..Vhum{n}"
        head += [
            f"* hum: the rig's {n} [[hum.source]] {'table drives' if n == 1 else 'tables drive'} {drives}: each source's rate of change,",
            "*      1 V = 1 A*m^2/s of a dipole's moment or 1 T/s of a uniform source's field (node dbdt is not written);",
            "*      for source j's hum at the amp input at harmonic h, give Vhumj AC 2*pi*f_h*m*w_h (f_h = h times the mains, m its peak moment in A*m^2,",
            "*      or B its peak field in T for a uniform source; w_h the harmonic's weight from its harmonics or the rig's)",
            "*",
        ]
    tail = [
        "*",
        "* the operating point (the bias at pos, the op-amp output at out):",
        ".op",
        "*",
        "* response from string velocity to the amp input (V per m/s; vp in radians), uncomment",
        "* (for a design whose coils cancel the string signal, vdb of zero fails: write vm(amp) instead):",
        "* .control",
        "* ac dec 50 10 100k",
        "* wrdata response.txt vdb(amp) vp(amp)",
        "* .endc",
        "*",
        "* noise at the amp input, referred to the string velocity, uncomment:",
        "* .control",
        "* noise v(amp) Vvel dec 20 20 20k",
        "* setplot noise1",
        "* wrdata noise.txt onoise_spectrum inoise_spectrum",
        "* .endc",
        *_opamp_noise_stanza(d),
        "*",
        "* a transient: replace Vvel above with a string velocity, e.g. 1 kHz at 0.2 m/s peak,",
        "* Vvel vel 0 DC 0 AC 1 SIN(0 0.2 1k)",
        "* and uncomment:",
        "* .options method=gear reltol=1e-6",
        "* .control",
        "* tran 1u 0.2 0 1u",
        "* wrdata transient.txt v(out) v(amp)",
        "* .endc",
        ".end",
    ]
    return "\n".join(head + circuit_lines(d) + tail) + "\n"
