"""Hum: induced EMF, the rejection metric, the Monte Carlo and `render hum`."""

import json
import re
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from render.analysis.hum import field_derivative, hum_table, hum_tolerances
from render.cli import main
from render.design import Hum, load_design

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"


def test_induced_emf_faraday():
    # Faraday's law: peak EMF = N·A·2πf·B; 5000 turns × 5 cm² = 2.5 m², 1 µT:
    # 0.785 mV at 50 Hz, 0.942 mV at 60 Hz (computed by hand)
    for mains, expected in ((50.0, 0.785e-3), (60.0, 0.942e-3)):
        f, dbdt = field_derivative(Hum(mains=mains, field=1e-6, harmonics=(1.0,)))
        assert 2.5 * dbdt[0] == pytest.approx(expected, abs=0.0005e-3)
    # a field harmonic h is multiplied by h in the EMF: a 5 % H3 becomes 15 %
    f, dbdt = field_derivative(Hum(mains=50.0, field=1e-6, harmonics=(1.0, 0.0, 0.05)))
    assert dbdt[2] / dbdt[0] == pytest.approx(0.15, rel=1e-12)


def _symmetric():
    """The reference without its feedback capacitor: both sides of the stage identical."""
    d = load_design(REF)
    return replace(d, feedback=replace(d.feedback, c=None))


def test_five_percent_amplitude_mismatch_gives_26_db():
    # arithmetic: V_B = -0.95·V_A through identical paths -> 20·log10(1/0.05) = 26.02 dB
    d = _symmetric()
    d = replace(d, coil_b=replace(d.coil_b, turns_area=d.coil_b.turns_area * 0.95))
    t = hum_table(d)
    for row in t["harmonics"]:
        assert row["rejection_db"] == pytest.approx(26.02, abs=0.01)


def test_identical_sides_cancel_exactly_and_say_so():
    # identical sides: V_A = -V_B to rounding, so the rejection max(|V_A|,|V_B|)/|V_A + V_B| is
    # infinite (arithmetic): null with its reason, zero hum, and no signal-to-hum ratio
    t = hum_table(_symmetric())
    for row in t["harmonics"]:
        assert row["rejection_db"] is None and row["rejection_db_reason"] == "infinite: the coils' hum cancels exactly"
        assert row["output_v"] == 0.0 and row["coil_a_v"] > 0
    assert t["total_v_rms"] == 0.0
    assert t["note_to_hum_db"] is None and t["note_to_hum_db_reason"] == "no hum: the coils cancel exactly"


def test_monte_carlo_is_seeded_and_chunk_invariant():
    d = load_design(REF)
    a = hum_tolerances(d, trials=300, seed=7, chunk=300)
    b = hum_tolerances(d, trials=300, seed=7, chunk=64)
    np.testing.assert_array_equal(a.rejection_db, b.rejection_db)
    c = hum_tolerances(d, trials=300, seed=8)
    assert not np.array_equal(a.rejection_db, c.rejection_db)
    # tolerances only ever cost rejection from a near-balanced start (common practice, no source)
    assert np.median(a.rejection_db[:, 0]) < hum_table(d)["harmonics"][0]["rejection_db"]


def test_tighter_tolerances_give_more_rejection():
    # the worst-case CMRR of a difference amplifier scales as (1+K)/(4t)
    # (Pallás-Areny & Webster, IEEE Trans. Instrum. Meas. 40(4), 1991): a tenth of
    # the tolerance is worth about 20 dB
    d = load_design(REF)
    loose = hum_tolerances(d, tolerances={"resistor": 0.01, "capacitor": 0.01, "turns": 0.01}, trials=400, seed=1)
    tight = hum_tolerances(d, tolerances={"resistor": 0.001, "capacitor": 0.001, "turns": 0.001}, trials=400, seed=1)
    gain = np.median(tight.rejection_db[:, 0]) - np.median(loose.rejection_db[:, 0])
    assert 12 < gain < 28, gain


