"""``render unvoice DI MODEL --out FILE.wav``: the string velocity behind a passive-pickup recording.

The recording (DI) is taken to be MODEL's passive reference (its two coils in
series, into the rig's passive controls, cable and amp input) played by one
string velocity. Two passes over the file, each block by block: the first
reads its statistics (long-term spectrum and noise floor), the second filters
it with one fixed regularised inverse (:mod:`render.analysis.unvoice`).
Writes, each whole or not at all:

- ``FILE.wav``: the velocity, mono float32 at the DI's sample rate; a sample
  of 1.0 is ``--velocity-scale`` m/s (1 m/s);
- ``FILE.json``: the trusted band, the regularisation, the DI's
  ``volts_full_scale``, the design file and its hash, band levels, and what a
  10 % error in the model's coils or cable would do;
- ``FILE-spectra.png``: the DI's spectrum, the passive response and the
  recovered velocity's spectrum.
"""

from __future__ import annotations

import contextlib
import hashlib
import math
import struct
from dataclasses import dataclass, replace
from pathlib import Path

import click
import numpy as np

from ..errors import InputError
from .options import friendly, overwrite_option

BLOCK = 1 << 16  # samples per read and write
MIN_SECONDS = 0.5  # shorter recordings give too few frames for a noise floor (common practice, no source)
VOLTS_FULL_SCALE = 1.0  # default: a DI sample of 1.0 is 1 V at the amp input
VOLTS_RANGE = (1e-4, 100.0)  # V at full scale accepted
BOOST_RANGE = (0.0, 40.0)  # dB accepted for --max-boost
MODEL_ERROR = 0.10  # the model error whose effect every run reports
WAV_HEADER = 64  # bytes, at least, of render.io.wav's float WAV header (RIFF, fmt, fact, data)


@dataclass(frozen=True)
class UnvoiceResult:
    """What :func:`unvoice_file` wrote: paths, the JSON record, the warnings (one line each)."""

    wav: Path
    json: Path
    png: Path | None
    record: dict
    warnings: tuple[str, ...]


def sidecars(out: str | Path) -> tuple[Path, Path]:
    """The JSON and plot written beside ``out`` (``FILE.json``, ``FILE-spectra.png``)."""
    out = Path(out)
    return out.with_suffix(".json"), out.with_name(out.stem + "-spectra.png")


def _check_number(name: str, value, low: float, high: float, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) or not low <= value <= high:
        raise InputError(f"{name}={value}: must be a number from {low:g} to {high:g} ({what})")
    return float(value)


def _file_sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def _open_di(path: Path):
    """(sample_rate, frames) of a mono audio file, or InputError."""
    import soundfile as sf

    from ..io.audio import audio_info

    name = str(path)
    try:
        # the shared checks: missing, folder, pipe, empty, cut-short WAV, unreadable, damaged header
        audio_info(path)
    except InputError as e:
        raise InputError(f"DI={e}") from None
    info = sf.info(name)
    if info.channels != 1:
        raise InputError(f"DI={name}: channels={info.channels}: a DI must be mono (one pickup output); export one channel")
    if info.frames < MIN_SECONDS * info.samplerate:
        raise InputError(f"DI={name}: {info.frames / info.samplerate:.3f} s: at least {MIN_SECONDS:g} s is needed to read its noise floor")
    if not 8000 <= info.samplerate <= 768000:
        raise InputError(f"DI={name}: sample_rate={info.samplerate}: must be from 8000 to 768000 Hz")
    if WAV_HEADER + 4 * info.frames >= 2**32:
        raise InputError(f"DI={name}: frames={info.frames}: the velocity WAV would pass 4 GiB; split the recording")
    return int(info.samplerate), int(info.frames)


def _blocks(path: Path):
    import soundfile as sf

    yield from sf.blocks(str(path), blocksize=BLOCK, dtype="float64", always_2d=False)


def _wav_header(frames: int, sample_rate: int) -> bytes:
    """The header :func:`render.io.wav.float_wav_bytes` writes for ``frames`` mono samples."""
    from ..io.wav import float_wav_bytes

    head = bytearray(float_wav_bytes(np.zeros(0), sample_rate))
    payload = 4 * frames  # mono float32: always even, no pad byte
    struct.pack_into("<I", head, 4, len(head) - 8 + payload)
    struct.pack_into("<I", head, head.index(b"fact") + 8, frames)
    struct.pack_into("<I", head, head.index(b"data") + 4, payload)
    return bytes(head)


