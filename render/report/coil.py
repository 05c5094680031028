"""``render coil``'s plot: each coil's |Z| and phase over 20 Hz–20 kHz, with its self-resonance."""

from __future__ import annotations

import numpy as np

from .. import units as U
from .plots import PALETTE, STYLES, pyplot, save


def resonance_note(name: str, srf_hz: float | None, band_hz: tuple[float, float]) -> str:
    """What the plot says of a coil's self-resonance: its frequency, with an arrow when it lies off the band.

    ``"coil_a self-resonance 35 kHz →"`` above the band, ``"← coil_a self-resonance 12 Hz"``
    below it, ``"coil_a self-resonance 8.1 kHz"`` inside (the dotted line), and
    ``"coil_a: no self-resonance below 10 MHz"`` when there is none.
    """
    if srf_hz is None:
        return f"{name}: no self-resonance below 10 MHz"
    text = f"{name} self-resonance {U.format_si(srf_hz, 'Hz', 3)}"
    if srf_hz > band_hz[1]:
        return f"{text} →"
    if srf_hz < band_hz[0]:
        return f"← {text}"
    return text


def coil_plot(path, record: dict, *, overwrite: bool = False):
    """|Z| (log) and phase of coil_a and coil_b; the self-resonance marked where it lies in the band, and named (with an arrow when off it)."""
    plt = pyplot()
    fig, (ax_m, ax_p) = plt.subplots(2, 1, figsize=(8, 6), sharex=True)
    for k, (name, c) in enumerate(record["coils"].items()):
        f = np.asarray(c["frequency_hz"])
        label = f"{name} ({c['source']})"
        ax_m.loglog(f, c["magnitude_ohm"], color=PALETTE[k], ls=STYLES[k], lw=1.4, label=label)
        ax_p.semilogx(f, c["phase_deg"], color=PALETTE[k], ls=STYLES[k], lw=1.4, label=label)
        srf = c["self_resonance_hz"]
        if srf is not None and f[0] <= srf <= f[-1]:
            for ax in (ax_m, ax_p):
                ax.axvline(srf, color=PALETTE[k], ls=":", lw=1.0)
        # off the band, the resonance is said at the edge it lies beyond; in it, beside its dotted line
        note = resonance_note(name, srf, (float(f[0]), float(f[-1])))
        left = srf is not None and srf < f[0]
        ax_m.annotate(note, xy=(0.01 if left else 0.99, 0.05 + 0.08 * k), xycoords="axes fraction", ha="left" if left else "right", va="bottom", fontsize=8, color=PALETTE[k])
    ax_m.set_ylabel("|Z| (Ω)")
    ax_p.set_ylabel("phase (°)")
    ax_p.set_xlabel("frequency (Hz)")
    for ax in (ax_m, ax_p):
        ax.grid(True, which="both", color="#dddddd", linewidth=0.6)
    ax_m.legend(fontsize=8, frameon=False)
    fig.suptitle(f"{record['design']}: coil impedance at the terminals (dotted: self-resonance)", fontsize=11)
    fig.subplots_adjust(left=0.11, right=0.97, bottom=0.09, top=0.92, hspace=0.12)
    return save(fig, path, overwrite=overwrite)
