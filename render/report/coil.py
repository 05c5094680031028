"""``render coil``'s plot: each coil's |Z| and phase over 20 Hz–20 kHz, with its self-resonance."""

from __future__ import annotations

import numpy as np

from .plots import PALETTE, STYLES, pyplot, save


def coil_plot(path, record: dict, *, overwrite: bool = False):
    """|Z| (log) and phase of coil_a and coil_b; the self-resonance marked where it lies in the band."""
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
    ax_m.set_ylabel("|Z| (Ω)")
    ax_p.set_ylabel("phase (°)")
    ax_p.set_xlabel("frequency (Hz)")
    for ax in (ax_m, ax_p):
        ax.grid(True, which="both", color="#dddddd", linewidth=0.6)
    ax_m.legend(fontsize=8, frameon=False)
    fig.suptitle(f"{record['design']}: coil impedance at the terminals (dotted: self-resonance)", fontsize=11)
    fig.subplots_adjust(left=0.11, right=0.97, bottom=0.09, top=0.92, hspace=0.12)
    return save(fig, path, overwrite=overwrite)
