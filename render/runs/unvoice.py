"""``render unvoice`` as a run: the string velocity behind a passive-pickup recording, file to file.

The recording (DI) is taken to be MODEL's passive reference (its two coils in
series, into the rig's passive controls, cable and amp input) played by one
string velocity. Two passes over the file, each block by block: the first
reads its statistics (long-term spectrum and noise floor), the second filters
it with one fixed regularised inverse (:mod:`render.analysis.unvoice`).
Writes, each under a temporary name until all three are complete:

- ``FILE.wav``: the velocity, mono float32 at the DI's sample rate; a sample
  of 1.0 is ``velocity_scale`` m/s (1 m/s);
- ``FILE.json``: the trusted band, the regularisation, the DI's
  ``volts_full_scale``, the design file and its hash, band levels, and what a
  10 % error in the model's coils or cable would do;
- ``FILE-spectra.png``: the DI's spectrum, the passive response and the
  recovered velocity's spectrum.
"""

from __future__ import annotations

import contextlib
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import ArgumentError, InputError

BLOCK = 1 << 16  # samples per read and write
MIN_SECONDS = 0.5  # shorter recordings give too few frames for a noise floor (common practice, no source)
VOLTS_FULL_SCALE = 1.0  # default: a DI sample of 1.0 is 1 V at the amp input
VOLTS_RANGE = (1e-4, 100.0)  # V at full scale accepted
# dB accepted for --max-boost. Below the lowest, the bound alone costs more than the trust rule (TRUST_DB) where
# |H| is its 1 kHz level: the passband cost 20·log10(1 + 10^(−B/10)/4) reaches 1 dB at B = 3.12 dB (closed form,
# render.analysis.unvoice), so no band could be trusted.
BOOST_RANGE = (3.2, 40.0)
WAV_HEADER = 64  # bytes, at least, of render.io.wav's float WAV header (RIFF, fmt, fact, data)


@dataclass(frozen=True)
class UnvoiceResult:
    """What :func:`unvoice` wrote: paths, the JSON record, the warnings (one line each).

    Attributes
    ----------
    wav : Path
        The string-velocity estimate, a float WAV (a sample of 1.0 is ``velocity_scale`` m/s).
    json : Path
        Its record, beside it.
    png : Path or None
        The spectra plot (None when not asked for).
    record : dict
        What the JSON holds: the design, the DI, the inverse's bound and its trusted band (``trusted_band_hz``, Hz), …
    warnings : tuple of str
        One line each.
    """

    wav: Path
    json: Path
    png: Path | None
    record: dict
    warnings: tuple[str, ...]


def sidecars(out: str | Path) -> tuple[Path, Path]:
    """The JSON and plot written beside ``out`` (``FILE.json``, ``FILE-spectra.png``)."""
    out = Path(out)
    return out.with_suffix(".json"), out.with_name(out.stem + "-spectra.png")


def _check_number(name: str, value, low: float, high: float, what: str, *, option: str) -> float:
    """``value`` as a float from ``low`` to ``high`` (any real number: int, float, a numpy scalar; never a bool or str)."""
    from ..arguments import number

    return number(name, value, lo=low, hi=high, hint=f" ({what})", option=option)


def _open_di(path: Path):
    """(sample_rate, frames, the level of its full-scale samples) of a mono audio file, or InputError."""
    from ..io.audio import audio_info, too_short
    from ..validate import SAMPLE_RATE_RANGE

    name = str(path)
    if path.suffix.lower() == ".toml" and path.is_file():
        raise InputError(f"DI={name}: is a TOML file, not a recording: the order is DI then MODEL (render unvoice DI.wav MODEL.toml --out FILE.wav)")
    try:
        # the shared checks: missing, folder, pipe, empty, cut-short WAV, unreadable, damaged header, more than one channel
        info = audio_info(path, max_channels=1)
    except InputError as e:
        raise InputError(f"DI={e}") from None
    short = too_short(f"DI={name}", info, MIN_SECONDS, "to read its noise floor")
    if short:
        raise short
    lo, hi = SAMPLE_RATE_RANGE  # the velocity WAV keeps the DI's rate, so it must be a rate render writes; below 8 kHz no pickup band is left
    if not lo <= info.sample_rate <= hi:
        raise InputError(f"DI={name}: sample_rate={info.sample_rate}: must be from {lo} to {hi} Hz; resample the recording")
    if WAV_HEADER + 4 * info.frames >= 2**32:
        raise InputError(f"DI={name}: frames={info.frames}: the velocity WAV would pass 4 GiB; split the recording")
    return info.sample_rate, info.frames, info.clip_level


