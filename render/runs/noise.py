"""``render noise`` as a run: the noise floor, hum and noise on one scale, and a passive comparison pickup beside them."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

from ..analysis.noise import REFERENCE_VELOCITY, T_DEFAULT

if TYPE_CHECKING:
    from ..analysis.comparison import Comparison
    from ..analysis.noise import NoiseReport
    from ..analysis.one_scale import OneScale
    from ..design import Design


@dataclass(frozen=True)
class NoiseRun:
    """What :func:`noise_run` measured (and drew).

    Attributes
    ----------
    design : Design
        The design as measured (its rig applied).
    report : NoiseReport
        Its noise floor and its passive reference's (:func:`render.noise`).
    scales : tuple of OneScale
        Hum and noise on one scale, V rms at the amp input (:mod:`render.analysis.one_scale`): the design's,
        its passive reference's, and the comparison pickup's when there is one.
    compare : Comparison or None
        The passive comparison pickup's figures (:func:`render.analysis.comparison.comparison`), when one was given.
    record : dict
        What ``render noise --json`` writes: the report's figures, ``hum_and_noise`` (one entry per scale)
        and ``compare`` (with a comparison pickup).
    """

    design: Design
    report: NoiseReport
    scales: tuple[OneScale, ...]
    compare: Comparison | None
    record: dict


def noise_run(design, *, rig=None, temperature_k: float = T_DEFAULT, reference_velocity: float = REFERENCE_VELOCITY, compare=None, png=None, top: int = 5, overwrite: bool = False) -> NoiseRun:
    """The whole of ``render noise``: the noise floor of ``design``, hum and noise on one scale, and a comparison pickup's.

    Parameters
    ----------
    design : Design
    rig : RigFile or None
        Play into this rig instead of the design's own (recorded in the record's ``rig``).
    temperature_k : float, K, 200..400
        Temperature of every resistance.
    reference_velocity : float, m/s rms
        String velocity of the 1 kHz reference sine the SNRs and the signal-to-hum figures are relative to.
    compare : PassiveDesign or None
        A passive comparison pickup (``--compare``), played into ``rig``'s cable and amplifier when there is one.
    png : str or Path or None
        Also draw the density, the ``top`` largest contributors and the passive reference here.
    top : int, ≥ 1
        Contributors drawn in ``png``.
    overwrite : bool
        Replace ``png`` if it exists (else refused before any work).

    Returns
    -------
    NoiseRun
    """
    from .. import arguments as A
    from ..analysis.comparison import comparison
    from ..analysis.noise import noise, noise_record
    from ..analysis.one_scale import design_one_scale
    from ..design import apply_rig
    from ..io.folders import refuse_existing

    top, overwrite = A.whole("top", top, lo=1, hi=40), A.flag("overwrite", overwrite)
    refuse_existing([png], overwrite=overwrite, argument="png")
    report = noise(design, rig=rig, temperature_k=temperature_k, reference_velocity=reference_velocity)
    d = apply_rig(design, rig)
    compared = None if compare is None else comparison(compare.with_rig(rig), temperature=temperature_k, reference_velocity=reference_velocity)
    scales = (*design_one_scale(d, temperature=temperature_k, reference_velocity=reference_velocity), *([compared.scale] if compared else []))
    record = {**noise_record(report, d, rig), "hum_and_noise": [s.as_dict() for s in scales], **({"compare": compared.as_dict()} if compared else {})}
    if png:
        from ..report.plots import noise_plot

        noise_plot(png, report, top=top, overwrite=overwrite)
    return NoiseRun(design=d, report=report, scales=scales, compare=compared, record=record)
