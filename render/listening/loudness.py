"""Loudness matching with a true-peak ceiling.

Integrated loudness and true peak are ITU-R BS.1770-4
(:mod:`render.analysis.loudness`); the default target is EBU R 128's
−23 LUFS.

Every signal gets the gain that brings it to the target. If any would then
pass the ceiling, every signal is lowered by the same amount, so they stay
matched to each other; the amount is recorded. The measured true peaks are
held :data:`~render.analysis.loudness.TRUE_PEAK_MARGIN_DB` under the ceiling
(:func:`~render.analysis.loudness.ceiling_gains`), the rule every
loudness-matched copy follows: the 4x meter can miss up to 0.688 dB between
its points, and the clips' dither and float32 rounding add a little.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..analysis.loudness import TRUE_PEAK_CEILING_DBTP, ceiling_gains, ceiling_record, integrated_loudness, true_peak_dbtp
from ..errors import InputError


@dataclass(frozen=True)
class LoudnessMatch:
    """The outcome of :func:`match_loudness` (one entry per signal in each tuple)."""

    gains_db: tuple[float, ...]  # applied gain, dB re the input's scale
    measured_lufs: tuple[float, ...]  # before the gain
    true_peak_dbtp: tuple[float, ...]  # before the gain
    final_lufs: tuple[float, ...]  # after the gain (measured again)
    final_true_peak_dbtp: tuple[float, ...]
    target_lufs: float
    ceiling_dbtp: float
    lowered_db: float  # how far all were lowered below the target to keep the true peaks at the aim, the margin under the ceiling

    @property
    def aim_dbtp(self) -> float:
        """The highest true peak (dBTP, as the 4x meter reads it) the gains allow: the ceiling less the margin."""
        from ..analysis.loudness import true_peak_aim

        return true_peak_aim(self.ceiling_dbtp)

    def record(self) -> dict:
        return {
            "method": "ITU-R BS.1770-4 integrated loudness; true peak by 4x oversampling",
            "target_lufs": self.target_lufs,
            **ceiling_record(self.ceiling_dbtp),
            "lowered_db": self.lowered_db,
            "measured_lufs": list(self.measured_lufs),
            "true_peak_dbtp": list(self.true_peak_dbtp),
            "gains_db": list(self.gains_db),
            "final_lufs": list(self.final_lufs),
            "final_true_peak_dbtp": list(self.final_true_peak_dbtp),
        }


def match_loudness(signals, *, sample_rate: int, target_lufs: float = -23.0, ceiling_dbtp: float = TRUE_PEAK_CEILING_DBTP, names=None):
    """Scale each signal to ``target_lufs``, all lowered together below ``ceiling_dbtp`` if needed.

    Parameters
    ----------
    signals : sequence of np.ndarray, each shape (n,)
    names : labels for messages (default "signal 0", "signal 1", ...)

    Returns
    -------
    (scaled signals as float64 arrays, LoudnessMatch)

    Raises
    ------
    InputError
        A signal too short to measure (under one 400 ms block), silent, or not finite.
    """
    names = list(names) if names is not None else [f"signal {i}" for i in range(len(signals))]
    xs = [np.asarray(s, float) for s in signals]
    measured, peaks = [], []
    for name, x in zip(names, xs):
        if not np.all(np.isfinite(x)):
            raise InputError(f"{name}: the render holds NaN or infinite samples; check the design with `render check`")
        lufs = integrated_loudness(x, sample_rate=sample_rate)
        if lufs is None and x.size < round(0.4 * sample_rate):
            raise InputError(f"{name}: no loudness: the render is shorter than one 400 ms block; render a longer clip")
        if lufs is None:
            raise InputError(
                f"{name}: no loudness: the render is silent (under BS.1770-4's -70 LUFS gate): no string signal reaches the output;"
                " `render check` the design (coils that cancel each other: check signal_polarity; the rig's volume at 0) or use a dry signal that plays"
            )
        measured.append(lufs)
        peaks.append(true_peak_dbtp(x))
    some, lowered = ceiling_gains(measured, peaks, target_lufs=target_lufs, ceiling_dbtp=ceiling_dbtp)
    gains = [float(g) for g in some]  # every signal here has a loudness
    out = [x * 10.0 ** (g / 20.0) for x, g in zip(xs, gains)]
    final = [integrated_loudness(y, sample_rate=sample_rate) for y in out]
    match = LoudnessMatch(
        gains_db=tuple(gains),
        measured_lufs=tuple(measured),
        true_peak_dbtp=tuple(peaks),
        final_lufs=tuple(float(v) for v in final),  # type: ignore[arg-type]  # every matched clip is loud enough to measure
        final_true_peak_dbtp=tuple(p + g for p, g in zip(peaks, gains)),
        target_lufs=float(target_lufs),
        ceiling_dbtp=float(ceiling_dbtp),
        lowered_db=float(lowered),
    )
    return out, match