def _db(x, floor=1e-30):
    return 10.0 * np.log10(np.maximum(np.asarray(x, float), floor))


def model_error_table(design, *, frequency_hz: np.ndarray, band_hz) -> dict:
    """What a model 10 % off would do to the estimate: 20·log10|H_true / H_model| in the trusted band.

    design : the model (a validated Design, its rig applied)
    frequency_hz : (F,), Hz, the frequencies to look at; band_hz : (low, high) Hz or None for all of them
    For each of the coils' inductance, the coils' winding capacitance and the
    rig's cable capacitance, the true value is taken 10 % above the model's and
    10 % below; returns the largest |error| (signed, dB) and its frequency (Hz).
    """
    from ..circuit.engine import responses
    from ..circuit.params import from_designs

    def scaled(k):
        c = design
        return {
            "coil_inductance": replace(c, coil_a=replace(c.coil_a, inductance=c.coil_a.inductance * k), coil_b=replace(c.coil_b, inductance=c.coil_b.inductance * k)),
            "coil_capacitance": replace(c, coil_a=replace(c.coil_a, capacitance=c.coil_a.capacitance * k), coil_b=replace(c.coil_b, capacitance=c.coil_b.capacitance * k)),
            "cable_capacitance": replace(c, rig=replace(c.rig, cable_capacitance=c.rig.cable_capacitance * k)),
        }

    f = np.asarray(frequency_hz, float)
    if band_hz is not None:
        f = f[(f >= band_hz[0]) & (f <= band_hz[1])]
    names = list(scaled(1.0))
    up, down = scaled(1.0 + MODEL_ERROR), scaled(1.0 - MODEL_ERROR)
    batch = [design] + [up[n] for n in names] + [down[n] for n in names]
    h = np.abs(responses(from_designs(batch)).passive_velocity()(f))
    out = {}
    for i, n in enumerate(names):
        rows = {}
        for sign, j in (("plus", 1 + i), ("minus", 1 + len(names) + i)):
            err = 20.0 * np.log10(h[j] / h[0])
            k = int(np.argmax(np.abs(err)))
            rows[f"true_{sign}_{int(MODEL_ERROR * 100)}_percent"] = {"max_error_db": round(float(err[k]), 3), "at_hz": round(float(f[k]), 1)}
        out[n] = rows
    return out


