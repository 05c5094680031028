"""Eddy currents in core parts: the library's Bessel-function solution against the Kelvin-function
form, an independent finite-difference diffusion solve, and closed-form limits."""

import math

import numpy as np
import pytest
from scipy.constants import mu_0
from scipy.linalg import solve_banded
from scipy.special import bei, beip, ber, berp

from render.errors import InputError
from render.impedance.eddy import (
    CorePart,
    apparent_permeability,
    core_impedance,
    cylinder_permeability,
    dc_inductance,
    fill_for,
    prism_demagnetising_factor,
    skin_depth,
    slab_permeability,
)
from render.impedance.materials import NDFEB, STEEL, Material

FREQS = np.geomspace(20.0, 20e3, 10)  # ten frequencies over the audio band
SIGMA, MUR = 6e6, 100.0  # steel as in render.impedance.materials (from memory)


def _kelvin_cylinder(frequency_hz, radius, sigma, mur):
    """μ_eff/μr of a cylinder in Kelvin functions, the form of Lammeraner & Štafl (Eddy Currents,
    1966, ch. 3): with m = √(ωσμ), x = m·a: 2/x · (bei'(x) − j ber'(x)) / (ber(x) + j bei(x))."""
    m = np.sqrt(2 * np.pi * frequency_hz * sigma * mu_0 * mur)
    x = m * radius
    return 2 / x * (beip(x) - 1j * berp(x)) / (ber(x) + 1j * bei(x))


def _fd_cylinder(frequency_hz, radius, sigma, mur, cells=4000):
    """Independent 1-D finite-volume solve of (1/r)(r H')' = jωσμ H on 0 ≤ r ≤ a with H(a) = 1;
    returns the mean of H over the section (= μ_eff/μr)."""
    h = radius / cells
    r = (np.arange(cells) + 0.5) * h
    rf = np.arange(cells + 1) * h  # faces; the axis face carries no flux
    g2 = 1j * 2 * np.pi * frequency_hz * sigma * mu_0 * mur
    west = rf[:-1] / h
    east = rf[1:] / h
    diag = -(west + east) - g2 * r * h
    east_bc = east.copy()
    diag[-1] = -(west[-1] + 2 * east[-1]) - g2 * r[-1] * h  # Dirichlet H = 1 half a cell beyond the last centre
    rhs = np.zeros(cells, complex)
    rhs[-1] = -2 * east[-1] * 1.0
    ab = np.zeros((3, cells), complex)
    ab[0, 1:] = east_bc[:-1]
    ab[1] = diag
    ab[2, :-1] = west[1:]
    H = solve_banded((1, 1), ab, rhs)
    return np.sum(H * r * h) * 2 / radius**2


def _fd_slab(frequency_hz, half, sigma, mur, cells=4000):
    """The same for a slab: H'' = jωσμ H on 0 ≤ x ≤ b, H'(0) = 0, H(b) = 1; mean of H."""
    h = half / cells
    g2 = 1j * 2 * np.pi * frequency_hz * sigma * mu_0 * mur
    diag = np.full(cells, -2.0 - g2 * h * h, complex)
    diag[0] = -1.0 - g2 * h * h
    diag[-1] = -3.0 - g2 * h * h
    rhs = np.zeros(cells, complex)
    rhs[-1] = -2.0
    ab = np.zeros((3, cells), complex)
    ab[0, 1:] = 1.0
    ab[1] = diag
    ab[2, :-1] = 1.0
    return np.mean(solve_banded((1, 1), ab, rhs))


def test_skin_depth_of_steel_at_1khz():
    # δ = √(2/(ωσμ)) = 0.65 mm for σ = 6 MS/m, μr = 100 at 1 kHz (closed form)
    assert skin_depth(1000.0, conductivity=SIGMA, relative_permeability=MUR) == pytest.approx(math.sqrt(2 / (2 * math.pi * 1000 * SIGMA * mu_0 * MUR)), rel=1e-12)
    assert skin_depth(1000.0, conductivity=SIGMA, relative_permeability=MUR) == pytest.approx(0.65e-3, rel=0.01)


def test_cylinder_against_kelvin_functions():
    # two evaluations of one solution: complex-argument Bessel J (library) and Kelvin ber/bei (test)
    for radius in (0.5e-3, 2e-3, 5e-3):
        mu = cylinder_permeability(FREQS, radius=radius, conductivity=SIGMA, relative_permeability=MUR)
        np.testing.assert_allclose(mu, MUR * _kelvin_cylinder(FREQS, radius, SIGMA, MUR), rtol=1e-9)


