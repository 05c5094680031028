"""A passive comparison pickup's figures: response, noise, hum, on the same definitions as the designs'.

The pickup (:class:`render.design.passive.PassiveDesign`) is evaluated as the
passive reference of its carrier design (:func:`render.design.passive.carrier`),
so every figure here comes from the same engine, the same figure
definitions (:mod:`render.analysis.figures`) and the same noise and hum
models as the designs it is compared with. Pure: designs in, a frozen
result out.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..design.passive import PassiveDesign, carrier
from . import undefined as U
from .noise import REFERENCE_VELOCITY, T_DEFAULT, NoiseFloor
from .one_scale import OneScale, one_scale, passive_hum_peaks


@dataclass(frozen=True)
class Comparison:
    """A passive pickup's figures.

    Attributes
    ----------
    design : PassiveDesign
    figures : dict
        level_1k_db (dB re 1 V per m/s), peak_hz, peak_db (re 1 kHz), q,
        bass_corner_hz, treble_corner_hz, cable_loss_db, output_impedance_1k_ohm,
        output_impedance_10k_ohm, hum_rejection_db (at the mains fundamental, or the lowest harmonic with hum) and hum_rejection_harmonic;
        None with a ``_reason`` beside it where undefined.
    hum_frequency_hz : np.ndarray [shape=(K,)], Hz
    hum_peak_v : np.ndarray [shape=(K,)], V peak at the amp input, per mains harmonic
    noise : NoiseFloor
    scale : OneScale
        Hum and noise on one scale (:mod:`render.analysis.one_scale`).
    """

    design: PassiveDesign
    figures: dict
    hum_frequency_hz: np.ndarray
    hum_peak_v: np.ndarray
    noise: NoiseFloor
    scale: OneScale

    def __post_init__(self) -> None:
        from ..readonly import lock_arrays

        lock_arrays(self)

    def as_dict(self) -> dict:
        return {
            "file": self.design.source,
            "design": self.design.name,
            "kind": "passive",
            **self.figures,
            "hum": [{"harmonic": i + 1, "frequency_hz": float(f), "output_v_peak": float(v)} for i, (f, v) in enumerate(zip(self.hum_frequency_hz, self.hum_peak_v))],
            "noise": {k: v for k, v in self.noise.as_dict().items() if k not in ("frequency_hz", "density_v_per_rthz")},
            "hum_and_noise": self.scale.as_dict(),
        }


def compare_response(p: PassiveDesign, frequency_hz) -> np.ndarray:
    """String velocity (at both sensing points) to the amp input, V per m/s, complex, shape (F,)."""
    from ..circuit.engine import design_responses

    f = np.atleast_1d(np.asarray(frequency_hz, float))
    return design_responses([carrier(p)]).passive_velocity()(f)[0]


def comparison_figures(p: PassiveDesign, resp=None) -> dict:
    """The passive pickup's response figures and its hum rejection (:attr:`Comparison.figures`); ``resp``: its carrier's responses, if already computed."""
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from .figures import figures, rejection_db
    from .undefined import REJECTION_CAP_DB

    d = carrier(p)
    if resp is None:
        resp = responses(from_designs([d]))
    fig = dict(figures([d], resp=resp)[0]["passive"])
    from .hum_harmonics import quoted_for

    zero = np.zeros(1)
    k, emf = quoted_for(d)  # the lowest harmonic with hum, as render check quotes a design's
    fig["hum_rejection_harmonic"] = None if k is None else k + 1
    f_k = d.hum.mains * (1 + (k or 0))
    if emf is not None:
        e = emf[:, k or 0]
        va = resp.passive_mix(np.ones(1), zero)(f_k)[0, 0] * e[0]
        vb = resp.passive_mix(zero, np.ones(1))(f_k)[0, 0] * e[1]
    else:
        va = resp.passive_mix(resp.hum_a, zero)(f_k)[0, 0]
        vb = resp.passive_mix(zero, resp.hum_b)(f_k)[0, 0]
    rej = float(rejection_db(va, vb))
    if k is None:  # no harmonic of the room has hum here: nothing to reject
        U.mark(fig, "hum_rejection_db", U.NOTHING_LINKS if d.hum.sources else U.NO_FIELD)
    elif rej >= REJECTION_CAP_DB:
        U.mark(fig, "hum_rejection_db", U.HUM_CANCELS)
    else:
        U.put(fig, "hum_rejection_db", rej, U.HUM_CANCELS)
    return fig


def comparison(p: PassiveDesign, *, temperature: float = T_DEFAULT, reference_velocity: float = REFERENCE_VELOCITY) -> Comparison:
    """Every figure of the passive pickup ``p`` (its rig already applied)."""
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from .noise import noise_reports

    d = carrier(p)
    resp = responses(from_designs([d]))
    fig = comparison_figures(p, resp)
    f, peaks = passive_hum_peaks(d, resp)
    (nr,) = noise_reports([d], temperature=temperature, reference_velocity=reference_velocity)
    floor = nr.passive
    scale = one_scale(
        p.name,
        hum_frequency_hz=f,
        hum_peak_v=peaks,
        noise_v=floor.total_v,
        noise_a_v=floor.a_weighted_v,
        signal_v=0.0 if floor.silent_reason else floor.signal_v,
        reference_velocity=reference_velocity,
        no_signal_reason=floor.silent_reason,
    )
    return Comparison(design=p, figures=fig, hum_frequency_hz=f, hum_peak_v=np.abs(peaks), noise=floor, scale=scale)


def level_against(design_level_1k_db: float | None, c: Comparison) -> float | None:
    """A design's level at 1 kHz minus the comparison pickup's (dB), None when either is undefined."""
    other = c.figures.get("level_1k_db")
    if design_level_1k_db is None or other is None:
        return None
    return float(design_level_1k_db - other)