def unvoice_file(
    di_path,
    model_path,
    *,
    out,
    rig_path=None,
    volts_full_scale: float = VOLTS_FULL_SCALE,
    velocity_scale: float = 1.0,
    max_boost_db: float | None = None,
    overwrite: bool = False,
    plot: bool = True,
) -> UnvoiceResult:
    """Estimate the string velocity behind ``di_path`` (recorded through MODEL's passive reference) and write it.

    di_path : mono audio file; a sample of 1.0 is ``volts_full_scale`` V at the amp input
    model_path : design file whose passive reference made the recording
    out : the velocity WAV to write (``.wav``); the JSON and plot go beside it
    rig_path : rig file replacing the design's own [rig], or None
    velocity_scale : m/s at the velocity WAV's full scale, > 0
    max_boost_db : dB, 0..40, the inverse's boost bound above its 1 kHz level (default 20)
    Raises InputError (one line) before writing anything for bad input or existing files without ``overwrite``.
    """
    from .. import __version__
    from ..analysis import unvoice as U
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from ..design import design_to_dict, load_designs
    from ..io.atomic import atomic_path
    from ..io.folders import refuse_existing as check_new

    boost = U.MAX_BOOST_DB if max_boost_db is None else _check_number("--max-boost", max_boost_db, *BOOST_RANGE, "dB above the inverse's 1 kHz level")
    vfs = _check_number("--volts-full-scale", volts_full_scale, *VOLTS_RANGE, "volts at the DI's full scale")
    vscale = _check_number("--velocity-scale", velocity_scale, 1e-6, 1e3, "m/s at the velocity WAV's full scale")
    out = Path(out)
    if out.suffix.lower() != ".wav":
        raise InputError(f"--out={out}: must end in .wav (the velocity is written as a float WAV)")
    json_path, png_path = sidecars(out)
    check_new([out, json_path] + ([png_path] if plot else []), overwrite=overwrite)
    di = Path(di_path)
    folder = out.parent if str(out.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"--out={out}: folder {folder} does not exist; create it first")
    if di.exists() and out.exists() and out.resolve() == di.resolve():
        raise InputError(f"--out={out}: is the DI itself; choose another name")
    sample_rate, frames = _open_di(di)
    designs, rig = load_designs([model_path], rig=rig_path)
    design = designs[0]
    warnings: list[str] = []

    # pass 1: statistics (and every sample checked before anything is written)
    stats_acc = U.SpectrumAccumulator(sample_rate=sample_rate)
    from ..io.audio import FlatRuns

    flats = FlatRuns()
    peak, at = 0.0, 0
    for block in _blocks(di):
        bad = ~np.isfinite(block)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(f"DI={di}: sample {at + i} ({(at + i) / sample_rate:.4f} s) = {float(block[i])}: every sample must be finite; repair or export the file again")
        flats.add(block)
        peak = max(peak, float(np.max(np.abs(block))) if block.size else 0.0)
        stats_acc.add(block * vfs)
        at += block.size
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
        warnings.append(f"no band around {U.REFERENCE_HZ:g} Hz is within {U.TRUST_DB:g} dB of the exact inverse: the recording is mostly noise there, or the model does not fit it")

    # pass 2: filter and write, every output under a temporary name until all are done
    fir = U.StreamingFIR(inv.taps, delay=inv.delay)
    vel_acc = U.SpectrumAccumulator(sample_rate=sample_rate)
    vpeak, vsum2, written = 0.0, 0.0, 0
    with contextlib.ExitStack() as stack:
        tmp_wav = stack.enter_context(atomic_path(out, overwrite=overwrite))
        tmp_json = stack.enter_context(atomic_path(json_path, overwrite=overwrite))
        tmp_png = stack.enter_context(atomic_path(png_path, overwrite=overwrite)) if plot else None
        with open(tmp_wav, "wb") as fh:
            fh.write(_wav_header(frames, sample_rate))

            def put(v):
                nonlocal vpeak, vsum2, written
                if v.size:
                    if not np.isfinite(v).all():
                        raise InputError(f"DI={di}: the estimate is not finite; this is a bug, please report it")
                    vel_acc.add(v)
                    vpeak = max(vpeak, float(np.max(np.abs(v))))
                    vsum2 += float(np.dot(v, v))
                    written += v.size
                    fh.write((v / vscale).astype("<f4").tobytes())

            for block in _blocks(di):
                put(fir.process(block * vfs))
            put(fir.finish())
        if written != frames:
            raise InputError(f"DI={di}: wrote {written} of {frames} samples; the file changed while it was read")
        vstats = vel_acc.result()

        record = _record(
            di=di, design=design, rig=rig, sample_rate=sample_rate, frames=frames, vfs=vfs, vscale=vscale, peak=peak, inv=inv,
            stats=stats, vstats=vstats, vpeak=vpeak, vrms=math.sqrt(vsum2 / max(frames, 1)), out=out, png=png_path if plot else None,
            warnings=warnings, version=__version__, design_dict=design_to_dict(design),
        )
        import json

        tmp_json.write_text(json.dumps(record, indent=2, allow_nan=False) + "\n", encoding="utf-8")
        if plot:
            spectra_plot(tmp_png, stats=stats, vstats=vstats, inv=inv, title=f"{design.name}: un-voicing {di.name}")
    return UnvoiceResult(wav=out, json=json_path, png=png_path if plot else None, record=record, warnings=tuple(warnings))


