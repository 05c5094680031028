"""The RL ladder's resistive part (the core loss) against the diffusion solutions it is fitted to,
written out here with scipy: the slab's tanh x/x and the cylinder's 2J1(x)/(xJ0(x)) (Lammeraner &
Štafl, *Eddy Currents*, 1966), on a test blade and rod and on the shipped steel demos' coils."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy.constants import mu_0
from scipy.special import jv

from render.impedance.ladder import fit_ladder

from .test_ladder import BAND, F_FIT, _open_blade, _rod_in_solenoid

ROOT = Path(__file__).resolve().parents[2]
LOSS_TOL = 0.05  # the fit's own loss tolerance (render.impedance.ladder.TOL_LOSS): "within a few per cent"


def _mu_eff(f, part):
    """μ_eff of a slab (tanh x/x, x² = jωσμ·b², b the half-thickness) or a cylinder
    (2J1(x)/(xJ0(x)), x² = −jωσμ·a², a the radius); μr where the part does not conduct.
    Both are even in x, so either root serves."""
    m = part.material
    if m.conductivity == 0:
        return np.full(f.shape, m.relative_permeability, complex)
    x2 = 2j * np.pi * f * m.conductivity * mu_0 * m.relative_permeability * (part.size / 2) ** 2
    if part.shape == "slab":
        x = np.sqrt(x2)
        return m.relative_permeability * np.tanh(x) / x
    x = np.sqrt(-x2)
    return m.relative_permeability * 2 * jv(1, x) / (x * jv(0, x))


def _core_impedance(f, parts, air_inductance):
    """Σ jω·fill·L_air·(μ_app − 1), μ_app = μ_eff/(1 + D·(μ_eff − 1)) (the open core's demagnetising field)."""
    z = np.zeros(f.shape, complex)
    for p in parts:
        mu = _mu_eff(f, p)
        z += 2j * np.pi * f * air_inductance * p.fill * (mu / (1 + p.demagnetising_factor * (mu - 1)) - 1)
    return z


def test_the_closed_forms_here_are_the_librarys():
    # the test's own tanh and Bessel forms against the library's (both from Lammeraner & Štafl)
    for part, z in (_open_blade(), _rod_in_solenoid()):
        l_air = 0.8 if part.shape == "slab" else 1.0
        np.testing.assert_allclose(_core_impedance(F_FIT, [part], l_air), z - 2j * np.pi * F_FIT * l_air, rtol=1e-9)


@pytest.mark.parametrize("which", ["blade", "rod"])
def test_the_ladders_loss_against_the_closed_form(which):
    # within the fit's loss tolerance over 20 Hz–20 kHz; before the loss was weighted the blade's
    # ran 14 % low at 20 Hz
    part, z = _open_blade() if which == "blade" else _rod_in_solenoid()
    l_air = 0.8 if which == "blade" else 1.0
    ref = _core_impedance(F_FIT, [part], l_air)
    fit = fit_ladder(F_FIT, z)
    ratio = fit.ladder.impedance(F_FIT[BAND]).real / ref[BAND].real
    assert np.max(np.abs(ratio - 1)) < LOSS_TOL
    assert fit.error_loss == pytest.approx(np.max(np.abs(ratio - 1)), rel=1e-6)


def derivations(monkeypatch) -> list:
    """Each coil's (core parts, DerivedCoil) as the designs loaded after this call derive them, in order."""
    from render.design import coil_impedance as ci

    seen: list = []
    derive = ci._derive

    def keep(winding, bare, outer, parts):
        out = derive(winding, bare, outer, parts)
        seen.append((parts, out))
        return out

    monkeypatch.setattr(ci, "_derive", keep)
    return seen


@pytest.mark.parametrize("model", ["slipway-steel-blades", "slipway-steel-poles"])
def test_the_steel_demos_ladder_loss_against_the_closed_form(model, monkeypatch):
    # each coil's ladder as the design loads it, against the closed forms summed over the core
    # parts the design derives (the same parts, fills and demagnetising factors), 20 Hz–20 kHz;
    # before the loss was weighted the ladders ran 0.91× (blades) and 0.85× (poles) at 20 Hz
    from render.design import load_design

    seen = derivations(monkeypatch)
    design = load_design(ROOT / "models" / f"{model}.toml")
    assert len(seen) == 2
    f = np.geomspace(20.0, 20e3, 61)
    for (parts, derived), coil in zip(seen, (design.coil_a, design.coil_b)):
        assert coil.ladder == derived.ladder_fit.ladder and len(coil.ladder.inductances) >= 1
        ref = _core_impedance(f, parts, derived.air_inductance)
        ratio = coil.ladder.impedance(f).real / ref.real
        assert np.max(np.abs(ratio - 1)) < LOSS_TOL, f"{model}: loss ratio {ratio.min():.3f}…{ratio.max():.3f}"
        assert np.max(np.abs(ratio - 1)) <= derived.ladder_fit.error_loss * 1.05  # the reported error covers it


def test_a_loss_below_the_phase_tolerance_is_said_so():
    # a core whose loss turns the phase by under 0.5° fits with no section, and says why: a 1 H
    # coil with 20 MΩ in parallel, at most atan(ωL/R) = 0.36° at the band's top point (just under 20 kHz)
    w = 2 * np.pi * F_FIT
    z = 1 / (1 / (1j * w * 1.0) + 1 / 20e6)
    fit = fit_ladder(F_FIT, z)
    assert fit.ladder.inductances == () and fit.error_loss is None
    assert fit.loss_angle_deg == pytest.approx(np.degrees(np.arctan(2 * np.pi * F_FIT[BAND][-1] / 20e6)), rel=1e-3)
    assert "loss below the fit tolerance" in fit.loss_reason()
