"""Coils from their winding: wire tables, copper, Wheeler's formula, scaling laws."""

import math

import pytest
from click.testing import CliRunner

from render.analysis.turns import scale_turns
from render.circuit.winding import INCH, awg_diameter, copper_resistivity, from_winding, wheeler_inductance, wire_resistance
from render.cli import main
from render.design import load_design

ROOT = __import__("pathlib").Path(__file__).resolve().parents[2]


@pytest.mark.parametrize(
    "gauge,diameter_mm,ohm_per_m",
    [
        # ASTM B258-02 diameters (d = 0.005 in × 92^((36 − n)/39)); Ω/m at 20 °C from
        # IEC 60028 copper (0.017241 Ω·mm²/m at 20 °C) over π·d²/4
        (42, 0.0634, 5.47),
        (43, 0.0564, 6.90),
        (44, 0.0502, 8.70),
    ],
)
def test_awg_wire_table(gauge, diameter_mm, ohm_per_m):
    d = awg_diameter(gauge)
    assert d * 1e3 == pytest.approx(diameter_mm, abs=1e-4)  # the tabulated figures carry 3 significant digits
    assert wire_resistance(length=1.0, diameter=d) == pytest.approx(ohm_per_m, abs=0.005)


def test_awg_36_is_five_thousandths_of_an_inch():
    # ASTM B258: AWG 36 is 0.005 in by definition of the series
    assert awg_diameter(36) == pytest.approx(0.005 * 0.0254, rel=1e-12)


def test_copper_resistivity_and_temperature_coefficient():
    # IEC 60028: 0.017241 Ω·mm²/m at 20 °C, α = 0.00393 /K; +20 K gives ×1.0786
    assert copper_resistivity(20.0) == pytest.approx(0.017241e-6, rel=1e-12)
    assert copper_resistivity(40.0) / copper_resistivity(20.0) == pytest.approx(1.0786, abs=1e-4)


def test_wheeler_worked_case():
    # Wheeler, Proc. IRE 16(10), 1928: a = 0.5 in, b = 0.5 in, c = 0.25 in, N = 1000 -> 20.0 mH
    L = wheeler_inductance(turns=1000, mean_radius=0.5 * INCH, length=0.5 * INCH, depth=0.25 * INCH)
    assert L == pytest.approx(20.0e-3, rel=1e-9)


def test_wheeler_8000_turns_and_wire():
    # Wheeler, Proc. IRE 16(10), 1928, computed by hand: N = 8000 on his former -> 1.28 H air core,
    # 638.4 m of wire (N × 2π·0.5 in), 3.49 kΩ in AWG 42 and 4.40 kΩ in AWG 43 (ASTM B258 diameters, IEC 60028 copper)
    mean_turn = 2 * math.pi * 0.5 * INCH
    for gauge, r_expected in ((42, 3.49e3), (43, 4.40e3)):
        L, R, length = from_winding(turns=8000, diameter=awg_diameter(gauge), mean_turn=mean_turn, height=0.5 * INCH, depth=0.25 * INCH, core_factor=1.0)
        assert L == pytest.approx(1.28, rel=1e-3)
        assert length == pytest.approx(638.4, abs=0.05)
        assert R == pytest.approx(r_expected, rel=2e-3)


def test_inductance_goes_as_turns_squared_and_resistance_as_turns():
    # Wheeler's formula has N² at fixed geometry; the wire length is N × mean turn
    args = dict(diameter=awg_diameter(42), mean_turn=0.15, height=0.009, depth=0.003, core_factor=2.5)
    L1, R1, _ = from_winding(turns=1000, **args)
    L2, R2, _ = from_winding(turns=1100, **args)
    assert L2 / L1 == pytest.approx(1.1**2, rel=1e-12)
    assert R2 / R1 == pytest.approx(1.1, rel=1e-12)
    # low-impedance coil: N/10 gives L/100 and R/10 (Wheeler's N², the wire's length N × mean turn)
    L3, R3, _ = from_winding(turns=100, **args)
    assert L1 / L3 == pytest.approx(100.0, rel=1e-12) and R1 / R3 == pytest.approx(10.0, rel=1e-12)


def test_scale_turns_follows_the_same_laws():
    d = load_design(ROOT / "models" / "bench-wound.toml")
    s = scale_turns(d, "coil_b", 1.05)
    assert s.coil_b.inductance / d.coil_b.inductance == pytest.approx(1.05**2, rel=1e-12)
    assert s.coil_b.resistance / d.coil_b.resistance == pytest.approx(1.05, rel=1e-12)
    assert s.coil_b.turns_area / d.coil_b.turns_area == pytest.approx(1.05, rel=1e-12)
    assert s.coil_a == d.coil_a


def test_demo_winding_design_is_derived_and_shown():
    d = load_design(ROOT / "models" / "bench-wound.toml")
    w = d.coil_a.winding
    assert w is not None and d.coil_a.inductance == w.inductance and d.coil_a.resistance == w.resistance
    res = CliRunner().invoke(main, ["check", str(ROOT / "models" / "bench-wound.toml"), "--turns-sweep", "5"])
    assert res.exit_code == 0, res.output
    assert "estimates; replace with measured values" in res.output
    assert res.output.count("coil_b ") >= 3 and "+5.0 %" in res.output
    # a 5 % turns mismatch on one coil costs hum rejection; the same change on both keeps it
    rows = [ln for ln in res.output.splitlines() if ln.strip().startswith(("-5.0 %", "+5.0 %"))]
    assert len(rows) == 4