def _record(*, di, design, rig, sample_rate, frames, vfs, vscale, peak, inv, stats, vstats, vpeak, vrms, out, png, warnings, version, design_dict) -> dict:
    from ..analysis import unvoice as U

    band = inv.trusted_band_hz
    centres = U.third_octave_centres(U.LOW_HZ, U.TOP_FRACTION * sample_rate)
    di_db = U.band_levels_from_psd(stats.psd, frequency_hz=stats.frequency_hz, centres_hz=centres)
    v_db = U.band_levels_from_psd(vstats.psd, frequency_hz=vstats.frequency_hz, centres_hz=centres)
    floor = np.exp(np.interp(np.log(centres), np.log(stats.band_hz), np.log(np.maximum(stats.band_floor, 1e-300))))
    floor_db = _db(floor * centres * (10**0.05 - 10**-0.05), 1e-300)

    def at(x, c):
        return complex(U.interp_complex(c, inv.frequency_hz, x))

    rows = []
    for c, a, n, v in zip(centres, di_db, floor_db, v_db):
        rows.append({
            "centre_hz": round(float(c), 2),
            "di_db": _round(a),
            "noise_floor_db": _round(n),
            "snr_db": _round(a - n),
            "passive_db": _round(20 * math.log10(abs(at(inv.passive, c)))),
            "inverse_db": _round(20 * math.log10(max(abs(at(inv.realised, c)), 1e-30))),
            "velocity_db": _round(v),
            "trusted": bool(band is not None and band[0] <= c <= band[1]),
        })
    ref_db = 20 * math.log10(inv.reference_level)
    return {
        "kind": "unvoice",
        "di": {
            "file": str(di),
            "sha256": _file_sha256(di),
            "sample_rate": sample_rate,
            "frames": frames,
            "seconds": frames / sample_rate,
            "volts_full_scale": vfs,
            "peak_v": peak * vfs,
        },
        "design": design.name,
        "design_file": design.source,
        "design_sha256": design.sha256,
        "design_values": design_dict,
        "rig": {"file": rig.source, "sha256": rig.sha256} if rig else {"file": None, "from": "the design's own [rig] or the defaults"},
        "velocity": {
            "file": str(out),
            "velocity_scale": vscale,
            "unit": "m/s at full scale (a sample of 1.0)",
            "channels": 1,
            "sensing": "one velocity, the same at both coils' sensing points",
            "peak_m_per_s": vpeak,
            "rms_m_per_s": vrms,
        },
        "plot": str(png) if png else None,
        "trusted_band_hz": [round(band[0], 1), round(band[1], 1)] if band else None,
        "trust_rule": f"the realised inverse within {U.TRUST_DB:g} dB of the exact inverse 1/H, contiguous around {U.REFERENCE_HZ:g} Hz, at most {U.TOP_FRACTION:g}·sample_rate",
        "regularisation": {
            "method": "Tikhonov with a Wiener noise term: W = conj(H)·T / (|H|² + λ_gain + |H|²·N/(S−N)·ρ)",
            "passive_level_1k_db": round(ref_db, 3),
            "max_boost_db": inv.max_boost_db,
            "lambda_gain": inv.lambda_gain,
            "gain_limit_db": round(20 * math.log10(inv.gain_limit) + 0.005, 2),
            "gain_limit_unit": "dB re 1 m/s per V: no frequency of the inverse exceeds it",
            "max_inverse_gain_db": round(20 * math.log10(inv.max_gain), 3),
            "max_inverse_gain_hz": round(float(inv.frequency_hz[int(np.argmax(np.abs(inv.realised)))]), 1),
            "passband_cost_db": round(-20 * math.log10(1 + inv.lambda_gain / inv.reference_level**2), 4),
            "noise_term": "S: long-term mean band power; N: its low percentile over frames; ρ = clip(|H(1 kHz)/H|² − 1, 0, 1), so the term acts only where the exact inverse boosts",
            "noise_floor": {
                "percentile": U.NOISE_PERCENTILE,
                "frame_samples": stats.frame,
                "hop_samples": stats.hop,
                "window": "hann",
                "bands_per_octave": U.BANDS_PER_OCTAVE,
                "frames": stats.frames,
                "silent_frames": stats.silent_frames,
                "caveat": "in playing without pauses the quietest frames are still playing, so the floor overestimates the noise; over pure noise it reads 0.5 to 3.5 dB under the noise's mean (the percentile's bias)",
            },
            "low_taper_hz": U.LOW_HZ,
            "fir_taps": int(inv.taps.size),
            "delay_samples_removed": inv.delay,
            "fir_error_db": round(inv.fir_error_db, 4),
        },
        "model_error": {
            "what": "20·log10|H_true/H_model| in the trusted band: the level error of the estimate if the true part is 10 % off the model's",
            **model_error_table(design, frequency_hz=np.geomspace(20.0, U.TOP_FRACTION * sample_rate, 600), band_hz=band),
        },
        "bands": rows,
        "warnings": list(warnings),
        "software_version": version,
    }


