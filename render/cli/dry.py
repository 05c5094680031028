"""``render dry PHRASE --out FILE.wav``: hear a phrase's string velocity at one point.

Writes the velocity as a 32-bit float WAV (a sample of 1.0 is 1 m/s) and,
unless ``--no-spectrogram``, a spectrogram PNG beside it
(``FILE-spectrogram.png``). Both files appear whole or not at all.
"""

from __future__ import annotations

import io
import math
from pathlib import Path

import click

from render.errors import InputError
from render.units import LENGTH, TIME, QuantityError, parse_quantity


def _option_quantity(name: str, value: str, kind) -> float:
    try:
        return parse_quantity(value, kind)
    except QuantityError as e:
        raise InputError(f"{name}={value}: {e}") from None


def spectrogram_png(velocity, sample_rate: int, *, title: str) -> bytes:
    """A spectrogram of ``velocity`` (shape (n,), m/s) as PNG bytes, dB re 1 m/s."""
    import numpy as np
    from matplotlib.figure import Figure
    from scipy.signal import spectrogram

    nperseg = 4096 if velocity.size >= 4096 else max(16, 2 ** int(math.log2(max(velocity.size, 16))))
    hop = max(nperseg // 4, int(math.ceil(velocity.size / 1500)))  # at most ~1500 columns
    f, t, sxx = spectrogram(velocity, fs=sample_rate, window="hann", nperseg=nperseg, noverlap=max(0, nperseg - hop), scaling="spectrum", mode="psd")
    level = 10.0 * np.log10(np.maximum(sxx, 1e-30))
    top = float(level.max()) if level.size else 0.0
    fig = Figure(figsize=(9, 4.5), dpi=100)
    ax = fig.add_subplot(1, 1, 1)
    keep = f >= 20.0
    mesh = ax.pcolormesh(t, f[keep], level[keep], shading="auto", cmap="magma", vmin=top - 100.0, vmax=top, rasterized=True)
    ax.set_yscale("log")
    ax.set_ylim(20.0, min(20000.0, sample_rate / 2))
    ax.set_xlabel("time (s)")
    ax.set_ylabel("frequency (Hz)")
    ax.set_title(title)
    fig.colorbar(mesh, ax=ax, label="dB re 1 m/s")
    fig.tight_layout()
    buf = io.BytesIO()
    fig.savefig(buf, format="png", metadata={"Software": None})
    return buf.getvalue()


@click.command("dry")
@click.argument("phrase", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--out", "out", required=True, type=click.Path(dir_okay=False, path_type=Path), help="WAV file to write (32-bit float, 1.0 = 1 m/s).")
@click.option("--position", default="150mm", show_default=True, metavar="LENGTH", help='Sensing point, distance from the bridge saddle ("40mm", 0.15).')
@click.option("--aperture", default="0mm", show_default=True, metavar="LENGTH", help='Width of the sensing window along the string ("20mm").')
@click.option("--sample-rate", default=48000, show_default=True, type=int, help="Sample rate in Hz.")
@click.option("--seed", default=0, show_default=True, type=int, help="Seed for the small per-note variations.")
@click.option("--seconds", default=None, metavar="TIME", help="Length to render (default: the phrase's own).")
@click.option("--spectrogram/--no-spectrogram", default=True, show_default=True, help="Also write FILE-spectrogram.png.")
@click.option("--overwrite", is_flag=True, help="Replace existing output files.")
def dry_command(phrase, out, position, aperture, sample_rate, seed, seconds, spectrogram, overwrite):
    """Preview a phrase's string velocity at one sensing point as a WAV."""
    from render.dry.modal import string_velocity
    from render.dry.phrase import load_phrase
    from render.io.atomic import write_bytes
    from render.io.wav import float_wav_bytes

    try:
        x = _option_quantity("--position", position, LENGTH)
        w = _option_quantity("--aperture", aperture, LENGTH)
        length = None if seconds is None else _option_quantity("--seconds", seconds, TIME)
        if length is not None and not 0 < length <= 3600:
            raise InputError(f"--seconds={seconds}: must be > 0 s and <= 3600 s")
        if not x > 0:
            raise InputError(f"--position={position}: must be > 0 (distance from the bridge saddle)")
        if not w >= 0:
            raise InputError(f"--aperture={aperture}: must be >= 0 (0 is a point)")
        if not 8000 <= sample_rate <= 384000:
            raise InputError(f"--sample-rate={sample_rate}: must be from 8000 to 384000 Hz; 48000 is usual")
        png_path = out.with_name(f"{out.stem}-spectrogram.png")
        targets = [out] + ([png_path] if spectrogram else [])
        for target in targets:
            if target.exists() and not overwrite:
                raise InputError(f"{target}: exists; pass --overwrite to replace it or choose another name")
            if not target.parent.is_dir():
                raise InputError(f"--out={out}: folder {target.parent} does not exist; create it first")
        p = load_phrase(phrase)
        if not x < p.instrument.scale_length:
            raise InputError(f"--position={position}: must be shorter than the scale length {p.instrument.scale_length * 1e3:g} mm")
        v = string_velocity(p, sample_rate=sample_rate, positions=[x], apertures=[w], seed=seed, seconds=length)[0]
        wav = float_wav_bytes(v, sample_rate)
        png = spectrogram_png(v, sample_rate, title=f"{p.title}: string velocity at {x * 1e3:g} mm") if spectrogram else None
        write_bytes(out, wav, overwrite=overwrite)
        if png is not None:
            try:
                write_bytes(png_path, png, overwrite=overwrite)
            except BaseException:
                out.unlink(missing_ok=True)  # both or neither
                raise
    except InputError as e:
        raise click.ClickException(str(e)) from None
    except OSError as e:
        raise click.ClickException(f"{out}: cannot write ({e.strerror or e}); check the folder and free space") from None
    peak = float(abs(v).max()) if v.size else 0.0
    note = "; above full scale (float samples keep it, but turn playback down)" if peak > 1.0 else ""
    extra = f" and {png_path}" if spectrogram else ""
    click.echo(f"wrote {out}{extra}: {v.size / sample_rate:.2f} s at {sample_rate} Hz, peak {peak:.3g} m/s (full scale 1 m/s){note}")