def test_hum_cli_table_json_plots(tmp_path):
    out = tmp_path / "h.json"
    png = tmp_path / "h.png"
    hist = tmp_path / "hist.png"
    res = CliRunner().invoke(main, ["hum", str(ROOT / "models" / "odd-pair.toml"), "--tolerance", "1%", "--trials", "200", "--json", str(out), "--png", str(png), "--histogram", str(hist)])
    assert res.exit_code == 0, res.output
    data = json.loads(out.read_text())
    assert data["mains_hz"] == 50.0
    row = data["harmonics"][0]
    assert set(row) >= {"harmonic", "frequency_hz", "rejection_db", "output_v"}
    # rejection_db = 20·log10(max(|V_A|,|V_B|)/|V_A+V_B|), checked from the reported magnitudes:
    # the sum's magnitude lies between the difference and the sum of the two
    big = max(row["coil_a_v"], row["coil_b_v"])
    assert abs(row["coil_a_v"] - row["coil_b_v"]) <= row["output_v"] * (1 + 1e-9)
    assert row["rejection_db"] == pytest.approx(20 * np.log10(big / row["output_v"]), abs=1e-9)
    assert data["monte_carlo"]["trials"] == 200
    assert png.read_bytes()[:4] == b"\x89PNG" and hist.read_bytes()[:4] == b"\x89PNG"


@pytest.mark.parametrize(
    "args,fragment",
    [
        (["--tolerance", "lots"], "--tolerance='lots': expected a percentage"),
        (["--tolerance", "80%"], "a tolerance must be from 0 % to 50 %"),
        (["--histogram", "x.png"], "--histogram needs a Monte Carlo"),
    ],
)
def test_hum_cli_refusals(tmp_path, args, fragment):
    res = CliRunner().invoke(main, ["hum", str(REF), *args])
    assert res.exit_code == 1 and fragment in res.output


def test_time_domain_hum_render_agrees_with_the_exact_rejection(tmp_path):
    # the rejection measured from hum-only renders (dB/dt through the digital filters)
    # must agree with the engine's exact figure within 0.01 dB at every harmonic, as the README
    # states (measured when tightened: 0.0010 dB at most, in each of the three designs)
    from render.analysis.hum import measured_rejection

    for name in ("odd-pair", "split-voice", "studio-reference"):
        d = load_design(ROOT / "models" / f"{name}.toml")
        exact = np.array([r["rejection_db"] for r in hum_table(d)["harmonics"]])
        m = measured_rejection(d, seconds=2.0, settle=1.0)
        assert np.max(np.abs(m["rejection_db"] - exact)) < 0.01, name


def test_hum_cli_writes_hum_only_wavs(tmp_path):
    import soundfile as sf

    out = tmp_path / "hum"
    res = CliRunner().invoke(main, ["hum", str(ROOT / "models" / "odd-pair.toml"), "--out", str(out), "--json", str(tmp_path / "h.json")])
    assert res.exit_code == 0, res.output
    waves = {k: sf.read(out / f"odd-pair-{k}.wav")[0] for k in ("hum", "hum-coil_a", "hum-coil_b")}
    # each coil alone hums far louder than the pair: the cancellation you can hear
    rms = {k: np.sqrt(np.mean(v[48000:] ** 2)) for k, v in waves.items()}
    assert rms["hum-coil_a"] > 10 * rms["hum"] and rms["hum-coil_b"] > 10 * rms["hum"]
    data = json.loads((tmp_path / "h.json").read_text())
    assert abs(data["measured"]["harmonics"][0]["rejection_db"] - data["harmonics"][0]["rejection_db"]) < 0.5


def test_monte_carlo_in_processes_equals_serial():
    d = load_design(ROOT / "models" / "odd-pair.toml")
    a = hum_tolerances(d, trials=400, seed=3, chunk=100)
    b = hum_tolerances(d, trials=400, seed=3, chunk=100, jobs=2)
    np.testing.assert_array_equal(a.rejection_db, b.rejection_db)