def _round(x, nd=2):
    x = float(x)
    return round(x, nd) if math.isfinite(x) else None


def spectra_plot(path, *, stats, vstats, inv, title=""):
    """DI spectrum with its noise floor and the passive response (top); the recovered velocity's spectrum and the inverse (bottom)."""
    from ..report.plots import CLAY, PALETTE, _hz_axis, _plt, save

    plt = _plt()
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(8.5, 7), sharex=True)
    fmin, fmax = 20.0, inv.sample_rate / 2
    k = stats.frequency_hz >= fmin
    ax1.plot(stats.frequency_hz[k], _db(stats.psd[k]), color=PALETTE[0], lw=1.3, label="DI spectrum (dB re 1 V²/Hz)")
    bk = stats.band_floor > 0
    ax1.plot(stats.band_hz[bk], _db(stats.band_floor[bk]), color=PALETTE[0], lw=1.0, ls=":", label="DI noise floor (low percentile)")
    ax1.set_ylabel("DI, dB re 1 V²/Hz")
    t1 = ax1.twinx()
    g = inv.frequency_hz >= fmin
    t1.plot(inv.frequency_hz[g], 20 * np.log10(np.abs(inv.passive[g])), color=CLAY, lw=1.5, ls="--", label="passive response (dB re 1 V per m/s)")
    t1.set_ylabel("passive, dB re 1 V per m/s", color=CLAY)
    kv = vstats.frequency_hz >= fmin
    ax2.plot(vstats.frequency_hz[kv], _db(vstats.psd[kv]), color=PALETTE[1], lw=1.3, label="recovered velocity (dB re 1 (m/s)²/Hz)")
    ax2.set_ylabel("velocity, dB re 1 (m/s)²/Hz")
    t2 = ax2.twinx()
    t2.plot(inv.frequency_hz[g], 20 * np.log10(np.maximum(np.abs(inv.realised[g]), 1e-30)), color=PALETTE[3], lw=1.0, ls="-.", label="inverse (dB re 1 m/s per V)")
    t2.axhline(20 * math.log10(inv.gain_limit), color=PALETTE[3], lw=0.7, ls=":")
    t2.set_ylabel("inverse, dB re 1 m/s per V", color=PALETTE[3])
    band = inv.trusted_band_hz
    for ax in (ax1, ax2):
        _hz_axis(ax, fmin, fmax)
        if band:
            ax.axvspan(band[0], band[1], color=PALETTE[1], alpha=0.08, lw=0)
    lo = float(np.max(_db(stats.psd[k]))) - 140
    ax1.set_ylim(bottom=lo)
    ax2.set_ylim(bottom=float(np.max(_db(vstats.psd[kv]))) - 140)
    lines = ax1.get_lines() + t1.get_lines()
    ax1.legend(lines, [ln.get_label() for ln in lines], fontsize=8, frameon=False, loc="lower left")
    lines = ax2.get_lines() + t2.get_lines()[:1]
    ax2.legend(lines, [ln.get_label() for ln in lines], fontsize=8, frameon=False, loc="lower left")
    shade = f"trusted band {band[0]:.0f}–{band[1]:.0f} Hz shaded" if band else "no trusted band"
    ax2.set_xlabel(f"frequency (Hz); {shade}; dotted: the inverse's gain limit")
    if title:
        ax1.set_title(title, fontsize=10, loc="left")
    fig.tight_layout()
    return save(fig, path, overwrite=True)