def _blocks(path: Path):
    """The DI's samples, 1-D blocks of :data:`BLOCK` (the last shorter), each checked for NaN and infinity."""
    from ..io.audio import iter_audio

    try:
        for block in iter_audio(path, block=BLOCK):
            if block.shape[0]:
                yield block[:, 0]
    except InputError as e:
        raise InputError(f"DI={e}") from None


def _refuse_volume_zero(design, model_path, rig) -> None:
    """Refuse a rig whose volume is at 0: the passive wiring then passes (next to) nothing, and its inverse would be absurd."""
    if design.rig.volume <= 0.0:
        where = f"RIG={rig.source}" if rig is not None else f"MODEL={model_path}"
        raise InputError(f"{where}: volume=0: the passive wiring passes no signal at volume 0; set the rig's volume to what the recording was made with")


def _refuse_silent_passive(design, model_path) -> None:
    """Refuse a MODEL whose passive reference has no response: there is nothing to invert."""
    from ..analysis.figures import signal_cancels
    from ..analysis.unvoice import REFERENCE_HZ
    from ..circuit.engine import responses
    from ..circuit.params import from_designs

    _, passive_silent = signal_cancels(responses(from_designs([design])), [REFERENCE_HZ])
    if passive_silent[0]:
        raise InputError(
            f"MODEL={model_path}: its passive reference gives no signal (its two coils cancel the string signal exactly: a coil wired in reverse? check signal_polarity);"
            " a recording cannot be un-voiced through it"
        )


