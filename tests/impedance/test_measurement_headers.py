"""Meter exports read as what they are: quoted cells, real and imaginary parts, Z_mag/Z_phase and unit-after-slash headers, a mHz/MHz slip.

Reference: a coil's terminal impedance in closed form with numpy, (R + jωL) ∥ 1/(jωC) (series
and parallel impedances, any circuit-theory text), written in each layout to 7 significant
digits and read back; |Z| = √(R² + X²) and ∠Z = atan2(X, R) for real and imaginary parts
(complex numbers' polar form). SI prefixes are case-sensitive (BIPM, *The International System
of Units*, 9th ed., 2019, §3): m is milli, M mega.
"""

import numpy as np
import pytest

from render.errors import InputError
from render.impedance.measurement_csv import parse_measurement

R, L, C = 4100.0, 2.2, 95e-12  # invented demo coil
F = np.geomspace(20.0, 50e3, 12)


def coil(f):
    """(R + jωL) ∥ 1/(jωC)."""
    s = 2j * np.pi * f
    return 1.0 / (1.0 / (R + s * L) + s * C)


Z = coil(F)


def _text(header: str, cells, sep: str = ",") -> str:
    return header + "\n" + "".join(sep.join(c) + "\n" for c in cells)


def _check(m, rel=1e-6):
    np.testing.assert_allclose(m.frequency_hz, F, rtol=rel)
    np.testing.assert_allclose(m.magnitude_ohm, np.abs(Z), rtol=rel)
    np.testing.assert_allclose(m.phase_deg, np.degrees(np.angle(Z)), atol=1e-4)


@pytest.mark.parametrize("sep", [",", ";", "\t"])
def test_quoted_cells_are_read_as_numbers(sep):
    cells = [(f'"{f:.7g}"', f'"{abs(z):.7g}"', f'"{np.degrees(np.angle(z)):.7g}"') for f, z in zip(F, Z)]
    _check(parse_measurement(_text(sep.join(['"frequency_hz"', '"z_ohm"', '"phase_deg"']), cells, sep)))


@pytest.mark.parametrize(
    ("header", "scale"),
    [
        ("freq,real,imag", 1.0),
        ("Freq [Hz],R [Ohm],X [Ohm]", 1.0),
        ("Frequency (Hz),R (kOhm),X (kOhm)", 1e3),
        ("f,Re(Z),Im(Z)", 1.0),
        ("frequency_hz,z_real,z_imag", 1.0),
    ],
)
def test_real_and_imaginary_parts_are_read_as_magnitude_and_phase(header, scale):
    cells = [(f"{f:.7g}", f"{z.real / scale:.7g}", f"{z.imag / scale:.7g}") for f, z in zip(F, Z)]
    _check(parse_measurement(_text(header, cells)), rel=2e-6)


@pytest.mark.parametrize(
    ("header", "f_scale"),
    [("Freq,Z_mag,Z_phase", 1.0), ("Frequency/Hz,Impedance/Ohm,Phase/deg", 1.0), ("Frequency/kHz,|Z|/Ohm,Phase/deg", 1e3)],
)
def test_z_mag_z_phase_and_a_unit_after_a_slash(header, f_scale):
    cells = [(f"{f / f_scale:.7g}", f"{abs(z):.7g}", f"{np.degrees(np.angle(z)):.7g}") for f, z in zip(F, Z)]
    _check(parse_measurement(_text(header, cells)))


def test_a_mhz_header_meant_as_mhz_is_refused_in_one_line_naming_the_case():
    # the values are the sweep in MHz (20 Hz = 2e-5 MHz); "mhz" reads as millihertz, 20 nHz to 50 µHz
    cells = [(f"{f / 1e6:.7g}", f"{abs(z):.7g}", f"{np.degrees(np.angle(z)):.7g}") for f, z in zip(F, Z)]
    with pytest.raises(InputError) as e:
        parse_measurement(_text("freq (mhz),|Z| (ohm),phase", cells), source="m.csv")
    msg = str(e.value)
    assert "\n" not in msg and "wholly below 1 Hz" in msg and "'freq (mhz)'" in msg and "case-sensitive" in msg and "MHz megahertz" in msg
    _check(parse_measurement(_text("freq (MHz),|Z| (ohm),phase", cells)))  # the same cells, SI's MHz


def test_a_sweep_with_neither_magnitude_and_phase_nor_real_and_imaginary_says_both():
    cells = [(f"{f:.7g}", "1", "2") for f in F]
    with pytest.raises(InputError, match="no magnitude column .* or real and imaginary parts"):
        parse_measurement(_text("freq,a,b", cells))