def dry_from_di(dry_path, model_path, *, folder, rig_path=None, overwrite=False, plot=True) -> tuple[Path, dict]:
    """The ``--from-di MODEL`` shortcut of ``clips`` and ``blind``: un-voice the ``--dry`` DI into ``folder``.

    Writes ``folder/<DI stem>-velocity.wav`` (with its JSON and, if ``plot``,
    its plot), at 1 V DI full scale and 1 m/s velocity full scale, and prints
    the trusted band to stderr. Returns the velocity WAV's path and a short
    JSON-ready record of the un-voicing.
    """
    if dry_path is None:
        raise InputError("--from-di needs --dry DI: the recording made through that design's passive reference")
    di = Path(dry_path)
    if di.suffix.lower() == ".toml":
        raise InputError(f"--dry={di}: is a phrase; --from-di un-voices a recording (WAV, FLAC, ...)")
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    res = unvoice_file(di, model_path, out=folder / f"{di.stem}-velocity.wav", rig_path=rig_path, overwrite=overwrite, plot=plot)
    for w in res.warnings:
        click.echo(f"warning: {w}", err=True)
    r = res.record
    band = r["trusted_band_hz"]
    click.echo(f"un-voiced {di} through {model_path}'s passive reference: trusted {band[0]:.0f} Hz to {band[1]:.0f} Hz" if band else f"un-voiced {di}: no trusted band", err=True)
    summary = {
        "di": r["di"]["file"],
        "di_sha256": r["di"]["sha256"],
        "volts_full_scale": r["di"]["volts_full_scale"],
        "model": r["design_file"],
        "model_sha256": r["design_sha256"],
        "trusted_band_hz": band,
        "gain_limit_db": r["regularisation"]["gain_limit_db"],
        "velocity_sha256": _file_sha256(res.wav),
        "rebuild": f"render unvoice {di} {model_path}" + (f" --rig {rig_path}" if rig_path else "") + " --out FILE.wav",
    }
    return res.wav, summary


@click.command("unvoice")
@click.argument("di", type=click.Path(dir_okay=False))
@click.argument("model", type=click.Path(dir_okay=False))
@click.option("--rig", "rig_path", type=click.Path(dir_okay=False), default=None, help="Rig the DI was recorded through (cable, recorder input as amp_r and amp_c, passive_pot, passive_tone_cap); replaces MODEL's own [rig].")
@click.option("--volts-full-scale", type=float, default=VOLTS_FULL_SCALE, show_default=True, help="Volts at the amp input that a DI sample of 1.0 stands for (the recorder's full scale).")
@click.option("--velocity-scale", type=float, default=1.0, show_default=True, help="m/s at full scale of the velocity WAV written.")
@click.option("--max-boost", type=float, default=None, help="Most the inverse may boost above its 1 kHz level, dB (default 20).")
@click.option("--out", "out", required=True, type=click.Path(dir_okay=False), help="Velocity WAV to write; FILE.json and FILE-spectra.png go beside it.")
@click.option("--plot/--no-plot", default=True, show_default=True, help="Write FILE-spectra.png.")
@overwrite_option
@friendly
def unvoice_command(di, model, rig_path, volts_full_scale, velocity_scale, max_boost, out, plot, overwrite):
    """Estimate the string velocity behind DI, a recording of MODEL's passive reference.

    The velocity (one signal for both sensing points) then drives any design:
    `render clips --dry FILE.wav`, or `render blind A B --dry FILE.wav`.
    """
    res = unvoice_file(di, model, out=out, rig_path=rig_path, volts_full_scale=volts_full_scale, velocity_scale=velocity_scale, max_boost_db=max_boost, overwrite=overwrite, plot=plot)
    for w in res.warnings:
        click.echo(f"warning: {w}", err=True)
    r = res.record
    band = r["trusted_band_hz"]
    reg = r["regularisation"]
    click.echo(f"wrote {res.wav} ({r['di']['seconds']:.2f} s at {r['di']['sample_rate']} Hz, peak {r['velocity']['peak_m_per_s']:.3g} m/s; full scale {r['velocity']['velocity_scale']:g} m/s) and {res.json}" + (f", {res.png}" if res.png else ""))
    click.echo(f"  trusted band     {band[0]:.0f} Hz to {band[1]:.0f} Hz" if band else "  trusted band     none (see the warning)")
    click.echo(f"  inverse          at most {reg['max_boost_db']:g} dB above its 1 kHz level; gain limit {reg['gain_limit_db']:.2f} dB re 1 m/s per V (reached {reg['max_inverse_gain_db']:.2f} dB at {reg['max_inverse_gain_hz']:.0f} Hz)")
    me = r["model_error"]["coil_inductance"]["true_plus_10_percent"]
    click.echo(f"  model            coils' true inductance 10 % above the model's: the estimate is off by up to {me['max_error_db']:+.2f} dB (at {me['at_hz']:.0f} Hz); more in {res.json.name}")
