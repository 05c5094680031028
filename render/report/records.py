"""The JSON record of a render: everything it used and measured, no times, no absolute paths."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from .. import __version__
from ..design import design_to_dict
from ..design.provenance import design_provenance

if TYPE_CHECKING:
    from ..clip import Clip, RenderSettings
    from ..design import Design


def measurements(design: Design, figures: dict, stats: dict, *, volts_full_scale: float) -> dict:
    """The measurements recorded in a clip's JSON: the design's figures and the render's.

    A figure with no finite value is None with a sibling ``<key>_reason`` (:mod:`render.analysis.undefined`).
    """
    from ..analysis import undefined as U
    from ..analysis.loudness import gated_loudness
    from ..clip import LOUDNESS_BLOCKS

    f, d = figures, design
    lufs_1v = stats["loudness_lufs_1v_full_scale"]
    out: dict = {}
    for key in ("resonance_hz", "resonance_db", "q", "level_1k_db", "gain_vs_passive_db", "hum_rejection_db"):
        U.put(out, key, f[key], U.reason(f, key))
    out["peaks"] = list(f.get("peaks") or [])  # every listed peak, highest first (the table's "peaks" column)
    out.update({"bias_v": d.bias_v, "headroom_up_v": d.headroom_up_v, "headroom_down_v": d.headroom_down_v})
    out.update({k: v for k, v in stats.items() if k not in ("loudness_lufs_1v_full_scale", LOUDNESS_BLOCKS)})
    # ITU-R BS.1770-4 integrated loudness of the WAV as written (its blocks gated at that scale: eq. 5's
    # absolute gate does not move with the scale), and re a 1 V full scale
    U.put(out, "loudness_lufs", gated_loudness(stats[LOUDNESS_BLOCKS], gain_db=-20 * np.log10(volts_full_scale)), U.SILENT)
    U.put(out, "loudness_lufs_1v_full_scale", lufs_1v, U.SILENT)
    return out


def clip_record(clip: Clip, *, settings: RenderSettings, volts_full_scale: float, rig_record: dict, dry_path) -> dict:
    """Everything a render used and measured, JSON-ready (no times, no absolute paths)."""
    stats = clip.stats
    return make_record(
        clip.design, clip.figures, stats, dry=clip.dry, samples=clip.volts.size, warnings=clip.warnings, settings=settings, volts_full_scale=volts_full_scale, rig_record=rig_record, dry_path=dry_path
    )


def make_record(d: Design, figures: dict, stats: dict, *, dry: dict, samples: int, warnings, settings: RenderSettings, volts_full_scale: float, rig_record: dict, dry_path: Any) -> dict:
    """The JSON record of one render from its parts."""
    design_info = design_to_dict(d)
    return {
        "design": d.name,
        "design_file": d.source,
        **design_provenance(d),
        "design_values": design_info,
        "sample_rate": settings.sample_rate,
        "volts_full_scale": volts_full_scale,
        "seconds": samples / settings.sample_rate,
        "dry": {"file": str(dry_path), **dry},
        "rig": rig_record,
        "hum": design_info["hum"] if settings.hum else None,
        "seed": settings.seed,
        "settings": settings.record(),
        "software_version": __version__,
        "measurements": measurements(d, figures, stats, volts_full_scale=volts_full_scale),
        "figures": {k: v for k, v in figures.items() if k != "passive"},
        "passive_figures": figures.get("passive"),
        "warnings": list(warnings),
    }