def unvoice(
    di_path,
    design,
    *,
    out,
    rig=None,
    volts_full_scale: float = VOLTS_FULL_SCALE,
    velocity_scale: float = 1.0,
    max_boost_db: float | None = None,
    overwrite: bool = False,
    plot: bool = True,
) -> UnvoiceResult:
    """Estimate the string velocity behind ``di_path`` (recorded through ``design``'s passive reference) and write it.

    Parameters
    ----------
    di_path : str or Path
        A mono audio file (WAV, FLAC, ...): the DI, recorded through the design's passive reference.
    design : Design
        The design whose passive reference made the recording.
    out : str or Path
        The velocity WAV to write (``.wav``, in an existing folder); its JSON record
        (``FILE.json``) and spectra plot (``FILE-spectra.png``) go beside it.
    rig : RigFile or None
        Replaces the design's own [rig] (the controls and cable the DI was recorded through).
    volts_full_scale : float, V
        The amp-input voltage of a DI sample of 1.0, 1e-4 to 100 V.
    velocity_scale : float, m/s
        The string velocity at the velocity WAV's full scale, 1e-6 to 1000 m/s.
    max_boost_db : float or None, dB
        The inverse's boost bound above its 1 kHz level, 3.2 to 40 dB (default 20 dB; below 3.2 dB the bound alone
        costs the passband more than the 1 dB trust rule).
    overwrite : bool
        Replace ``out``, its JSON and its plot if they exist (otherwise an existing one is refused).
    plot : bool
        Write the spectra plot.

    Returns
    -------
    UnvoiceResult
        The paths written, the JSON record and the warnings.

    Raises
    ------
    InputError
        One line, before anything is written: bad input, or an existing output without ``overwrite``.
    """
    from .. import __version__
    from ..analysis import unvoice as U
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from ..design import Design, design_to_dict, load_designs
    from ..dry.recorded import implausible_velocity
    from ..io.atomic import atomic_path, json_text
    from ..io.folders import refuse_existing as check_new
    from ..io.folders import same_file
    from ..io.hashing import sha256_file
    from ..io.wav import FloatWavWriter
    from ..report.unvoice import spectra_plot, unvoice_record

    boost = U.MAX_BOOST_DB if max_boost_db is None else _check_number("max_boost_db", max_boost_db, *BOOST_RANGE, "dB above the inverse's 1 kHz level", option="--max-boost")
    vfs = _check_number("volts_full_scale", volts_full_scale, *VOLTS_RANGE, "volts at the DI's full scale", option="--volts-full-scale")
    vscale = _check_number("velocity_scale", velocity_scale, 1e-6, 1e3, "m/s at the velocity WAV's full scale", option="--velocity-scale")
    out = Path(out)
    if out.suffix.lower() != ".wav":
        raise ArgumentError("out", f"{out}", "must end in .wav (the velocity is written as a float WAV)")
    json_path, png_path = sidecars(out)
    check_new([out, json_path] + ([png_path] if plot else []), overwrite=overwrite, argument="out")
    di = Path(di_path)
    folder = out.parent if str(out.parent) else Path(".")
    if not folder.is_dir():
        raise ArgumentError("out", f"{out}", f"folder {folder} does not exist; create it first")
    if same_file(out, di):
        raise ArgumentError("out", f"{out}", "is the DI itself; choose another name")
    sample_rate, frames, clip_level = _open_di(di)
    model_path = design.source if isinstance(design, Design) else design
    (design,), rig = load_designs([design], rig=rig)
    _refuse_volume_zero(design, model_path, rig)
    _refuse_silent_passive(design, model_path)
    warnings: list[str] = []

    # pass 1: statistics (and every sample checked before anything is written)
    stats_acc, mean_acc = U.SpectrumAccumulator(sample_rate=sample_rate), U.RunningMean()
    from ..io.audio import FlatRuns

    flats = FlatRuns(clip_level)
    peak = 0.0
    for block in _blocks(di):
        flats.add(block)
        peak = max(peak, float(np.max(np.abs(block))))
        stats_acc.add(block * vfs)
        mean_acc.add(block * vfs)
    if peak == 0.0:
        raise InputError(f"DI={di}: every sample is 0: the recording is silent; record or export it again")
    if flats.runs:
        warnings.append(f"DI={di}: {flats.runs} flat run(s) at full scale, the first at {flats.first / sample_rate:.3f} s; the recording clipped, and clipping is not the passive pickup's response")
    stats = stats_acc.result()
    if stats.frames < 4:
        raise InputError(f"DI={di}: only {stats.frames} non-silent frames of {stats.frame} samples; at least 4 are needed for a noise floor")

    # the inverse, designed once
    grid = U.design_grid(sample_rate=sample_rate)
    passive = responses(from_designs([design])).passive_velocity()(grid)[0]
    inv = U.design_inverse(passive, sample_rate=sample_rate, band_hz=stats.band_hz, noise_ratio=U.noise_to_signal(stats), max_boost_db=boost)
    if inv.trusted_band_hz is None:
        warnings.append(_untrusted(passive, sample_rate, stats, boost))

    # pass 2: filter and write, every output under a temporary name until all are done
    fir = U.StreamingFIR(inv.taps, delay=inv.delay)
    vel_acc = U.SpectrumAccumulator(sample_rate=sample_rate)
    vpeak, vsum2, written = 0.0, 0.0, 0
    with contextlib.ExitStack() as stack:
        tmp_wav = stack.enter_context(atomic_path(out, overwrite=overwrite))
        tmp_json = stack.enter_context(atomic_path(json_path, overwrite=overwrite))
        tmp_png = stack.enter_context(atomic_path(png_path, overwrite=overwrite)) if plot else None
        wav = FloatWavWriter(tmp_wav, sample_rate=sample_rate, overwrite=True)
        try:

            def put(v):
                nonlocal vpeak, vsum2, written
                if v.size:
                    if not np.isfinite(v).all():
                        raise InputError(f"DI={di}: the estimate is not finite; this is a bug, please report it")
                    vel_acc.add(v)
                    vpeak = max(vpeak, float(np.max(np.abs(v))))
                    vsum2 += float(np.dot(v, v))
                    written += v.size
                    wav.write(v / vscale)

            mean, at = mean_acc.result(), 0
            for block in _blocks(di):
                put(fir.process(U.prepared(block * vfs, mean=mean, start=at, total=frames, sample_rate=sample_rate)))
                at += block.size
            put(fir.finish())
            wav.close()
        except BaseException:
            wav.abort()
            raise
        if written != frames:
            raise InputError(f"DI={di}: wrote {written} of {frames} samples; the file changed while it was read")
        vstats = vel_acc.result()
        far = implausible_velocity(
            f"DI={di}",
            vpeak,
            how=f" (the estimate, at --volts-full-scale {vfs:g})",
            check="--volts-full-scale, the rig's volume (--rig) and that MODEL is what the recording was made through",
        )
        if far:
            warnings.append(far)

        record = unvoice_record(
            di=di,
            di_sha256=sha256_file(di),
            design=design,
            rig=rig,
            sample_rate=sample_rate,
            frames=frames,
            vfs=vfs,
            vscale=vscale,
            peak=peak,
            inv=inv,
            stats=stats,
            vstats=vstats,
            vpeak=vpeak,
            vrms=math.sqrt(vsum2 / max(frames, 1)),
            out=out,
            png=png_path if plot else None,
            warnings=warnings,
            version=__version__,
            design_dict=design_to_dict(design),
        )
        tmp_json.write_text(json_text(record), encoding="utf-8")
        if plot:
            spectra_plot(tmp_png, stats=stats, vstats=vstats, inv=inv, title=f"{design.name}: un-voicing {di.name}")
    return UnvoiceResult(wav=out, json=json_path, png=png_path if plot else None, record=record, warnings=tuple(warnings))


