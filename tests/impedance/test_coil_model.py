"""The coil model from winding and core in one call: its parts agree with the modules they come from."""

import numpy as np
import pytest

from render.circuit.winding import awg_diameter
from render.impedance.coil_model import derive_coil
from render.impedance.eddy import CorePart, apparent_permeability, prism_demagnetising_factor
from render.impedance.inductance import winding_inductance
from render.impedance.materials import STEEL
from render.magnetics.coil import CoilGeometry

W = CoilGeometry(5000, 0.068, 0.013, 0.058, 0.003, 0.009)  # invented pickup winding
D = awg_diameter(42)  # ASTM B258


def test_blade_coil():
    d = prism_demagnetising_factor(0.003, 0.060, 0.009)  # Aharoni 1998
    part = CorePart("slab", 3e-3, STEEL, fill=0.3, demagnetising_factor=d)
    c = derive_coil(W, bare_diameter=D, outer_diameter=1.12 * D, parts=[part])
    # R_dc: 5000 turns × 142 mm mean turn of AWG 42 at 5.47 Ω/m (IEC 60028 copper, ASTM B258 wire)
    assert c.wire_length == pytest.approx(710.0, rel=1e-9)
    assert c.resistance == pytest.approx(710.0 * 5.47, rel=0.002)
    assert c.air_inductance == pytest.approx(winding_inductance(W), rel=1e-12)
    # DC: L_air (1 + fill (μ_app − 1)), eq. (2) of render.impedance.eddy
    assert c.dc_inductance == pytest.approx(c.air_inductance * (1 + 0.3 * (apparent_permeability(100.0, d) - 1)), rel=1e-12)
    assert c.ladder_fit.ladder.dc_inductance == pytest.approx(c.dc_inductance, rel=0.01)
    assert c.ladder_fit.error_db < 0.2 and c.ladder_fit.error_deg < 2.0
    # the blade's loss grows with frequency: the ladder's resistance at 10 kHz is far above 1 kHz's
    z = c.ladder_fit.ladder.impedance(np.array([1e3, 1e4]))
    assert z[1].real > 10 * z[0].real


def test_air_core_has_no_loss():
    c = derive_coil(W, bare_diameter=D, outer_diameter=1.12 * D)
    assert c.ladder_fit.ladder.inductances == ()
    assert c.ladder_fit.ladder.series_inductance == pytest.approx(c.air_inductance, rel=1e-9)


def test_the_cached_ladder_fit_is_the_fit_itself(monkeypatch, tmp_path):
    # a cache must not change a number: the fit read back from disk equals a fresh fit_ladder, to the last bit
    from render.design.coil_impedance import ladder_fit_cached

    monkeypatch.setenv("RENDER_CACHE_DIR", str(tmp_path))
    d = prism_demagnetising_factor(0.003, 0.060, 0.009)  # Aharoni 1998
    part = CorePart("slab", 3e-3, STEEL, fill=0.3, demagnetising_factor=d)
    fresh = derive_coil(W, bare_diameter=D, outer_diameter=1.12 * D, parts=[part])
    stored = derive_coil(W, bare_diameter=D, outer_diameter=1.12 * D, parts=[part], fit=ladder_fit_cached)
    assert len(list((tmp_path / "coil-ladder").glob("*.npz"))) == 1
    again = derive_coil(W, bare_diameter=D, outer_diameter=1.12 * D, parts=[part], fit=ladder_fit_cached)
    assert fresh.ladder_fit == stored.ladder_fit == again.ladder_fit
    assert fresh.ladder_fit.ladder.inductances  # a fit with sections, not a trivial one
    # another impedance is another entry
    derive_coil(W, bare_diameter=D, outer_diameter=1.12 * D, fit=ladder_fit_cached)
    assert len(list((tmp_path / "coil-ladder").glob("*.npz"))) == 2


def test_a_flat_bobbin_against_wheelers_round_coil():
    # Wheeler's multilayer formula (Proc. IRE 16(10), 1928) for a round coil of the same mean turn, as the
    # [coil_x.winding] estimate uses it, against the Neumann sum over the rectangular winding: the README's
    # "A flat bobbin" figures and the ratio render check prints for a coil given only by its winding
    import math
    from pathlib import Path

    from render.circuit.winding import wheeler_inductance
    from render.cli.check import FLAT_BOBBIN_RATIO

    flat = winding_inductance(W)
    depth = (W.width - W.window_width) / 2
    round_coil = wheeler_inductance(turns=W.turns, mean_radius=W.mean_turn / (2 * math.pi), length=W.height, depth=depth)
    text = " ".join((Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8").split())
    assert f"The air-core inductance is {flat:.3f} H" in text and f"gives {round_coil:.2f} H: {round_coil / flat:.1f} times too much" in text
    assert FLAT_BOBBIN_RATIO == f"{round_coil / flat:.1f}"
