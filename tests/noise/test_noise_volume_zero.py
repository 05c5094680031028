"""``render noise`` with the rig's volume at 0: the absent signal is words in the table and in the JSON, never a number.

The words are render.analysis.undefined's (VOLUME_ZERO, "volume 0" in a cell), as ``render check``
prints them; the rule is the project's (README: "Undefined figures"). The op-amp's own swing is
still a figure: the volume pot follows the op-amp, and a feedback amplifier's output does not
depend on its load (an ideal op-amp's closed-loop output impedance is zero; first principles),
so the reference sine's peak there is the same at volume 0 as at full volume.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from render.analysis.undefined import SHORT, VOLUME_ZERO
from render.cli.noise import noise_command

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"


def _run(tmp_path, *extra):
    js = tmp_path / f"n{len(extra)}.json"
    res = CliRunner().invoke(noise_command, [str(REF), "--json", str(js), *map(str, extra)], catch_exceptions=False)
    assert res.exit_code == 0, res.output
    return res.output, json.loads(js.read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def volume_zero(tmp_path_factory):
    folder = tmp_path_factory.mktemp("v0")
    rig = folder / "rig0.toml"
    rig.write_text("[rig]\nvolume = 0\n", encoding="utf-8")
    return _run(folder, "--rig", rig)


def test_the_table_says_volume_0_where_the_signal_and_snr_would_be(volume_zero):
    text, _ = volume_zero
    rows = {line[2:22].strip(): line[22:].split() for line in text.splitlines() if line.startswith("  ")}
    words = SHORT[VOLUME_ZERO]
    for row in ("reference signal", "SNR", "signal to noise"):  # active and passive reference alike
        assert " ".join(rows[row]) == f"{words} {words}", (row, rows[row])
    assert " ".join(rows["signal to hum"]).startswith(words)  # the active circuit's (the passive one's hum cancels: "no hum")
    assert not any(c.isdigit() for row in ("reference signal", "SNR", "signal to hum", "signal to noise") for c in " ".join(rows[row]).replace(words, ""))
    assert text.count(VOLUME_ZERO) == 1  # the reason once, for both circuits


def test_the_json_writes_null_and_the_reason_for_every_signal_figure(volume_zero):
    _, rec = volume_zero
    ref = rec["reference_signal"]
    for where, key in ((rec, "signal_v_rms"), (rec["passive"], "signal_v_rms"), (ref, "output_v_rms"), (ref, "passive_output_v_rms"), (rec, "snr_db"), (rec, "snr_a_db")):
        assert where[key] is None and where[f"{key}_reason"] == VOLUME_ZERO, key
    for one in rec["hum_and_noise"]:
        assert one["signal_v_rms"] is None and one["signal_v_rms_reason"] == VOLUME_ZERO, one["circuit"]
    assert rec["noise_v_rms"] > 0 and rec["passive"]["noise_v_rms"] > 0  # the noise is there, and a figure


def test_the_opamp_still_swings_at_volume_0(volume_zero, tmp_path):
    _, rec = volume_zero
    _, full = _run(tmp_path)
    assert full["reference_signal"]["output_v_rms"] > 0 and "output_v_rms_reason" not in full["reference_signal"]
    assert rec["reference_signal"]["opamp_output_peak_v"] == pytest.approx(full["reference_signal"]["opamp_output_peak_v"], rel=1e-9)
    assert "opamp_output_peak_v_reason" not in rec["reference_signal"]