def test_cylinder_in_long_solenoid_against_bessel_and_finite_differences():
    # a steel rod of 4 mm diameter filling a long solenoid (N = 1000, l = 0.5 m, coil radius 2.5 mm):
    # Z = jω μ0 N²/l · [π(Rc² − a²) + π a² μ_eff]; library Z against the Kelvin-function form
    # (Lammeraner & Štafl 1966) to 1e-9 and against an independent finite-volume diffusion solve
    # at ten frequencies within 1 %
    n, length, rc, a = 1000, 0.5, 2.5e-3, 2e-3
    l_air = mu_0 * n * n * math.pi * rc * rc / length
    part = CorePart("cylinder", 2 * a, Material("steel", SIGMA, MUR, "test"), fill=(a / rc) ** 2)
    jw = 2j * math.pi * FREQS
    z = jw * l_air + core_impedance(FREQS, air_inductance=l_air, parts=[part])
    z_kelvin = jw * mu_0 * n * n / length * (math.pi * (rc * rc - a * a) + math.pi * a * a * MUR * _kelvin_cylinder(FREQS, a, SIGMA, MUR))
    np.testing.assert_allclose(z, z_kelvin, rtol=1e-9)
    mu_fd = np.array([_fd_cylinder(f, a, SIGMA, MUR) for f in FREQS]) * MUR
    z_fd = jw * mu_0 * n * n / length * (math.pi * (rc * rc - a * a) + math.pi * a * a * mu_fd)
    assert np.max(np.abs(z / z_fd - 1)) < 0.01
    # the core's own share, the harder part, within 1 % too
    core, core_fd = z - jw * l_air * (1 - part.fill), z_fd - jw * l_air * (1 - part.fill)
    assert np.max(np.abs(core / core_fd - 1)) < 0.01


def test_slab_against_finite_differences():
    # a 3 mm steel blade: library tanh form (Lammeraner & Štafl 1966, ch. 2) against the
    # finite-volume solve at ten frequencies within 1 %
    mu = slab_permeability(FREQS, half_thickness=1.5e-3, conductivity=SIGMA, relative_permeability=MUR)
    mu_fd = np.array([_fd_slab(f, 1.5e-3, SIGMA, MUR) for f in FREQS]) * MUR
    assert np.max(np.abs(mu / mu_fd - 1)) < 0.01


def test_high_frequency_limits():
    # δ ≪ size: μ_eff → μr (1 − j) δ/a (cylinder) and μr (1 − j) δ/(2b) (slab), from the
    # asymptotic forms of J1/J0 and tanh (Lammeraner & Štafl 1966)
    f = np.array([1e7])
    d = skin_depth(f, conductivity=SIGMA, relative_permeability=MUR)
    cyl = cylinder_permeability(f, radius=5e-3, conductivity=SIGMA, relative_permeability=MUR)
    slab = slab_permeability(f, half_thickness=5e-3, conductivity=SIGMA, relative_permeability=MUR)
    assert cyl[0] == pytest.approx(MUR * (1 - 1j) * d[0] / 5e-3, rel=0.01)
    assert slab[0] == pytest.approx(MUR * (1 - 1j) * d[0] / 1e-2, rel=1e-6)


def test_low_frequency_loss_term():
    # ωσμa² ≪ 1: μ_eff ≈ μr (1 − jωσμa²/8) (cylinder) and μr (1 − jωσμb²/3) (slab): the series
    # of 2J1(x)/(xJ0(x)) and tanh(x)/x
    f = np.array([0.01, 1.0])
    x2 = 2 * np.pi * f * SIGMA * mu_0 * MUR * (1e-3) ** 2
    np.testing.assert_allclose(cylinder_permeability(f, radius=1e-3, conductivity=SIGMA, relative_permeability=MUR), MUR * (1 - 1j * x2 / 8), rtol=1e-5)
    np.testing.assert_allclose(slab_permeability(f, half_thickness=1e-3, conductivity=SIGMA, relative_permeability=MUR), MUR * (1 - 1j * x2 / 3), rtol=1e-5)


def test_prism_demagnetising_factors():
    # Aharoni, J. Appl. Phys. 83(6), 1998: a cube has D = 1/3 and the three factors of any prism
    # sum to 1 (a property of the demagnetising tensor, Osborn, Phys. Rev. 67, 1945)
    assert prism_demagnetising_factor(1, 1, 1) == pytest.approx(1 / 3, rel=1e-12)
    a, b, c = 0.003, 0.06, 0.009
    total = prism_demagnetising_factor(a, b, c) + prism_demagnetising_factor(b, c, a) + prism_demagnetising_factor(c, a, b)
    assert total == pytest.approx(1.0, rel=1e-12)
    # a thin plate magnetised across its thickness tends to 1, a long bar along its length to 0
    assert prism_demagnetising_factor(1, 1, 1e-4) > 0.999
    assert prism_demagnetising_factor(1e-3, 1e-3, 1) < 1e-3
    # at the slenderest prism accepted (1 × 1 × 1e4) the three factors still sum to 1 (Osborn)
    total = prism_demagnetising_factor(1, 1, 1e4) + 2 * prism_demagnetising_factor(1, 1e4, 1)
    assert total == pytest.approx(1.0, rel=1e-6)


