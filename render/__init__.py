"""render: hear and measure an active humbucker voicing before it is built.

The package's face. Everything a script or a notebook needs is importable from
here (loaded on first use, so ``import render`` is quick)::

    import numpy as np
    import render

    design = render.load_design("models/studio-reference.toml")
    r = render.response(design, np.geomspace(20, 20000, 200))
    phrase = render.load_phrase("dry_signals/default.toml")
    dry = render.synthesize(phrase, positions=(design.coil_a.position, design.coil_b.position),
                            apertures=(design.coil_a.aperture, design.coil_b.aperture), sample_rate=48000)
    clip = render.render_clip(design, dry)

Physics lives in pure functions (arrays in, arrays out); files, plots and the
command line live at the edges (:mod:`render.io`, :mod:`render.report`,
:mod:`render.runs`, :mod:`render.cli`). A design is passed as a design file's
path or a loaded :class:`Design`, a rig as ``rig=``: a rig file's path, a
loaded :class:`RigFile` or None (:mod:`render.face`).
"""

from __future__ import annotations

import importlib
import inspect
from typing import Any

__version__ = "0.1.0"

# public name -> the module that defines it under that same name
_HOME = {
    # reading
    "load_design": "render.design",
    "load_designs": "render.design",
    "load_rig": "render.design",
    "Design": "render.design",
    "RigFile": "render.design",
    "with_values": "render.design.vary",
    "load_phrase": "render.dry.phrase",
    "Phrase": "render.dry.phrase",
    "InputError": "render.errors",
    "ArgumentError": "render.errors",
    # what is played
    "Dry": "render.dry",
    "synthesize": "render.dry",
    "load_dry": "render.dry",
    "pickup_for": "render.design.construction",
    # the small-signal engine's figures
    "response": "render.analysis.response",
    "Response": "render.analysis.response",
    "figures": "render.analysis.figures",
    "hum": "render.analysis.hum",
    "HumReport": "render.analysis.hum",
    "hum_tolerances": "render.analysis.hum",
    "HumTolerances": "render.analysis.hum",
    "hum_map": "render.analysis.hum_room",
    "hum_positions": "render.analysis.hum_room",
    "RejectionMap": "render.magnetics.rejection",
    "PositionMonteCarlo": "render.magnetics.rejection",
    # coils and hum sources in space
    "CoilGeometry": "render.magnetics.coil",
    "DipoleSource": "render.magnetics.hum",
    "UniformSource": "render.magnetics.hum",
    "noise": "render.analysis.noise",
    "NoiseReport": "render.analysis.noise",
    "NoiseFloor": "render.analysis.noise",
    "bias_sweep": "render.analysis.bias",
    "BiasSweep": "render.analysis.bias",
    # renders in time
    "render_clip": "render.clip",
    "Clip": "render.clip",
    "RenderSettings": "render.clip",
    # the commands' jobs, files included
    "render_clips": "render.runs.clips",
    "ClipsRun": "render.runs.clips",
    "fit": "render.runs.fit",
    "FitRun": "render.runs.fit",
    "fit_and_render": "render.runs.fit",
    "FitAndRender": "render.runs.fit",
    "unvoice": "render.runs.unvoice",
    "UnvoiceResult": "render.runs.unvoice",
    "build_blind_session": "render.runs.blind",
    "BlindSettings": "render.runs.blind",
    "BlindSession": "render.runs.blind",
    "score_blind_session": "render.runs.score",
    "SessionScore": "render.runs.score",
    "hum_run": "render.runs.hum",
    "HumRun": "render.runs.hum",
    "HumDesignRun": "render.runs.hum",
    "noise_run": "render.runs.noise",
    "NoiseRun": "render.runs.noise",
    "bias_run": "render.runs.bias",
    "BiasRun": "render.runs.bias",
    # a measured coil
    "fit_coil": "render.runs.coil",
    "CoilFit": "render.runs.coil",
}
# the jobs that record the designs they render: a design changed after loading (not with with_values) is refused there
_RECORDING = {"render_clips", "unvoice", "build_blind_session", "hum_run", "noise_run", "bias_run"}

__all__ = sorted(_HOME) + ["__version__"]


def __getattr__(name: str) -> Any:
    if name not in _HOME:
        raise AttributeError(f"module 'render' has no attribute {name!r}")
    value = getattr(importlib.import_module(_HOME[name]), name)
    if inspect.isfunction(value):  # a design as a path or a Design, a rig as a path, a RigFile or None
        from .face import takes_files

        value = takes_files(value, recording=name in _RECORDING)
    globals()[name] = value  # later look-ups skip this function
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_HOME))
