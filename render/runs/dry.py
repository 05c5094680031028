"""``render dry`` as a run: a phrase's string velocity at one sensing point, as a float WAV and a spectrogram."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import ArgumentError, InputError


@dataclass(frozen=True)
class DryPreview:
    """What :func:`preview_dry` wrote.

    Attributes
    ----------
    wav : Path
        32-bit float, a sample of 1.0 is 1 m/s.
    spectrogram : Path or None
    seconds : float, s
    sample_rate : int, Hz
    peak_m_per_s : float, m/s
    warnings : tuple of str
        The phrase's own (a tuning no steel string reaches), and notes not heard: their vibrating length
        ends before the sensing point, or their pitch reaches the sample rate's Nyquist limit.
    silent : bool
        No sample reaches :data:`render.report.plots.SILENT_PEAK` (the spectrogram says so instead of drawing).
    """

    wav: Path
    spectrogram: Path | None
    seconds: float
    sample_rate: int
    peak_m_per_s: float
    warnings: tuple[str, ...] = ()
    silent: bool = False


def _length(name: str, value) -> tuple[float, str, bool]:
    """A length in m from a number (m) or a string as typed ("40mm", "0.04"): (metres, as shown, typed as a plain number)."""
    from ..units import LENGTH, QuantityError, parse_quantity

    shown = str(value).strip()
    try:
        x = parse_quantity(value, LENGTH)
    except QuantityError as e:
        raise ArgumentError(name, shown, str(e)) from None
    try:
        float(shown)
    except ValueError:
        return x, shown, False
    return x, shown, True


def preview_dry(
    phrase_path, out, *, position: float, aperture: float = 0.0, sample_rate: int = 48000, seed: int = 0, seconds: float | None = None, spectrogram: bool = True, overwrite: bool = False
) -> DryPreview:
    """Synthesise ``phrase_path`` at one sensing point and write ``out`` (and ``<out stem>-spectrogram.png``), both or neither.

    Parameters
    ----------
    phrase_path : str or Path
    out : str or Path
        The WAV to write.
    position : float (m) or str ("150mm")
        Sensing point, from the bridge saddle; > 0 and shorter than the scale length.
    aperture : float (m) or str ("20mm"), >= 0
        Width of the sensing window along the string (0: a point).
    sample_rate : int, Hz
    seed : int
    seconds : float or None, s
        Length (default: the phrase's own).
    """
    from ..dry.modal import string_velocity, unheard_notes, unsynthesised_notes
    from ..dry.phrase import MIN_SECONDS, load_phrase
    from ..io.atomic import write_bytes
    from ..io.wav import float_wav_bytes
    from ..validate import sample_rate as check_rate

    out = Path(out)
    from ..dry.phrase import MAX_SECONDS

    if seconds is not None and not MIN_SECONDS <= seconds <= MAX_SECONDS:  # NaN fails too
        raise ArgumentError("seconds", f"{seconds:g}s", f"must be at least {MIN_SECONDS:g} s (a pluck's first periods) and at most {MAX_SECONDS:g} s (a phrase renders in memory)")
    position, at, bare = _length("position", position)
    aperture, width, _ = _length("aperture", aperture)
    if not position > 0:
        raise ArgumentError("position", at, "must be > 0 (distance from the bridge saddle)")
    if not aperture >= 0:
        raise ArgumentError("aperture", width, "must be >= 0 (0 is a point)")
    rate = check_rate(sample_rate)
    png_path = out.with_name(f"{out.stem}-spectrogram.png")
    for target in [out] + ([png_path] if spectrogram else []):
        if target.exists() and not overwrite:
            raise InputError(f"{target}: exists; pass --overwrite to replace it or choose another name")
        if not target.parent.is_dir():
            raise ArgumentError("out", f"{out}", f"folder {target.parent} does not exist; create it first")
    p = load_phrase(phrase_path)
    if not position < p.instrument.scale_length:
        from ..units import metres_hint

        scale = f"the scale length {p.instrument.scale_length * 1e3:g} mm"
        if bare and position * 1e-3 < p.instrument.scale_length:  # a plain number of millimetres, read as metres
            raise ArgumentError("position", at, f"must be shorter than {scale}; {metres_hint(position)}")
        metres = " (a plain number is in metres)" if bare else ""
        raise ArgumentError("position", at, f"must be shorter than {scale}: {position * 1e3:g} mm{metres} from the bridge saddle lies beyond the nut")
    if not aperture < p.instrument.scale_length / 2:
        raise ArgumentError("aperture", width, f"a sensing window must be narrower than half the scale length ({p.instrument.scale_length / 2 * 1e3:g} mm); 0 is a point")
    v = string_velocity(p, sample_rate=rate, positions=[position], apertures=[aperture], seed=seed, seconds=seconds)[0]
    write_bytes(out, float_wav_bytes(v, rate), overwrite=overwrite)
    from ..report.plots import silent

    if spectrogram:
        from ..report.plots import spectrogram_plot

        try:
            spectrogram_plot(png_path, v, sample_rate=rate, title=f"{p.title}: string velocity at {position * 1e3:g} mm", unit="m/s", overwrite=overwrite)
        except BaseException:
            out.unlink(missing_ok=True)  # both or neither
            raise
    peak = float(np.abs(v).max()) if v.size else 0.0
    warnings = (*p.warnings, *unsynthesised_notes(p, rate), *unheard_notes(p, [position]))
    return DryPreview(wav=out, spectrogram=png_path if spectrogram else None, seconds=v.size / rate, sample_rate=rate, peak_m_per_s=peak, warnings=warnings, silent=silent(v))