def _untrusted(passive, sample_rate: int, stats, boost: float) -> str:
    """Why no band is trusted: a --max-boost below the default when the default would trust one, else the recording or the model."""
    from ..analysis import unvoice as U

    plain = f"no band around {U.REFERENCE_HZ:g} Hz is within {U.TRUST_DB:g} dB of the exact inverse"
    if boost < U.MAX_BOOST_DB:
        usual = U.design_inverse(passive, sample_rate=sample_rate, band_hz=stats.band_hz, noise_ratio=U.noise_to_signal(stats), max_boost_db=U.MAX_BOOST_DB)
        if usual.trusted_band_hz is not None:
            lo, hi = usual.trusted_band_hz
            return f"{plain}: --max-boost {boost:g} dB bounds the inverse too close to its passband level; the default {U.MAX_BOOST_DB:g} dB trusts {lo:.0f} Hz to {hi:.0f} Hz"
    return f"{plain}: the recording is mostly noise there, or the model does not fit it"


@dataclass(frozen=True)
class FromDi:
    """A DI un-voiced for a render: the velocity WAV, a short JSON-ready record, the warnings."""

    wav: Path
    record: dict
    trusted_band_hz: tuple[float, float] | None
    warnings: tuple[str, ...]


def velocity_from_di(di_path, model_path, *, folder, rig=None, overwrite: bool = False, plot: bool = True) -> FromDi:
    """The ``--from-di MODEL`` shortcut of ``clips`` and ``blind``: un-voice a DI into ``folder``.

    Writes ``folder/<DI stem>-velocity.wav`` (with its JSON and, if ``plot``,
    its plot), at 1 V DI full scale and 1 m/s velocity full scale. Returns the
    velocity WAV's path and a short JSON-ready record of the un-voicing.
    ``clips`` calls it inside its run's folder (:func:`render.runs.clips.render_clips`, ``from_di``),
    so a stop while un-voicing leaves that folder marked incomplete.
    """
    from ..errors import ArgumentError
    from ..io.folders import folder_kept_on_success
    from ..io.hashing import sha256_file

    if di_path is None:
        raise ArgumentError(
            "dry",
            "None",
            "the recording made through that design's passive reference",
            cli="--from-di needs --dry DI: the recording made through that design's passive reference",
            python_why="from_di needs the DI as the dry signal: the recording made through that design's passive reference",
        )
    di = Path(di_path)
    if di.suffix.lower() == ".toml":
        raise ArgumentError("dry", f"{di}", "is a phrase; --from-di un-voices a recording (WAV, FLAC, ...)", option="--dry", python_why="is a phrase; from_di un-voices a recording (WAV, FLAC, ...)")
    with folder_kept_on_success(folder) as made:
        res = unvoice(di, model_path, out=made / f"{di.stem}-velocity.wav", rig=rig, overwrite=overwrite, plot=plot)
    r = res.record
    band = r["trusted_band_hz"]
    summary = {
        "di": r["di"]["file"],
        "di_sha256": r["di"]["sha256"],
        "volts_full_scale": r["di"]["volts_full_scale"],
        "model": r["design_file"],
        "model_sha256": r["design_sha256"],
        "trusted_band_hz": band,
        "gain_limit_db": r["regularisation"]["gain_limit_db"],
        "velocity_sha256": sha256_file(res.wav),
        "rebuild": f"render unvoice {di} {model_path}" + (f" --rig {rig}" if rig else "") + " --out FILE.wav",
    }
    return FromDi(wav=res.wav, record=summary, trusted_band_hz=tuple(band) if band else None, warnings=res.warnings)
