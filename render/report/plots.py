"""Plots (matplotlib, imported only here and only when a plot is asked for).

The look is the project's own: a dark ink for the design, a warm clay
dashed line for the passive reference, thin grid, frequency in Hz on a log
axis, level in dB.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np

from .atomic import write_bytes

INK = "#1d3557"
CLAY = "#b5651d"
MAX_COLUMNS = 1200  # spectrogram time columns at most
PALETTE = ["#1d3557", "#2a9d8f", "#e76f51", "#6a4c93", "#8ab17d", "#e9c46a", "#264653", "#9c6644"]


def _plt():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _hz_axis(ax, fmin, fmax):
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullLocator

    ax.set_xscale("log")
    ax.set_xlim(fmin, fmax)
    decades = np.arange(np.floor(np.log10(fmin)), np.ceil(np.log10(fmax)) + 1)
    ax.xaxis.set_major_locator(FixedLocator([10**d for d in decades]))
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v / 1000:g}k" if v >= 1000 else f"{v:g}"))
    # the minor grid as one collection of lines rather than minor ticks: a tick is five
    # artists, and on a log axis they cost most of a plot's time
    ax.xaxis.set_minor_locator(NullLocator())
    minors = [m * 10**d for d in decades for m in range(2, 10) if fmin < m * 10**d < fmax]
    ax.vlines(minors, 0, 1, transform=ax.get_xaxis_transform(), colors="#eeeeee", linewidth=0.4, zorder=0)
    ax.grid(True, which="major", color="#cccccc", linewidth=0.6)


def phase_deg(f, h):
    """Unwrapped phase (degrees), shifted by whole turns so it lies in (-180, 180] at 1 kHz."""
    ph = np.degrees(np.unwrap(np.angle(h)))
    ref = ph[int(np.argmin(np.abs(np.log(np.asarray(f) / 1000.0))))]
    return ph - 360.0 * np.round(ref / 360.0)


def save(fig, path, *, overwrite):
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110, metadata={"Software": None}, pil_kwargs={"compress_level": 1})
    _plt().close(fig)
    write_bytes(path, buf.getvalue(), overwrite=overwrite)
    return Path(path)


def response_plot(path, f, curves, *, passive=None, title="", overwrite=False):
    """Magnitude (dB) and phase (degrees) against frequency (Hz).

    ``curves`` is a list of (label, complex response (F,)); ``passive`` an
    optional (label, complex response) drawn dashed.
    """
    plt = _plt()
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(8, 6.2), sharex=True, gridspec_kw={"height_ratios": [3, 2]})
    for i, (label, h) in enumerate(curves):
        col = PALETTE[i % len(PALETTE)]
        ax1.plot(f, 20 * np.log10(np.abs(h)), color=col, lw=1.8, label=label)
        ax2.plot(f, phase_deg(f, h), color=col, lw=1.4)
    if passive is not None:
        label, h = passive
        ax1.plot(f, 20 * np.log10(np.abs(h)), color=CLAY, lw=1.4, ls="--", label=label)
        ax2.plot(f, phase_deg(f, h), color=CLAY, lw=1.1, ls="--")
    for ax in (ax1, ax2):
        _hz_axis(ax, f[0], f[-1])
    ax1.set_ylabel("level (dB re 1 V per m/s)")
    ax2.set_ylabel("phase (degrees)")
    from matplotlib.ticker import MultipleLocator

    ax2.yaxis.set_major_locator(MultipleLocator(90))
    ax2.set_xlabel("frequency (Hz)")
    ax1.legend(loc="lower center", fontsize=8, frameon=False, ncol=min(3, len(curves) + 1))
    if title:
        ax1.set_title(title, fontsize=10, loc="left")
    fig.subplots_adjust(left=0.1, right=0.98, bottom=0.09, top=0.94, hspace=0.06)  # fixed margins: tight_layout costs half the plot
    return save(fig, path, overwrite=overwrite)


def rejection_plot(path, f, curves, *, marks=(), overwrite=False):
    """Hum rejection (dB) against frequency, mains harmonics marked."""
    plt = _plt()
    fig, ax = plt.subplots(figsize=(8, 4.5))
    for i, (label, r) in enumerate(curves):
        ax.plot(f, r, color=PALETTE[i % len(PALETTE)], lw=1.8, label=label)
    for m in marks:
        ax.axvline(m, color=CLAY, lw=0.7, ls=":", alpha=0.8)
    _hz_axis(ax, f[0], f[-1])
    ax.set_xlabel("frequency (Hz); dotted: mains harmonics")
    ax.set_ylabel("hum rejection (dB)")
    ax.legend(fontsize=8, frameon=False)
    fig.subplots_adjust(left=0.11, right=0.98, bottom=0.12, top=0.92)
    return save(fig, path, overwrite=overwrite)


def histogram_plot(path, values, *, xlabel, title="", overwrite=False):
    """Histogram of Monte Carlo results with the median and 5th percentile marked."""
    plt = _plt()
    fig, ax = plt.subplots(figsize=(7, 4))
    ax.hist(values, bins=50, color=PALETTE[1], alpha=0.85)
    for q, ls, name in ((50, "-", "median"), (5, "--", "5th percentile")):
        v = np.percentile(values, q)
        ax.axvline(v, color=INK, ls=ls, lw=1.2, label=f"{name} {v:.1f} dB")
    ax.set_xlabel(xlabel)
    ax.set_ylabel("trials")
    ax.legend(fontsize=8, frameon=False)
    if title:
        ax.set_title(title, fontsize=10, loc="left")
    fig.subplots_adjust(left=0.11, right=0.98, bottom=0.12, top=0.92)
    return save(fig, path, overwrite=overwrite)


def spectrum_plot(path, curves, *, title="", overwrite=False):
    """Long-term average spectra: ``curves`` is a list of (label, f (F,), level dB (F,), dashed)."""
    plt = _plt()
    fig, ax = plt.subplots(figsize=(8, 4.5))
    for i, (label, f, lv, dashed) in enumerate(curves):
        sel = f > 0
        ax.plot(f[sel], lv[sel], color=CLAY if dashed else PALETTE[i % len(PALETTE)], lw=1.2 if dashed else 1.5, ls="--" if dashed else "-", label=label)
    band = [lv[(f >= 20) & (f <= 20000)] for _, f, lv, _ in curves]
    top = max(float(np.max(x)) for x in band if x.size) if any(x.size for x in band) else 0.0
    ax.set_ylim(top - 100, top + 5)  # 100 dB of range below the loudest band
    _hz_axis(ax, 20, 20000)
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("level (dB re 1 V²/Hz)")
    ax.legend(fontsize=8, frameon=False)
    if title:
        ax.set_title(title, fontsize=10, loc="left")
    fig.subplots_adjust(left=0.11, right=0.98, bottom=0.12, top=0.92)
    return save(fig, path, overwrite=overwrite)


def spectrogram_plot(path, samples, *, sample_rate, title="", unit="V", overwrite=False):
    """Spectrogram (dB) on a log-frequency axis, 40 Hz to 20 kHz."""
    plt = _plt()
    x = np.asarray(samples, float)
    seg = 2048 if x.size >= 2048 else max(64, x.size)
    hop = max(seg // 4, -(-x.size // MAX_COLUMNS))  # at most MAX_COLUMNS columns: a long clip stays light
    starts = np.arange(0, max(x.size - seg, 0) + 1, hop)
    w = np.hanning(seg + 1)[:-1]
    f = np.fft.rfftfreq(seg, 1 / sample_rate)
    s = np.empty((f.size, starts.size))
    for c in range(0, starts.size, 128):  # a few columns at a time (power density, one-sided)
        idx = starts[c : c + 128, None] + np.arange(seg)[None, :]
        s[:, c : c + 128] = (np.abs(np.fft.rfft(x[idx] * w, axis=1)) ** 2).T * (2.0 / (sample_rate * np.sum(w * w)))
    t = (starts + seg / 2) / sample_rate
    level = 10 * np.log10(np.maximum(s, 1e-30))
    top = level.max() if level.size else 0.0
    # resample onto log-spaced rows and draw as an image: light to draw however long the clip
    fmax = min(20000.0, sample_rate / 2)
    rows = np.geomspace(40.0, fmax, 320)
    img = np.empty((rows.size, level.shape[1]))
    for j in range(level.shape[1]):
        img[:, j] = np.interp(rows, f, level[:, j])
    fig, ax = plt.subplots(figsize=(8, 4.2))
    t0, t1 = (t[0], t[-1]) if t.size > 1 else (0.0, x.size / sample_rate)
    mesh = ax.imshow(img, origin="lower", aspect="auto", cmap="magma", vmin=top - 90, vmax=top, extent=[t0, t1, np.log10(40.0), np.log10(fmax)], interpolation="nearest")
    ticks = [v for v in (50, 100, 200, 500, 1000, 2000, 5000, 10000, 20000) if v <= fmax]
    ax.set_yticks(np.log10(ticks))
    ax.set_yticklabels([f"{v / 1000:g}k" if v >= 1000 else f"{v:g}" for v in ticks])
    ax.set_xlabel("time (s)")
    ax.set_ylabel("frequency (Hz)")
    fig.colorbar(mesh, ax=ax, label=f"dB re 1 {unit}²/Hz")
    if title:
        ax.set_title(title, fontsize=10, loc="left")
    fig.subplots_adjust(left=0.1, right=1.0, bottom=0.12, top=0.92)
    return save(fig, path, overwrite=overwrite)


def overlay_plot(path, f, curves, passives, *, overwrite=False):
    """Every design's magnitude response, the passive references dashed."""
    plt = _plt()
    fig, ax = plt.subplots(figsize=(9, 5))
    for i, (label, h) in enumerate(curves):
        ax.plot(f, 20 * np.log10(np.abs(h)), color=PALETTE[i % len(PALETTE)], lw=1.6, label=label)
    for label, h in passives:
        ax.plot(f, 20 * np.log10(np.abs(h)), color=CLAY, lw=1.1, ls="--", label=label)
    _hz_axis(ax, f[0], f[-1])
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("level (dB re 1 V per m/s)")
    ax.legend(fontsize=8, frameon=False, ncol=2)
    ax.set_title("string velocity to amp input, every design", fontsize=10, loc="left")
    fig.subplots_adjust(left=0.11, right=0.98, bottom=0.12, top=0.92)
    return save(fig, path, overwrite=overwrite)


