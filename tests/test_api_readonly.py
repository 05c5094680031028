"""Every public result type hands out read-only arrays, however deep (README, "Using render from Python").

No outside source: this holds the library to the README's claim that the
arrays of a result are read-only (render/readonly.py), by walking one instance
of each public dataclass type through its fields, tuples, lists and dicts.
"""

from __future__ import annotations

import dataclasses
import inspect
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf

import render

ROOT = Path(__file__).resolve().parents[1]
REF = ROOT / "models" / "studio-reference.toml"
PHRASE = ROOT / "dry_signals" / "default.toml"
FIT = ROOT / "models" / "fits" / "brighter-reference.toml"
COIL = ROOT / "models" / "coils" / "harbour-blade-coil.synthetic.csv"


def writable_arrays(obj, where: str, seen: set[int] | None = None) -> list[str]:
    """The places (``where`` and the path from it) of every writable numpy array reachable from ``obj``."""
    seen = set() if seen is None else seen
    if id(obj) in seen:
        return []
    seen.add(id(obj))
    if isinstance(obj, np.ndarray):
        found = [where] if obj.flags.writeable else []
        if obj.dtype == object:
            for i, x in enumerate(obj.flat):
                found += writable_arrays(x, f"{where}.flat[{i}]", seen)
        return found
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return [p for f in dataclasses.fields(obj) for p in writable_arrays(getattr(obj, f.name), f"{where}.{f.name}", seen)]
    if isinstance(obj, (list, tuple)):
        return [p for i, x in enumerate(obj) for p in writable_arrays(x, f"{where}[{i}]", seen)]
    if isinstance(obj, dict):
        return [p for k, x in obj.items() for p in writable_arrays(x, f"{where}[{k!r}]", seen)]
    return []


def test_the_walk_finds_a_writable_array_inside_a_result():
    # the walk itself can fail: a writable array nested in a tuple of dicts is found
    @dataclasses.dataclass
    class Holder:
        rows: tuple

    assert writable_arrays(Holder(rows=({"a": np.zeros(2)},)), "h") == ["h.rows[0]['a']"]


@pytest.fixture(scope="module")
def results(tmp_path_factory) -> dict:
    """One instance of every public dataclass type, made as a script makes it."""
    from render.listening.answers import AnswerLog
    from render.listening.layout import SessionPaths, load_plan

    tmp = tmp_path_factory.mktemp("results")
    d = render.load_design(REF)
    dry = render.synthesize(PHRASE, positions=(0.1, 0.05), apertures=(0.01, 0.01), sample_rate=48000, seconds=0.5)
    made = render.fit_and_render(FIT, out=tmp / "fit", top=1, clips=False)
    di = tmp / "di.wav"
    sf.write(di, 0.01 * np.sin(2 * np.pi * 220 * np.arange(24000) / 48000), 48000, subtype="FLOAT")
    session = render.build_blind_session([d, render.load_design(ROOT / "models" / "glasswing-bright.toml")], None, out=tmp / "blind", settings=render.BlindSettings(trials=2, seconds=1.0))
    paths = SessionPaths(tmp / "blind")
    plan = load_plan(paths)
    with AnswerLog(paths, plan) as log:
        for i in range(len(plan["trials"])):
            log.record({"trial": i, "answer": "A", "comment": ""})
    noise = render.noise(d)
    from render.design.passive import load_passive

    passive = load_passive(ROOT / "models" / "compare" / "workshop-passive.toml")
    hum_run = render.hum_run([d], out=tmp / "hum", tolerances={"resistor": 0.01}, trials=10, rejection_map=True, bearings_deg=(0,), positions=10, compare=passive)
    return {
        "Design": render.load_design(ROOT / "models" / "measured-blade.toml"),  # a measured coil's fit inside
        "RigFile": render.load_rig(ROOT / "rigs" / "near-transformer.toml"),
        "Phrase": render.load_phrase(PHRASE),
        "Dry": dry,
        "Response": render.response(d, [1000.0, 2000.0]),
        "Clip": render.render_clip(d, dry, passive=True),
        "RenderSettings": render.RenderSettings(),
        "HumReport": render.hum(d, sources=[render.DipoleSource(moment=0.05, at=(0.5, 0, 0))]),
        "HumTolerances": render.hum_tolerances(d, trials=10),
        "RejectionMap": render.hum_map(d, distances_m=(0.5,), bearings_deg=(0,)),
        "PositionMonteCarlo": render.hum_positions(d, trials=10, joint=True),
        "CoilGeometry": render.CoilGeometry(turns=5000, length=0.066, width=0.012, window_length=0.056, window_width=0.002, height=0.008),
        "DipoleSource": render.DipoleSource(moment=0.05, at=(0.5, 0, 0)),
        "UniformSource": render.UniformSource(field=1e-6),
        "NoiseReport": noise,
        "NoiseFloor": noise.active,
        "BiasSweep": render.bias_sweep(d, ratios=(0.4, 0.6)),
        "ClipsRun": render.render_clips([REF], PHRASE, settings=render.RenderSettings(seconds=0.5), out=tmp / "clips", plots=False),
        "FitRun": made.fit,
        "FitAndRender": made,
        "UnvoiceResult": render.unvoice(di, d, out=tmp / "v.wav", plot=False),
        "BlindSettings": render.BlindSettings(),
        "BlindSession": session,
        "SessionScore": render.score_blind_session(tmp / "blind"),
        "CoilFit": render.fit_coil(COIL),
        "HumRun": hum_run,
        "HumDesignRun": hum_run.designs[0],
        "NoiseRun": render.noise_run(d, compare=passive),
        "BiasRun": render.bias_run(d, ratios=(0.5,), seconds=0.5, out=tmp / "bias"),
    }


def test_every_public_type_is_walked(results):
    public = {n for n in render.__all__ if inspect.isclass(getattr(render, n, None)) and dataclasses.is_dataclass(getattr(render, n))}
    assert public == set(results)  # a new public type needs an instance here
    for name, obj in results.items():
        assert isinstance(obj, getattr(render, name)), name


def test_no_public_result_holds_a_writable_array(results):
    found = [p for name, obj in results.items() for p in writable_arrays(obj, name)]
    assert not found, f"writable arrays: {found}"
    assert results["FitRun"].results[0].values.size  # the fit's own part values are among those walked
    with pytest.raises(ValueError, match="read-only"):
        results["FitRun"].results[0].values[0] = 1.0