def test_monte_carlo_names_a_harmonic_the_field_lacks_and_measures_at_the_lowest_one_it_has():
    # a field with no fundamental (harmonics 0, 1, 0.3): its 50 Hz has no rejection in any draw, in words; the
    # sensitivities move to 100 Hz. The rejection is a ratio of the two coils' hum, so it does not depend on the
    # field's amplitude (the definition): the draws at 100 Hz and the sensitivities there equal those of the full
    # field (1, 1, 0.3), draw for draw, and the nominal 100 Hz rejection is 20·log10(1/0.05) = 26.02 dB (arithmetic)
    from render.analysis import undefined as U
    from render.analysis.hum import sensitivities

    d = _symmetric()
    d = replace(d, coil_b=replace(d.coil_b, turns_area=d.coil_b.turns_area * 0.95), hum=replace(d.hum, harmonics=(0.0, 1.0, 0.3)))
    mc = hum_tolerances(d, trials=50, seed=0)
    first = mc.summary()[0]
    assert first["median_db"] is None and first["median_db_reason"] == U.NO_FIELD and first["p5_db"] is None
    assert mc.sensitivity_at == 1 and mc.as_dict()["sensitivity_frequency_hz"] == 100.0
    full = replace(d, hum=replace(d.hum, harmonics=(1.0, 1.0, 0.3)))
    np.testing.assert_array_equal(mc.rejection_db[:, 1:], hum_tolerances(full, trials=50, seed=0).rejection_db[:, 1:])
    assert mc.sensitivity == sensitivities(full, mc.frequency_hz, harmonic=1)
    assert all(isinstance(v, float) and np.isfinite(v) for _, v in mc.sensitivity)
    assert hum_table(d)["harmonics"][1]["rejection_db"] == pytest.approx(26.02, abs=0.01)


def test_a_source_without_a_fundamental_prints_words_not_nan(tmp_path):
    # a dipole source whose own profile lacks the fundamental: no coil links it at 50 Hz, so no draw has a
    # rejection there (0/0); the table, the Monte Carlo and the sensitivities say so in words
    rig = tmp_path / "rig.toml"
    rig.write_text('[hum]\nmains = "50Hz"\nharmonics = [0.0, 1.0, 0.3]\n\n[[hum.source]]\nkind = "dipole"\nmoment = 0.05\nat = ["0.5m", "0m", "0m"]\naxis = [0, 0, 1]\n')
    out = tmp_path / "h.json"
    res = CliRunner().invoke(main, ["hum", str(ROOT / "models" / "slipway-steel-blades.toml"), "--rig", str(rig), "--tolerance", "1%", "--trials", "20", "--json", str(out)])
    assert res.exit_code == 0, res.output
    assert not re.search(r"\bnan\b", res.output) and "at 100 Hz, the lowest harmonic with hum" in res.output
    mc = json.loads(out.read_text())["monte_carlo"]
    assert mc["harmonics"][0]["median_db"] is None and "no source has this harmonic" in mc["harmonics"][0]["median_db_reason"]
    assert all(isinstance(s["db"], float) for s in mc["sensitivity_db_per_percent"])


def test_the_wav_check_names_a_harmonic_the_room_lacks(tmp_path):
    # a field with no 2nd harmonic: the hum-only WAV holds only rounding there, so its measured rejection is the
    # room's reason in words, not a ratio of rounding (the exact table says the same)
    from render.analysis import undefined as U
    from render.runs.hum import write_hum_audio

    d = load_design(ROOT / "models" / "odd-pair.toml")
    d = replace(d, hum=replace(d.hum, harmonics=(1.0, 0.0, 0.3)))
    audio = write_hum_audio(tmp_path, d, seconds=2.0)
    second = audio.harmonics[1]
    assert second["rejection_db"] is None and second["rejection_db_reason"] == U.NO_FIELD
    assert audio.harmonics[0]["rejection_db"] is not None


def test_each_sources_share_says_no_hum_in_words(tmp_path):
    # a uniform source along x links neither coil (their axes are along z): its own rows read "no hum", not a dash
    rig = tmp_path / "rig.toml"
    rig.write_text(
        '[hum]\nmains = "50Hz"\n\n[[hum.source]]\nkind = "dipole"\nmoment = 0.05\nat = ["0.5m", "0m", "0m"]\naxis = [0, 0, 1]\n\n[[hum.source]]\nkind = "uniform"\nfield = "1uT"\naxis = [1, 0, 0]\n'
    )
    res = CliRunner().invoke(main, ["hum", str(ROOT / "models" / "bobbins" / "studio-bobbin.toml"), "--rig", str(rig)])
    assert res.exit_code == 0, res.output
    assert "—" not in res.output and "no hum" in res.output
