"""Eddy currents in a coil's core: the 1-D diffusion solutions for a slab and a cylinder.

A conducting core of conductivity σ and permeability μ = μ0·μr in an axial
field H0·e^(jωt) at its surface carries a field that obeys the diffusion
equation ∇²H = jωσμ·H (Lammeraner & Štafl, *Eddy Currents*, 1966, ch. 2–3).
With k² = −jωσμ, k = (1 − j)/δ and the skin depth δ = √(2/(ωσμ)), the mean
flux density over the section divided by μ0·H0 is the core's effective
relative permeability:

- cylinder of radius a:  μ_eff = μr · 2·J1(ka) / (ka·J0(ka))
- slab of half-thickness b (much wider than thick):  μ_eff = μr · tanh(γb) / (γb),
  γ = jk = (1 + j)/δ

Both tend to μr at DC and fall as μr·(1 − j)·δ/a and μr·(1 − j)·δ/(2b) once
the skin depth is smaller than the part: the core's share of the impedance
then grows as √(jω) instead of jω.

An open core of finite length is also diluted by its own demagnetising
field. With the magnetometric demagnetising factor D along the coil's axis,
the uniform-magnetisation approximation gives the apparent permeability

    μ_app = μ_eff / (1 + D·(μ_eff − 1))                                  (1)

(Bozorth, *Ferromagnetism*, 1951, ch. 19, for the DC case; applying it to the
complex μ_eff keeps the 1-D diffusion inside the part, an approximation of
ours). D of a rectangular prism is in closed form (Aharoni, J. Appl. Phys.
83(6), 3432, 1998): :func:`prism_demagnetising_factor`.

The coil's impedance
--------------------
In a long solenoid with N turns over length l, a core of section A_core adds

    Z_core = jω · μ0·N²·A_core / l · (μ_app − 1)  =  jω · L_air · fill · (μ_app − 1)   (2)

with L_air = μ0·N²·A_coil/l and fill = A_core/A_coil. For a short pickup coil
``fill`` is the share of the coil's flux the part carries; the DC inductance
with the core, from a magnetics solve or a measurement, fixes it through
L_dc = L_air·(1 + Σ fill·(μ_app(0) − 1)). Parts add independently (their
mutual shielding is left out).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.constants import mu_0
from scipy.special import jve

from ..errors import InputError
from .materials import Material


def skin_depth(frequency_hz, *, conductivity: float, relative_permeability: float):
    """δ = √(2/(ωσμ)) in m, for ``frequency_hz`` (array_like, Hz > 0)."""
    w = 2 * np.pi * np.asarray(frequency_hz, float)
    return np.sqrt(2.0 / (w * conductivity * mu_0 * relative_permeability))


def _k(frequency_hz, conductivity, relative_permeability):
    w = 2 * np.pi * np.asarray(frequency_hz, float)
    return np.sqrt(-1j * w * conductivity * mu_0 * relative_permeability)


def cylinder_permeability(frequency_hz, *, radius: float, conductivity: float, relative_permeability: float) -> np.ndarray:
    """Effective relative permeability μr·2J1(ka)/(ka·J0(ka)) of a long cylinder in an axial field.

    Parameters
    ----------
    frequency_hz : array_like [shape=(F,)], Hz ≥ 0
    radius : float, m
    conductivity : float, S/m
    relative_permeability : float

    Returns
    -------
    np.ndarray [shape=(F,)], complex (μ' − jμ'')
    """
    ka = np.atleast_1d(_k(frequency_hz, conductivity, relative_permeability) * radius).astype(complex)
    out = np.full(ka.shape, complex(relative_permeability))
    small = np.abs(ka) < 1e-4
    x2 = ka[small] ** 2  # series: 2J1(x)/(xJ0(x)) = 1 + x²/8 + x⁴/48 + …
    out[small] = relative_permeability * (1 + x2 / 8 + x2 * x2 / 48)
    big = ~small
    # exponentially scaled Bessel functions: their ratio is unscaled, and nothing overflows
    out[big] = relative_permeability * 2 * jve(1, ka[big]) / (ka[big] * jve(0, ka[big]))
    return out


def slab_permeability(frequency_hz, *, half_thickness: float, conductivity: float, relative_permeability: float) -> np.ndarray:
    """Effective relative permeability μr·tanh(kb)/(kb) of a wide slab in a field along its face."""
    # the slab's profile is cosh(γx) with γ² = jωσμ = −k²
    kb = np.atleast_1d(1j * _k(frequency_hz, conductivity, relative_permeability) * half_thickness).astype(complex)
    out = np.full(kb.shape, complex(relative_permeability))
    small = np.abs(kb) < 1e-4
    x2 = kb[small] ** 2  # tanh(x)/x = 1 − x²/3 + 2x⁴/15 − …
    out[small] = relative_permeability * (1 - x2 / 3 + 2 * x2 * x2 / 15)
    out[~small] = relative_permeability * np.tanh(kb[~small]) / kb[~small]
    return out


def apparent_permeability(mu_eff, demagnetising_factor: float):
    """Eq. (1): μ_eff / (1 + D·(μ_eff − 1)), D in [0, 1]."""
    return mu_eff / (1.0 + demagnetising_factor * (mu_eff - 1.0))


PRISM_RATIO_MOST = 1e4  # the longest side over the shortest that prism_demagnetising_factor accepts


def prism_demagnetising_factor(a: float, b: float, c: float) -> float:
    """Magnetometric demagnetising factor along c of a rectangular prism of sides a × b × c (m).

    Aharoni, J. Appl. Phys. 83(6), 3432 (1998), eq. (1), for the prism
    2a' × 2b' × 2c' with the field along c'.

    Its terms cancel as the prism grows slender: in double precision the
    relative error is below 1e-7 up to a side ratio of 1000 and 4e-5 at
    10⁴ (measured by hand against a 60-digit evaluation of the same
    formula; no test holds these), so a ratio past :data:`PRISM_RATIO_MOST`
    is refused (a pickup's parts stay below about 100).
    """
    sides = (a, b, c)
    if not all(math.isfinite(v) and v > 0 for v in sides):
        raise InputError(f"prism sides {a!r} × {b!r} × {c!r} m: each must be a positive, finite length")
    if max(sides) / min(sides) > PRISM_RATIO_MOST:
        raise InputError(
            f"prism sides {a!r} × {b!r} × {c!r} m: a side ratio above {PRISM_RATIO_MOST:g} is past the closed form's precision; give a part at most {PRISM_RATIO_MOST:g} times longer than thick"
        )
    a, b, c = a / 2.0, b / 2.0, c / 2.0
    abc = math.sqrt(a * a + b * b + c * c)
    ab, bc, ac = math.hypot(a, b), math.hypot(b, c), math.hypot(a, c)
    pi_d = (
        (b * b - c * c) / (2 * b * c) * math.log((abc - a) / (abc + a))
        + (a * a - c * c) / (2 * a * c) * math.log((abc - b) / (abc + b))
        + b / (2 * c) * math.log((ab + a) / (ab - a))
        + a / (2 * c) * math.log((ab + b) / (ab - b))
        + c / (2 * a) * math.log((bc - b) / (bc + b))
        + c / (2 * b) * math.log((ac - a) / (ac + a))
        + 2 * math.atan(a * b / (c * abc))
        + (a**3 + b**3 - 2 * c**3) / (3 * a * b * c)
        + (a * a + b * b - 2 * c * c) / (3 * a * b * c) * abc
        + c / (a * b) * (ac + bc)
        - (ab**3 + bc**3 + ac**3) / (3 * a * b * c)
    )
    return pi_d / math.pi


@dataclass(frozen=True)
class CorePart:
    """One conducting core part inside a coil.

    Attributes
    ----------
    shape : str
        ``"slab"`` (a blade or bar: ``size`` is its thickness across the
        flux) or ``"cylinder"`` (a slug or rod: ``size`` is its diameter).
    size : float, m
    material : Material
    fill : float, in [0, 1]
        Share of the coil's air-core flux linkage the part carries, eq. (2)
        (above 1 a weakly magnetic conductor's impedance would reach a
        negative inductance at high frequency, which no passive ladder fits).
    demagnetising_factor : float, in [0, 1)
        Along the coil's axis (0: a closed or very long core).
    """

    shape: str
    size: float
    material: Material
    fill: float
    demagnetising_factor: float = 0.0

    def __post_init__(self):
        if self.shape not in ("slab", "cylinder"):
            raise InputError(f"core part shape={self.shape!r}: must be 'slab' or 'cylinder'")
        if not self.size > 0:
            raise InputError(f"core part size={self.size!r} m: must be > 0 (thickness of a slab, diameter of a cylinder)")
        if not 0.0 <= self.fill <= 1.0:
            raise InputError(f"core part fill={self.fill!r}: must be from 0 to 1 (the share of the coil's flux in the part)")
        if not 0.0 <= self.demagnetising_factor < 1.0:
            raise InputError(f"core part demagnetising_factor={self.demagnetising_factor!r}: must be in [0, 1)")

    def permeability(self, frequency_hz) -> np.ndarray:
        """μ_app(jω) of the part, eq. (1), shape (F,)."""
        m = self.material
        if self.shape == "slab":
            mu = slab_permeability(frequency_hz, half_thickness=self.size / 2, conductivity=m.conductivity, relative_permeability=m.relative_permeability)
        else:
            mu = cylinder_permeability(frequency_hz, radius=self.size / 2, conductivity=m.conductivity, relative_permeability=m.relative_permeability)
        return apparent_permeability(mu, self.demagnetising_factor)


def core_impedance(frequency_hz, *, air_inductance: float, parts) -> np.ndarray:
    """Z_core(jω) in Ω, eq. (2) summed over ``parts`` (CorePart), shape (F,).

    The coil's whole impedance is R_dc + jω·L_air + Z_core (winding capacitance apart).
    """
    f = np.atleast_1d(np.asarray(frequency_hz, float))
    jw = 2j * np.pi * f
    z = np.zeros(f.shape, complex)
    for p in parts:
        z += jw * air_inductance * p.fill * (p.permeability(f) - 1.0)
    return z


def dc_inductance(*, air_inductance: float, parts) -> float:
    """L_dc = L_air·(1 + Σ fill·(μ_app(0) − 1)) in H."""
    return air_inductance * (1.0 + sum(p.fill * (apparent_permeability(p.material.relative_permeability, p.demagnetising_factor) - 1.0) for p in parts))


def fill_for(*, dc_inductance: float, air_inductance: float, material: Material, demagnetising_factor: float = 0.0) -> float:
    """The ``fill`` that makes one part raise ``air_inductance`` to ``dc_inductance`` (H)."""
    rise = apparent_permeability(material.relative_permeability, demagnetising_factor) - 1.0
    if rise <= 0 or dc_inductance < air_inductance:
        raise InputError(f"dc_inductance={dc_inductance!r} H below air_inductance={air_inductance!r} H, or a non-magnetic part: no fill gives that rise")
    return (dc_inductance / air_inductance - 1.0) / rise
