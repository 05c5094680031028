"""``render coil fit``: a few bad rows named, and no self-resonance claimed for a sweep that shows no C.

Reference: the coil's terminal impedance in closed form with numpy, (R + jωL) ∥ 1/(jωC) (series and
parallel impedances, any circuit-theory text), with 1 % noise on |Z| and 0.01 rad on the phase; a
1 kΩ resistor (|Z| = 1 kΩ, phase 0 at every frequency) has no resonance at all.
"""

import re

import numpy as np
from click.testing import CliRunner

from render.cli import main

R, L, C = 4100.0, 2.2, 95e-12  # invented demo coil


def coil(f):
    s = 2j * np.pi * f
    return 1.0 / (1.0 / (R + s * L) + s * C)


def _write(path, f, z):
    path.write_text("frequency_hz,z_ohm,phase_deg\n" + "".join(f"{a:.7g},{abs(b):.7g},{np.degrees(np.angle(b)):.7g}\n" for a, b in zip(f, z)))
    return path


def _noisy(seed=3, points=200):
    rng = np.random.default_rng(seed)
    f = np.geomspace(20.0, 50e3, points)
    z = coil(f)
    return f, np.abs(z) * (1 + 0.01 * rng.standard_normal(f.size)) * np.exp(1j * (np.angle(z) + 0.01 * rng.standard_normal(f.size)))


def _warnings(path):
    res = CliRunner().invoke(main, ["coil", "fit", str(path)])
    assert res.exit_code == 0, res.output
    return res.stdout, [w for w in res.stderr.splitlines() if w.startswith("warning: ")]


def test_three_bad_rows_are_named_by_row_and_frequency(tmp_path):
    f, z = _noisy()
    bad = [50, 90, 150]  # 0-based; |Z| ten times too high (+20 dB), as a slipped contact or a typing slip
    z[bad] *= 10
    _, warns = _warnings(_write(tmp_path / "m.csv", f, z))
    (line,) = [w for w in warns if w.startswith("warning: the fit is off")]
    assert "3 of 200 points" in line and "columns and units" not in line
    assert re.findall(r"data rows (.*) \(counted", line)[0].count("(") == 3
    for i in bad:
        assert f"{i + 1} (" in line


def test_a_clean_noisy_sweep_names_no_rows_and_a_wrong_unit_blames_the_columns(tmp_path):
    _, warns = _warnings(_write(tmp_path / "ok.csv", *_noisy()))
    assert not any("the fit is off" in w for w in warns)
    f, z = _noisy()
    path = tmp_path / "rad.csv"  # the phase written in radians under a degrees header: every row is off
    path.write_text("frequency_hz,z_ohm,phase_deg\n" + "".join(f"{a:.7g},{abs(b):.7g},{np.angle(b):.7g}\n" for a, b in zip(f, z)))
    _, warns = _warnings(path)
    (line,) = [w for w in warns if w.startswith("warning: the fit is off")]
    assert "columns and units" in line and "data rows" not in line


def test_a_resistor_has_no_self_resonance_and_its_capacitance_in_si(tmp_path):
    f = np.geomspace(20.0, 50e3, 103)
    out, _ = _warnings(_write(tmp_path / "r.csv", f, np.full(f.size, 1000.0 + 0j)))
    srf = [x for x in out.splitlines() if x.strip().startswith("self-resonance")][0]
    assert ("none within the sweep" in srf or "not determined" in srf) and not re.search(r"\d", srf), srf  # words, no number
    cap = [x for x in out.splitlines() if x.strip().startswith("capacitance")][0]
    assert "e-" not in cap and re.search(r"[\d.]+ [fapn]F", cap), cap  # SI, not a raw float
    res = CliRunner().invoke(main, ["coil", "fit", str(tmp_path / "r.csv"), "--json", "-"])
    import json

    rec = json.loads(res.stdout)
    assert rec["self_resonance_hz"] is None and rec["capacitance_determined"] is False and rec["self_resonance_hz_reason"] in srf
