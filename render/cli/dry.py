"""``render dry PHRASE --out FILE.wav``: hear a phrase's string velocity at one point.

Writes the velocity as a 32-bit float WAV (a sample of 1.0 is 1 m/s) and,
unless ``--no-spectrogram``, a spectrogram PNG beside it
(``FILE-spectrogram.png``). Both files appear whole or not at all.
"""

from __future__ import annotations

import click

from .options import friendly, overwrite_option, sample_rate_option, warn
from .values import InFile, OutFile, Seed


def _quantity(name: str, value: str, kind) -> float:
    from ..errors import InputError
    from ..units import QuantityError, parse_quantity

    try:
        return parse_quantity(value, kind)
    except QuantityError as e:
        raise InputError(f"{name}={value}: {e}") from None


@click.command("dry")
@click.argument("phrase", type=InFile())
@click.option("--out", "out", required=True, type=OutFile("phrase.wav"), help="WAV file to write (32-bit float, 1.0 = 1 m/s).")
@click.option("--position", default="150mm", show_default=True, metavar="LENGTH", help='Sensing point, distance from the bridge saddle ("40mm", 0.15).')
@click.option("--aperture", default="0mm", show_default=True, metavar="LENGTH", help='Width of the sensing window along the string ("20mm").')
@sample_rate_option
@click.option("--seed", default=0, show_default=True, type=Seed(), help="Seed for the small per-note variations.")
@click.option("--seconds", default=None, metavar="TIME", help="Length to render (default: the phrase's own).")
@click.option("--spectrogram/--no-spectrogram", default=True, show_default=True, help="Also write FILE-spectrogram.png.")
@overwrite_option
@friendly
def dry_command(phrase, out, position, aperture, sample_rate, seed, seconds, spectrogram, overwrite):
    """Preview a phrase's string velocity at one sensing point as a WAV."""
    from ..runs.dry import preview_dry
    from ..units import TIME

    length = None if seconds is None else _quantity("--seconds", seconds, TIME)
    r = preview_dry(phrase, out, position=position, aperture=aperture, sample_rate=sample_rate, seed=seed, seconds=length, spectrogram=spectrogram, overwrite=overwrite)
    for text in r.warnings:
        warn(text)
    note = "; above full scale (float samples keep it, but turn playback down)" if r.peak_m_per_s > 1.0 else ""
    note += "; silent: no note sounds at this sensing point" if r.silent else ""
    extra = f" and {r.spectrogram}" if r.spectrogram else ""
    click.echo(f"wrote {r.wav}{extra}: {r.seconds:.2f} s at {r.sample_rate} Hz, peak {r.peak_m_per_s:.3g} m/s (full scale 1 m/s){note}")
