"""The note that a recorded input stays linear through a construction: once, in summary.md and on the console."""

from __future__ import annotations

from render.report.clips import pickup_notes, summary_markdown

NOTE = "recorded input: linear (one velocity at the derived sensitivity); the construction's two polarisations and nonlinearity apply to phrases only"


def _rec(name, dry):
    return {"design": name, "dry": dry, "measurements": {}}


def test_the_note_names_the_constructed_designs_once(monkeypatch):
    monkeypatch.setattr("render.report.clips.measurement_cells", lambda m: ("-",))
    recs = [_rec("a", {"kind": "recorded", "pickup": NOTE}), _rec("b", {"kind": "recorded"}), _rec("c", {"kind": "recorded", "pickup": NOTE})]
    assert pickup_notes(recs) == [f"a, c: {NOTE}"]
    text = summary_markdown(recs, dry="x.wav", rig="default", settings={"sample_rate": 48000, "seed": 0, "hum": True, "noise": False}, volts_full_scale=1.0)
    assert text.count(NOTE) == 1


def test_no_note_for_phrases_or_designs_without_a_construction():
    assert pickup_notes([_rec("a", {"kind": "phrase", "pickup": "sensed"}), _rec("b", {"kind": "recorded"})]) == []