@pytest.mark.parametrize("sides", [(0.0, 1e-3, 1e-3), (-1e-3, 1e-3, 1e-3), (float("nan"), 1e-3, 1e-3), (1e-9, 1e-3, 1e-3)])
def test_prism_sides_out_of_range_are_refused_in_one_line(sides):
    # a side of no length has no factor; past a side ratio of 1e4 the closed form's terms cancel in double precision
    with pytest.raises(InputError) as e:
        prism_demagnetising_factor(*sides)
    assert "\n" not in str(e.value) and "prism sides" in str(e.value)


def test_the_blades_demagnetising_factor_against_magpylib():
    # the README's blade (3 × 60 × 9 mm, field along the 9 mm): D = 0.263, so μ_app(0) = 3.7 at μr = 100.
    # Reference: the volume mean of the demagnetising field inside a uniformly polarised cuboid, from
    # magpylib's closed-form cuboid field (Ortner & Coliado Bandeira, SoftwareX 11, 2020), by 24³ Gauss
    # points: D = −μ0·⟨H_z⟩/J. Measured 0.26299 against Aharoni's 0.26298.
    from magnetics.reference import require_magpylib

    require_magpylib()
    import magpylib as magpy

    dims = np.array([0.003, 0.060, 0.009])
    x, w = np.polynomial.legendre.leggauss(24)
    grid = np.stack(np.meshgrid(*(x[:, None] * dims / 2).T, indexing="ij"), axis=-1).reshape(-1, 3)
    weight = (w[:, None, None] * w[None, :, None] * w[None, None, :]).ravel() / 8.0
    h = magpy.magnet.Cuboid(polarization=(0.0, 0.0, 1.0), dimension=dims).getH(grid)
    d_ref = -mu_0 * float(np.sum(weight * h[:, 2]))
    d = prism_demagnetising_factor(*dims)
    assert d == pytest.approx(d_ref, rel=1e-4)
    assert round(d, 3) == 0.263 and round(float(apparent_permeability(100.0, d)), 1) == 3.7


def test_apparent_permeability_of_an_open_core():
    # DC: μ_app = μ/(1 + D(μ − 1)) (Bozorth, Ferromagnetism, 1951): a sphere (D = 1/3) of any
    # large μ reads at most 3
    assert apparent_permeability(1e6, 1 / 3) == pytest.approx(3.0, rel=1e-5)
    assert apparent_permeability(100.0, 0.0) == 100.0


def test_conducting_magnet_only_loses_flux():
    # NdFeB (μr ≈ 1.05): the core share tends to −1 (flux expelled) at high frequency, with loss
    part = CorePart("cylinder", 6e-3, NDFEB, fill=0.5)
    mu = part.permeability(np.array([1.0, 1e8]))
    assert mu[0].real == pytest.approx(NDFEB.relative_permeability, rel=1e-6)
    assert abs(mu[1]) < 0.05


def test_fill_reproduces_the_dc_inductance():
    # eq. (2) at DC: L_dc = L_air (1 + fill (μ_app(0) − 1)), inverted by fill_for
    fill = fill_for(dc_inductance=2.5, air_inductance=1.0, material=STEEL, demagnetising_factor=0.25)
    part = CorePart("slab", 3e-3, STEEL, fill=fill, demagnetising_factor=0.25)
    assert dc_inductance(air_inductance=1.0, parts=[part]) == pytest.approx(2.5, rel=1e-12)
    z = core_impedance(np.array([1e-3]), air_inductance=1.0, parts=[part])
    assert (z[0] / (2j * math.pi * 1e-3)).real == pytest.approx(1.5, rel=1e-6)


def test_bad_part_is_refused():
    with pytest.raises(InputError):
        CorePart("sphere", 1e-3, STEEL, fill=0.1)
    with pytest.raises(InputError):
        CorePart("slab", 1e-3, STEEL, fill=0.1, demagnetising_factor=1.0)
    # fill is a share of the coil's flux: above 1, brass (µr = 1, a conductor) would give the coil a
    # negative inductance at high frequency, L_air·(1 + fill·(µ_app − 1)) with µ_app → 0 (eq. (2))
    with pytest.raises(InputError, match="from 0 to 1"):
        CorePart("slab", 1e-3, STEEL, fill=1.2)
