"""A coil with an RL ladder in the small-signal engine, the noise model and the renderer's zpk.

The references are the engine's own lumped coil models, which the ladder must reproduce
exactly where it describes the same network (a parallel R_p, or a shorted secondary written
as its Foster expansion: L1(1 − k²) in series with k²L1 ∥ k²L1·ω_e), and closed forms.
"""

from dataclasses import replace
from pathlib import Path

import numpy as np

from render.circuit.coil import coil_impedance, impedance_at
from render.circuit.engine import responses
from render.circuit.ladder import ladder_inductor_impedance, ladder_params, with_ladders
from render.circuit.noise import K_BOLTZMANN, noise_model
from render.circuit.params import from_designs, take
from render.circuit.poly import Rational
from render.design import load_design
from render.impedance.ladder import Ladder

ROOT = Path(__file__).resolve().parents[2]
REF = load_design(ROOT / "models" / "studio-reference.toml")
F = np.geomspace(20, 20e3, 40)


def _with(p, la, lb):
    return replace(p, coil_a=with_ladders(p.coil_a, la), coil_b=with_ladders(p.coil_b, lb))


def test_one_section_ladder_is_the_parallel_resistance_model():
    # L ∥ R_p is the one-section Foster ladder L0 = 0, L1 = L, R1 = R_p (the same network)
    p = from_designs([REF])
    c = REF.coil_a
    lad = Ladder(0.0, (c.inductance,), (c.eddy_resistance,))
    q = _with(p, [lad], [Ladder(0.0, (REF.coil_b.inductance,), (REF.coil_b.eddy_resistance,))])
    np.testing.assert_allclose(impedance_at(q.coil_a, F), impedance_at(p.coil_a, F), rtol=1e-12)
    h0, h1 = responses(p).velocity()(F), responses(q).velocity()(F)
    np.testing.assert_allclose(h1, h0, rtol=1e-9)


def test_ladder_is_the_shorted_secondary():
    # Z = sL1(ω_e + s(1 − k²))/(s + ω_e) = s·L1(1 − k²) + s·k²L1/(1 + s/ω_e)
    from render.circuit.params import CoilParams

    L1, k2, fe = 2.5, 0.3, 1800.0
    one = np.ones(1)
    c = CoilParams(L=one * L1, R=one * 4e3, Cw=one * 1e-10, Gp=one * 0, k2=one * k2, we=one * 2 * np.pi * fe, sec=one, sig=one, hum=one)
    lad = Ladder(L1 * (1 - k2), (k2 * L1,), (k2 * L1 * 2 * np.pi * fe,))
    np.testing.assert_allclose(impedance_at(with_ladders(c, [lad]), F), impedance_at(c, F), rtol=1e-12)


def test_designs_without_ladders_are_untouched():
    # no ladder anywhere: the attribute stays None and the polynomials are the same arrays;
    # in a mixed batch the ladder-less row keeps its lumped coil exactly
    p = from_designs([REF, REF])
    assert p.coil_a.ladder is None and ladder_params([None, None]) is None
    q = _with(p, [None, Ladder(0.2, (1.0,), (5e4,))], [None, None])
    n0, d0 = coil_impedance(take(p.coil_a, [0]))
    n1, d1 = coil_impedance(take(q.coil_a, [0]))
    np.testing.assert_array_equal(n1[:, : n0.shape[1]], n0)
    np.testing.assert_array_equal(d1[:, : d0.shape[1]], d0)
    assert not np.any(n1[:, n0.shape[1] :]) and not np.any(d1[:, d0.shape[1] :])
    np.testing.assert_allclose(responses(q).velocity()(F)[0], responses(p).velocity()(F)[0], rtol=1e-12)


def test_ladder_polynomials_against_direct_evaluation():
    # the (num, den) pair against the ladder's own sum of sections, and absent sections add nothing
    lad = Ladder(0.25, (0.4, 1.1, 2.2), (3e5, 6e4, 8e3))
    lp = ladder_params([lad, Ladder(0.5, (0.7,), (1e4,))])
    n, d = ladder_inductor_impedance(lp)
    z = Rational(n, d)(F)
    np.testing.assert_allclose(z[0], lad.impedance(F), rtol=1e-12)
    np.testing.assert_allclose(z[1], Ladder(0.5, (0.7,), (1e4,)).impedance(F), rtol=1e-12)


def test_noise_model_takes_the_ladder():
    # the coil's core-loss source is 4kT·Re{Z_L}: the ladder resistors' thermal noise (Nyquist 1928)
    p = from_designs([REF])
    lad_a = Ladder(0.1, (0.15, 0.1), (4e4, 1.2e4))
    q = _with(p, [lad_a], [lad_a])
    nm = noise_model(q, noise_voltage=5e-9, noise_current=1e-13, temperature=300.0)
    core = next(s for s in nm.active if s.key == "coil_a.core_loss")
    np.testing.assert_allclose(core.source_psd(F)[0], 4 * K_BOLTZMANN * 300.0 * lad_a.impedance(F).real, rtol=1e-9)
    assert np.all(np.isfinite(nm.output_psd(F)))


def test_zpk_of_a_design_with_ladders():
    # the renderer builds second-order sections from zpk: with 4-section ladders on both coils,
    # zpk must rebuild the same response as the rational function
    p = from_designs([REF])
    lad = Ladder(0.12, (0.05, 0.08, 0.06, 0.03), (2e5, 5e4, 1.5e4, 4e3))
    q = _with(p, [lad], [lad])
    h = responses(q).velocity()
    z, pz, k = h.zpk(0)
    s = 2j * np.pi * F
    rebuilt = k * np.prod(s[:, None] - z[None, :], axis=1) / np.prod(s[:, None] - pz[None, :], axis=1)
    np.testing.assert_allclose(rebuilt, h(F)[0], rtol=1e-6)
    assert np.all(pz.real < 0)
