"""``render hum --out`` as a run: hum-only WAVs of a design and of each coil alone, and the rejection measured from them."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np


@dataclass(frozen=True)
class HumAudio:
    """What :func:`write_hum_audio` wrote and measured.

    Attributes
    ----------
    seconds : float, s
    volts_full_scale : float, V
    files : dict
        "both", "coil_a", "coil_b" to the WAV's path.
    harmonics : tuple of dict
        Per harmonic: frequency_hz, rejection_db (measured from the render; None with
        ``rejection_db_reason`` where infinite or undefined), output_v (peak).
    """

    seconds: float
    volts_full_scale: float
    files: dict
    harmonics: tuple[dict, ...]

    def as_dict(self) -> dict:
        return {"seconds": self.seconds, "volts_full_scale": self.volts_full_scale, "files": dict(self.files), "harmonics": list(self.harmonics)}


def _measured_row(frequency_hz, rejection_db, output_v, absent: str | None = None) -> dict:
    """One measured harmonic; an infinite or undefined rejection is None with its reason.

    absent : why the room has no hum at this harmonic (:func:`render.analysis.hum_harmonics.absent_harmonics`):
        then what the WAV holds there is rounding, and its ratio no figure.
    """
    from ..analysis import undefined as U
    from ..analysis.undefined import REJECTION_CAP_DB

    row = {"frequency_hz": float(frequency_hz)}
    if absent is not None:
        U.mark(row, "rejection_db", absent)
    elif np.isnan(rejection_db):  # 0/0: neither coil hums at this harmonic
        U.mark(row, "rejection_db", U.NO_FIELD)
    elif rejection_db >= REJECTION_CAP_DB:  # the pair's sum is rounding noise
        U.mark(row, "rejection_db", U.HUM_CANCELS)
    else:
        U.put(row, "rejection_db", rejection_db, U.HUM_CANCELS)
    row["output_v"] = float(output_v)
    return row


def write_hum_audio(out, design, *, seconds: float = 4.0, sample_rate: int = 48000) -> HumAudio:
    """Hum-only WAVs (``S-hum.wav``, ``S-hum-coil_a.wav``, ``S-hum-coil_b.wav``) at one full scale, measured after the first second."""
    from ..analysis.hum import measured_rejection
    from ..io.wav import write_float_wav
    from .clips import choose_full_scale

    m = measured_rejection(design, seconds=seconds, settle=1.0, sample_rate=sample_rate)
    vfs = choose_full_scale([np.abs(m[k]).max() for k in ("both", "coil_a", "coil_b")], floor=1e-6)
    stem = design.stem
    files = {}
    for k, suffix in (("both", "hum"), ("coil_a", "hum-coil_a"), ("coil_b", "hum-coil_b")):
        path = Path(out) / f"{stem}-{suffix}.wav"
        write_float_wav(path, m[k] / vfs, sample_rate, overwrite=True)
        files[k] = str(path)
    from ..analysis.hum import absent_harmonics

    rows = tuple(_measured_row(f, r, v, a) for f, r, v, a in zip(m["frequency_hz"], m["rejection_db"], m["output_v"], absent_harmonics(design)))
    return HumAudio(seconds=seconds, volts_full_scale=vfs, files=files, harmonics=rows)


def write_histogram(path, mc, *, name: str, overwrite: bool = False) -> None:
    """``render hum --histogram``: the Monte Carlo's rejection at the harmonic its sensitivities refer to.

    mc : :class:`render.analysis.hum.MonteCarlo`; that harmonic is the fundamental unless the room has no
    hum there (``mc.sensitivity_at``). A room with hum at no harmonic has no rejection to plot: refused.
    """
    from ..errors import InputError
    from ..report.plots import histogram_plot

    if mc.sensitivity_at is None:
        raise InputError(f"--histogram: {name} has no hum at any harmonic in this room, so there is no rejection to plot; give a field or a source that links a coil")
    h = mc.sensitivity_at
    histogram_plot(path, mc.rejection_db[:, h], xlabel=f"hum rejection at {mc.frequency_hz[h]:g} Hz (dB)", title=f"{name}: {mc.trials} trials", overwrite=overwrite)