def lines_plot(path, x, series, *, xlabel, ylabel, title="", overwrite=False):
    """Simple line plot: ``series`` is a list of (label, y (len(x),), dashed)."""
    plt = _plt()
    fig, ax = plt.subplots(figsize=(7.5, 4.2))
    for i, (label, y, dashed) in enumerate(series):
        ax.plot(x, y, marker="o", ms=4, color=PALETTE[i % len(PALETTE)], lw=1.6, ls="--" if dashed else "-", label=label)
    ax.grid(True, color="#dddddd", linewidth=0.6)
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    ax.legend(fontsize=8, frameon=False)
    if title:
        ax.set_title(title, fontsize=10, loc="left")
    fig.subplots_adjust(left=0.11, right=0.98, bottom=0.12, top=0.92)
    return save(fig, path, overwrite=overwrite)


def transfer_plot(path, curves, *, title="", overwrite=False):
    """The soft limit's transfer curve(s) with bias points marked.

    ``curves``: list of (label, x (V), y (V), [(bias_v, point_label), …]).
    """
    plt = _plt()
    fig, ax = plt.subplots(figsize=(7, 5))
    for i, (label, x, y, points) in enumerate(curves):
        col = PALETTE[i % len(PALETTE)]
        ax.plot(x, y, color=col, lw=1.8, label=label)
        for b, plabel in points:
            ax.plot([b], [b], "o", color=col, ms=5)
            ax.annotate(plabel, (b, b), textcoords="offset points", xytext=(6, -12), fontsize=7, color=col)
    ax.plot([x[0], x[-1]], [x[0], x[-1]], color="#bbbbbb", lw=0.8, ls=":")
    ax.grid(True, color="#dddddd", linewidth=0.6)
    ax.set_xlabel("op-amp output, linear (V)")
    ax.set_ylabel("op-amp output, limited (V)")
    ax.legend(fontsize=8, frameon=False, loc="upper left")
    if title:
        ax.set_title(title, fontsize=10, loc="left")
    fig.tight_layout()
    return save(fig, path, overwrite=overwrite)
