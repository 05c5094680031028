"""Plots (matplotlib, imported only here and only when a plot is asked for).

The look is the project's own: a dark ink for the design, a warm clay
dashed line for the passive reference, thin grid, frequency in Hz on a log
axis, level in dB.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np

from ..io.atomic import write_bytes

INK = "#1d3557"
CLAY = "#b5651d"
MAX_COLUMNS = 1200  # spectrogram time columns at most
# A signal whose peak is below this (in its own unit, V or m/s) is silent: a spectrogram draws no image for it
# (its levels would be float round-off, shown on a scale of their own as if loud). Far below any signal here:
# a 1 kΩ resistor's thermal noise over 20 kHz is 0.57 µV rms (4kTRB, Johnson-Nyquist) (common practice, no source).
SILENT_PEAK = 1e-12
PALETTE = ["#1d3557", "#2a9d8f", "#e76f51", "#6a4c93", "#8ab17d", "#e9c46a", "#c9184a", "#9c6644"]  # eight colours far enough apart to tell on a line


# line styles for curves beyond the palette's length, and for several passive references
STYLES = ["-", (0, (6, 1.5)), (0, (1.2, 1.2)), "-."]
PASSIVE_STYLES = ["--", (0, (8, 2, 1.5, 2)), (0, (2, 2)), (0, (4, 1.5, 1, 1.5, 1, 1.5))]


def curve_style(i: int) -> dict:
    """Colour and line style of the i-th design curve: the palette, then again with another line style."""
    return {"color": PALETTE[i % len(PALETTE)], "ls": STYLES[(i // len(PALETTE)) % len(STYLES)]}


def passive_style(j: int) -> dict:
    """The j-th passive reference: clay, with a dash pattern of its own."""
    return {"color": CLAY, "ls": PASSIVE_STYLES[j % len(PASSIVE_STYLES)]}


def pyplot():
    """matplotlib.pyplot with the non-interactive Agg backend (imported on first use)."""
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


def _fix_title(ax, title):
    """A left title at a fixed place: the automatic placement measures every tick label first."""
    return ax.set_title(title, fontsize=10, loc="left", y=1.0, pad=5)


def phase_deg(f, h):
    """Unwrapped phase (degrees), shifted by whole turns so it lies in (-180, 180] at 1 kHz."""
    ph = np.degrees(np.unwrap(np.angle(h)))
    ref = ph[int(np.argmin(np.abs(np.log(np.asarray(f) / 1000.0))))]
    return ph - 360.0 * np.round(ref / 360.0)


def png_bytes(fig, *, keep=False) -> bytes:
    """``fig`` as PNG (no timestamp or software tag: the same plot is the same file); closed unless ``keep``."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110, metadata={"Software": None}, pil_kwargs={"compress_level": 1})
    if not keep:
        pyplot().close(fig)
    return buf.getvalue()


def save(fig, path, *, overwrite, keep=False):
    """Write ``fig`` to ``path`` as PNG (see :func:`png_bytes`)."""
    write_bytes(path, png_bytes(fig, keep=keep), overwrite=overwrite)
    return Path(path)


def _range(values, *, pad=0.05):
    """(low, high) of the finite values with ``pad`` of the span either side, as autoscaling would give."""
    v = np.concatenate([np.ravel(x) for x in values])
    v = v[np.isfinite(v)]
    if not v.size:
        return -1.0, 1.0
    lo, hi = float(v.min()), float(v.max())
    span = hi - lo if hi > lo else max(1.0, abs(hi))
    return lo - pad * span, hi + pad * span


def _response_build(f, n, passive, title):
    plt = pyplot()
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(8, 6.2), sharex=True, gridspec_kw={"height_ratios": [3, 2]})
    mags, phases = [], []
    for i in range(n):
        mags += ax1.plot(f, np.zeros_like(f), lw=1.8, label=" ", **curve_style(i))
        phases += ax2.plot(f, np.zeros_like(f), lw=1.4, **curve_style(i))
    if passive:
        mags += ax1.plot(f, np.zeros_like(f), lw=1.4, label=" ", **passive_style(0))
        phases += ax2.plot(f, np.zeros_like(f), lw=1.1, **passive_style(0))
    for ax in (ax1, ax2):
        _hz_axis(ax, f[0], f[-1])
    ax1.set_ylabel("level (dB re 1 V per m/s)")
    ax2.set_ylabel("phase (degrees)")
    from matplotlib.ticker import MultipleLocator

    ax2.yaxis.set_major_locator(MultipleLocator(90))
    ax2.set_xlabel("frequency (Hz)")
    legend = ax1.legend(loc="lower center", fontsize=8, frameon=False, ncol=min(3, n + 1))
    fig.subplots_adjust(left=0.1, right=0.98, bottom=0.09, top=0.94, hspace=0.06)  # fixed margins: tight_layout costs half the plot
    return {"fig": fig, "axes": (ax1, ax2), "mags": mags, "phases": phases, "legend": legend, "title": _fix_title(ax1, " ") if title else None}


def plot_level_db(h) -> np.ndarray:
    """20·log10|h| for plotting; NaN (a gap in the curve) where h is exactly zero (coils that cancel the signal)."""
    a = np.abs(np.asarray(h))
    with np.errstate(divide="ignore"):
        return np.where(a > 0, 20 * np.log10(a), np.nan)


def _response_fill(p, f, curves, passive, title):
    """Everything that differs from one response plot to the next: data, limits, labels, title."""
    every = list(curves) + ([passive] if passive is not None else [])
    mags = [plot_level_db(h) for _, h in every]
    phases = [phase_deg(f, h) for _, h in every]
    for line, y in zip(p["mags"], mags):
        line.set_ydata(y)
    for line, y in zip(p["phases"], phases):
        line.set_ydata(y)
    for text, (label, _) in zip(p["legend"].get_texts(), every):
        text.set_text(label)
    ax1, ax2 = p["axes"]
    ax1.set_ylim(*_range(mags))
    ax2.set_ylim(*_range(phases))
    if p["title"] is not None:
        p["title"].set_text(title)


def response_plot(path, f, curves, *, passive=None, title="", overwrite=False, kept=None):
    """Magnitude (dB) and phase (degrees) against frequency (Hz).

    ``curves`` is a list of (label, complex response (F,)); ``passive`` an
    optional (label, complex response) drawn dashed. ``kept`` (a
    :class:`KeptFigures`) reuses a figure drawn before with the same layout.
    """
    f = np.asarray(f, float)
    key = ("response", len(curves), passive is not None, bool(title), f.size, float(f[0]), float(f[-1]))
    return _draw(kept, key, lambda: _response_build(f, len(curves), passive is not None, title), lambda p: _response_fill(p, f, curves, passive, title), path, overwrite)


class KeptFigures:
    """Figures kept to be drawn again: ticks, axes and text are made once per layout.

    Filling a kept figure sets everything that differs from one plot to the
    next, so a plot drawn on a kept figure is the same image as one drawn on
    a new figure. One per batch of plots (say, a worker's share of a run);
    :meth:`close` (or leaving its ``with`` block) frees them.
    """

    def __init__(self):
        self._kept = {}

    def get(self, key, build):
        if key not in self._kept:
            self._kept[key] = build()
        return self._kept[key]

    def close(self):
        for p in self._kept.values():
            pyplot().close(p["fig"])
        self._kept.clear()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False


def _draw(kept, key, build, fill, path, overwrite):
    """Build (or reuse from ``kept``) a figure, fill it, and write it to ``path`` as PNG."""
    if kept is None:
        p = build()
        fill(p)
        return save(p["fig"], path, overwrite=overwrite)
    p = kept.get(key, build)
    fill(p)
    return save(p["fig"], path, overwrite=overwrite, keep=True)


def rejection_plot(path, f, curves, *, marks=(), overwrite=False):
    """Hum rejection (dB) against frequency, mains harmonics marked."""
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(8, 4.5))
    for i, (label, r) in enumerate(curves):
        ax.plot(f, r, lw=1.8, label=label, **curve_style(i))
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
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(7, 4))
    ax.hist(values, bins=50, color=PALETTE[1], alpha=0.85)
    for q, ls, name in ((50, "-", "median"), (5, "--", "5th percentile")):
        v = np.percentile(values, q)
        ax.axvline(v, color=INK, ls=ls, lw=1.2, label=f"{name} {v:.1f} dB")
    ax.set_xlabel(xlabel)
    ax.set_ylabel("trials")
    ax.legend(fontsize=8, frameon=False)
    if title:
        _fix_title(ax, title)
    fig.subplots_adjust(left=0.11, right=0.98, bottom=0.12, top=0.92)
    return save(fig, path, overwrite=overwrite)


def _spectrum_build(dashed, title):
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(8, 4.5))
    lines = []
    for i, d in enumerate(dashed):
        lines += ax.plot([20.0], [0.0], lw=1.2 if d else 1.5, label=" ", **(passive_style(0) if d else curve_style(i)))
    _hz_axis(ax, 20, 20000)
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("level (dB re 1 V²/Hz)")
    legend = ax.legend(fontsize=8, frameon=False)
    fig.subplots_adjust(left=0.11, right=0.98, bottom=0.12, top=0.92)
    return {"fig": fig, "axes": (ax,), "lines": lines, "legend": legend, "title": _fix_title(ax, " ") if title else None}


def _spectrum_fill(p, curves, title):
    for line, text, (label, f, lv, _) in zip(p["lines"], p["legend"].get_texts(), curves):
        sel = f > 0
        line.set_data(f[sel], lv[sel])
        text.set_text(label)
    band = [lv[(f >= 20) & (f <= 20000)] for _, f, lv, _ in curves]
    top = max(float(np.max(x)) for x in band if x.size) if any(x.size for x in band) else 0.0
    p["axes"][0].set_ylim(top - 100, top + 5)  # 100 dB of range below the loudest band
    if p["title"] is not None:
        p["title"].set_text(title)


def spectrum_plot(path, curves, *, title="", overwrite=False, kept=None):
    """Long-term average spectra: ``curves`` is a list of (label, f (F,), level dB (F,), dashed).

    ``kept`` (a :class:`KeptFigures`) reuses a figure drawn before with the same layout.
    """
    dashed = tuple(bool(c[3]) for c in curves)
    return _draw(kept, ("spectrum", dashed, bool(title)), lambda: _spectrum_build(dashed, title), lambda p: _spectrum_fill(p, curves, title), path, overwrite)


def spectrogram_image(samples, *, sample_rate):
    """Spectrogram (dB re 1 unit²/Hz) resampled onto 320 log-spaced rows from 40 Hz to min(20 kHz, Nyquist).

    Returns (image (320, columns), (t0, t1) s, fmax Hz, top dB). At most
    ``MAX_COLUMNS`` columns: a long clip stays light to draw.
    """
    x = np.asarray(samples, float)
    seg = 2048 if x.size >= 2048 else max(64, x.size)
    if x.size < seg:  # a clip shorter than one frame: one frame, zero-padded
        x = np.concatenate([x, np.zeros(seg - x.size)])
    hop = max(seg // 4, -(-x.size // MAX_COLUMNS))
    starts = np.arange(0, max(x.size - seg, 0) + 1, hop)
    from ..analysis.spectrum import spectrogram_columns

    fmax = min(20000.0, sample_rate / 2)
    rows = np.geomspace(40.0, fmax, 320)
    img = np.empty((rows.size, starts.size))
    for c in range(0, starts.size, 128):  # a few columns at a time
        idx = starts[c : c + 128, None] + np.arange(seg)[None, :]
        img[:, c : c + 128] = spectrogram_columns(x[idx], sample_rate=sample_rate, rows_hz=rows)
    t = (starts + seg / 2) / sample_rate
    top = float(img.max()) if img.size else 0.0
    span = (float(t[0]), float(t[-1])) if t.size > 1 else (0.0, x.size / sample_rate)
    return img, span, fmax, top


def silent(samples) -> bool:
    """Whether ``samples`` never reach :data:`SILENT_PEAK` (an empty signal is silent)."""
    x = np.asarray(samples, float)
    return not (x.size and float(np.max(np.abs(x))) >= SILENT_PEAK)


def squared(unit: str) -> str:
    """``unit`` squared as a label writes it: "V²", "(m/s)²" (a compound unit in brackets)."""
    return f"({unit})²" if any(c in unit for c in "/·* ") else f"{unit}²"


def _spectrogram_build(fmax, unit, title):
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(8, 4.2))
    mesh = ax.imshow(np.zeros((2, 2)), origin="lower", aspect="auto", cmap="magma", vmin=-90, vmax=0, extent=[0, 1, np.log10(40.0), np.log10(fmax)], interpolation="nearest")
    ticks = [v for v in (50, 100, 200, 500, 1000, 2000, 5000, 10000, 20000) if v <= fmax]
    ax.set_yticks(np.log10(ticks))
    ax.set_yticklabels([f"{v / 1000:g}k" if v >= 1000 else f"{v:g}" for v in ticks])
    ax.set_xlabel("time (s)")
    ax.set_ylabel("frequency (Hz)")
    fig.colorbar(mesh, ax=ax, label=f"dB re 1 {squared(unit)}/Hz")
    fig.subplots_adjust(left=0.1, right=1.0, bottom=0.12, top=0.92)
    note = ax.text(0.5, 0.5, "", transform=ax.transAxes, ha="center", va="center", fontsize=11, color=INK)
    return {"fig": fig, "axes": (ax,), "mesh": mesh, "title": _fix_title(ax, " ") if title else None, "note": note}


def _spectrogram_fill(p, image, title, quiet=""):
    """Fill a spectrogram figure; ``quiet`` (the words for a silent signal) blanks the image and says so."""
    img, (t0, t1), fmax, top = image
    p["mesh"].set_data(np.full_like(img, np.nan) if quiet else img)
    p["mesh"].set_extent([t0, t1, np.log10(40.0), np.log10(fmax)])
    p["mesh"].set_clim(*((-90, 0) if quiet else (top - 90, top)))
    p["note"].set_text(quiet)
    if p["title"] is not None:
        p["title"].set_text(f"{title} (silent)" if quiet else title)


def spectrogram_plot(path, samples, *, sample_rate, title="", unit="V", overwrite=False, kept=None):
    """Spectrogram (dB) on a log-frequency axis, 40 Hz to 20 kHz (see :func:`spectrogram_image`).

    A :func:`silent` signal is drawn as an empty plot that says so. ``kept`` (a :class:`KeptFigures`)
    reuses a figure drawn before with the same layout.
    """
    image = spectrogram_image(samples, sample_rate=sample_rate)
    fmax = image[2]
    quiet = f"silent: the peak is below {SILENT_PEAK:g} {unit}" if silent(samples) else ""
    return _draw(kept, ("spectrogram", fmax, unit, bool(title)), lambda: _spectrogram_build(fmax, unit, title), lambda p: _spectrogram_fill(p, image, title, quiet), path, overwrite)


def curves_overlay_png(f, curves, passives) -> bytes:
    """PNG of every design's magnitude response, ``curves`` and ``passives`` lists of (label, complex response (F,)), the passives dashed."""
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(9, 5))
    for i, (label, h) in enumerate(curves):
        ax.plot(f, plot_level_db(h), lw=1.6, label=label, **curve_style(i))
    for j, (label, h) in enumerate(passives):
        ax.plot(f, plot_level_db(h), lw=1.1, label=label, **passive_style(j))
    _hz_axis(ax, f[0], f[-1])
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("level (dB re 1 V per m/s)")
    ax.legend(fontsize=8, frameon=False, ncol=2)
    _fix_title(ax, "string velocity to amp input, every design")
    fig.subplots_adjust(left=0.11, right=0.98, bottom=0.12, top=0.92)
    return png_bytes(fig)


def lines_plot(path, x, series, *, xlabel, ylabel, title="", overwrite=False, floor=None, mark=None):
    """Simple line plot: ``series`` is a list of (label, y (len(x),), dashed); ``floor``: the y axis stops there when the
    data go below it, and a point below it is drawn at the floor as a downward triangle (its value is in the table);
    ``mark``: (x, label) drawn as a thin vertical line (the design's own setting)."""
    return save(lines_figure(x, series, xlabel=xlabel, ylabel=ylabel, title=title, floor=floor, mark=mark), path, overwrite=overwrite)


def lines_figure(x, series, *, xlabel, ylabel, title="", floor=None, mark=None):
    """The figure of :func:`lines_plot`, not yet written."""
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(7.5, 4.2))
    if mark is not None:
        ax.axvline(mark[0], color="#666666", lw=1.2, ls=(0, (1, 2)), label=mark[1], zorder=1)
    low = min((float(np.nanmin(np.asarray(y, dtype=float))) for _, y, _ in series if np.any(np.isfinite(np.asarray(y, dtype=float)))), default=None)
    clip = floor is not None and low is not None and low < floor
    xs = np.asarray(x, dtype=float)
    below_labelled = False
    for i, (label, y, dashed) in enumerate(series):
        colour = PALETTE[i % len(PALETTE)]
        y = np.asarray(y, dtype=float)
        under = clip & (y < floor) if clip else np.zeros(y.shape, bool)
        shown_y = np.where(under, floor, y)
        ax.plot(xs, shown_y, marker="o", ms=4, color=colour, lw=1.6, ls="--" if dashed else STYLES[(i // len(PALETTE)) % len(STYLES)], label=label, markevery=np.flatnonzero(~under).tolist())
        if np.any(under):
            ax.plot(xs[under], shown_y[under], ls="none", marker="v", ms=7, color=colour, clip_on=False, zorder=3, label=None if below_labelled else f"below {floor:g}: drawn at the floor")
            below_labelled = True
    ax.grid(True, color="#dddddd", linewidth=0.6)
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    ax.legend(fontsize=8, frameon=False)
    if clip:
        top = ax.get_ylim()[1]
        ax.set_ylim(floor, max(top, floor + 10))
    if title:
        _fix_title(ax, title)
    fig.subplots_adjust(left=0.11, right=0.98, bottom=0.12, top=0.92)
    return fig


def transfer_plot(path, curves, *, title="", overwrite=False, reference_label="output stage alone"):
    """Transfer curve(s) from the linear op-amp output to the output, with bias points marked.

    ``curves``: list of (label, x (V), y (V), [(bias_v, point_label), …]) or, with a reference curve
    drawn dashed in the same colour (``reference_label`` in the legend, once),
    (label, x, y, points, y_reference (V)).
    """
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(7, 5))
    for i, (label, x, y, points, *reference) in enumerate(curves):
        col = PALETTE[i % len(PALETTE)]
        ax.plot(x, y, color=col, lw=1.8, label=label)
        if reference:
            ax.plot(x, reference[0], color=col, lw=1.0, ls="--", label=reference_label if i == 0 else None)
        # curves take turns: labels below right of the point, then above left, so neighbours' labels do not overlap
        below = i % 2 == 0
        for b, plabel in points:
            at = float(np.interp(b, x, y))  # the output the bias gives: on the curve, a rail where the bias lies past it
            ax.plot([b], [at], "o", color=col, ms=5)
            ax.annotate(plabel, (b, at), textcoords="offset points", xytext=(7, -11) if below else (-7, 5), ha="left" if below else "right", fontsize=7, color=col)
    ax.plot([x[0], x[-1]], [x[0], x[-1]], color="#bbbbbb", lw=0.8, ls=":")
    ax.grid(True, color="#dddddd", linewidth=0.6)
    ax.set_xlabel("op-amp output, linear (V)")
    ax.set_ylabel("op-amp output (V)")
    ax.legend(fontsize=8, frameon=False, loc="upper left")
    if title:
        _fix_title(ax, title)
    fig.tight_layout()
    return save(fig, path, overwrite=overwrite)


def noise_title(r) -> str:
    """The noise plot's title, a sentence: the SNRs, or, where the coils cancel the signal, that there is none and why."""
    a, p = r.active, r.passive
    active = f"SNR {a.snr_db:.1f} dB" if a.snr_db is not None else "no SNR: the coils cancel the string signal"
    if p.snr_db is not None:
        passive = f"passive reference {p.snr_db:.1f} dB"
    else:
        passive = "passive reference: no SNR either, its coils cancel the signal too" if a.snr_db is None else "passive reference: no SNR, its coils cancel the signal"
    return f"{r.design}: noise floor at {r.temperature_k:g} K, {active}\n({passive})"


def noise_plot(path, r, *, top: int, overwrite: bool = False):
    """Density (nV/√Hz, log axes) of the design, its largest contributors and the passive reference."""
    plt = pyplot()
    a, p = r.active, r.passive
    f = a.frequency_hz
    fig, ax = plt.subplots(figsize=(8, 5.2))
    ax.plot(f, a.density_v_per_rthz * 1e9, color=INK, lw=2.0, label=f"{r.design}: total {a.total_v * 1e6:.3g} µV rms, 20 Hz–20 kHz")
    for i, c in enumerate(a.contributors[:top]):
        ax.plot(f, a.contributor_density[c.key] * 1e9, color=PALETTE[(i + 1) % len(PALETTE)], lw=1.1, label=f"  {c.key} ({100 * c.share:.0f} %)")
    ax.plot(f, p.density_v_per_rthz * 1e9, color=CLAY, lw=1.5, ls="--", label=f"passive reference: total {p.total_v * 1e6:.3g} µV rms, 20 Hz–20 kHz")
    _hz_axis(ax, f[0], f[-1])
    ax.set_yscale("log")
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("noise density at the amp input (nV/√Hz)")
    ax.set_title(noise_title(r), fontsize=10, loc="left")
    ax.legend(loc="lower left", fontsize=8, frameon=False)
    fig.tight_layout()
    return save(fig, path, overwrite=overwrite)


def hum_rejection_plot(path, designs, *, overwrite: bool = False):
    """Rejection against frequency (20 Hz–20 kHz) of every design, its mains harmonics marked."""
    from ..analysis.hum import rejection_curve

    f = np.geomspace(20, 20000, 600)
    curves = rejection_curve(designs, f)
    marks = sorted({h * d.hum.mains for d in designs for h in range(1, len(d.hum.harmonics) + 1)})
    return rejection_plot(path, f, [(d.name, c) for d, c in zip(designs, curves)], marks=marks, overwrite=overwrite)


HARMONICS_FLOOR_DB = -100.0  # harmonic levels below this are shown at the axis' floor (common practice, no source)


def bias_plots(out, design, settings_list, rows) -> None:
    """Headroom and harmonics against the divider ratio, and the closed loop's low-frequency transfer
    (what the render renders; the output stage's own window dashed) with each bias point marked."""

    from ..chain.limit import design_window, soft_limit
    from ..chain.loop import static_loop_gain, static_transfer

    stem = design.stem
    batteries = sorted({r["battery_v"] for r in rows})
    series_h, series_d = [], []
    for v in batteries:
        sel = [r for r in rows if r["battery_v"] == v]
        xs = [r["ratio"] for r in sel]
        series_h += [(f"up, {v:g} V", [r["headroom_up_v"] for r in sel], False), (f"down, {v:g} V", [r["headroom_down_v"] for r in sel], True)]
        nan = float("nan")  # no output there: a gap in the line
        series_d += [
            (f"H2, {v:g} V", [nan if r["sine"]["h2_db"] is None else r["sine"]["h2_db"] for r in sel], False),
            (f"H3, {v:g} V", [nan if r["sine"]["h3_db"] is None else r["sine"]["h3_db"] for r in sel], True),
        ]
    from ..analysis.bias_labels import own_ratio

    own = own_ratio(design)
    mark = (own, f"the design's own ratio, {own:.4g}") if min(xs) <= own <= max(xs) else None
    lines_plot(
        out / f"{stem}-headroom.png", xs, series_h, xlabel="divider ratio bottom/(top+bottom)", ylabel="headroom (V)", title=f"{design.name}: headroom against the divider", overwrite=True, mark=mark
    )
    lines_plot(
        out / f"{stem}-harmonics.png",
        xs,
        series_d,
        xlabel="divider ratio bottom/(top+bottom)",
        ylabel="level re fundamental (dB)",
        title=f"{design.name}: 1 kHz sine harmonics",
        overwrite=True,
        floor=HARMONICS_FLOOR_DB,
        mark=mark,
    )
    curves = []
    for v in batteries:
        sel = [(s, r) for s, r in zip(settings_list, rows) if r["battery_v"] == v]
        d = sel[0][0].design
        win = design_window(d)
        xx = np.linspace(0, v, 800)
        marks = [(r["bias_v"], r["setting"].split(",")[0].removeprefix("ratio ")) for _, r in sel]
        curves.append((f"{v:g} V battery (closed loop)", xx, static_transfer(xx, window=win, loop_gain=static_loop_gain(d)), marks, soft_limit(xx, window=win)))
    transfer_plot(out / f"{stem}-transfer.png", curves, title=f"{design.name}: the output as rendered (closed loop, low frequency), bias points marked", overwrite=True)


def fit_plot(path, designs, *, title: str = ""):
    """The start's response (first design) and each fit result's, 20 Hz–20 kHz."""
    from ..analysis.response import response

    f = np.geomspace(20, 20000, 500)
    h = [response(d, f).velocity for d in designs]
    curves = [("start: " + designs[0].name, h[0])] + [(f"fit {i}", h[i]) for i in range(1, len(designs))]
    return response_plot(path, f, curves, title=title, overwrite=True)


def rejection_map_plot(path, m, *, harmonic: int = 1, title: str = "", overwrite: bool = False):
    """A hum rejection map: one cell per distance and bearing, shaded and labelled in dB at one harmonic.

    m : a :class:`render.magnetics.rejection.RejectionMap`; harmonic : 1 for the fundamental
    Clay where the coils cancel least, ink where they cancel most; an empty cell has no hum, a cell
    marked "exact" cancels exactly (no finite rejection); a harmonic the room lacks is said in words over the empty cells.
    """
    from matplotlib.colors import LinearSegmentedColormap

    from ..analysis.undefined import REJECTION_CAP_DB

    plt = pyplot()
    raw = np.asarray(m.rejection_db[:, :, harmonic - 1], dtype=float)
    exact = np.isfinite(raw) & (raw >= REJECTION_CAP_DB)
    r = np.where(np.isfinite(raw) & ~exact, raw, np.nan)
    cmap = LinearSegmentedColormap.from_list("rejection", [CLAY, "#f4ecd8", INK])
    fig, ax = plt.subplots(figsize=(9, 4.8))
    ny, nx = r.shape
    lo, hi = (np.nanmin(r), np.nanmax(r)) if np.isfinite(r).any() else (0.0, 1.0)
    im = ax.imshow(r, cmap=cmap, vmin=lo, vmax=max(hi, lo + 1.0), aspect="auto", origin="lower", interpolation="nearest")
    for i in range(ny):
        for j in range(nx):
            if np.isfinite(r[i, j]):
                dark = (r[i, j] - lo) / max(hi - lo, 1e-9)
                ax.text(j, i, f"{round(float(r[i, j]))}", ha="center", va="center", fontsize=7, color="white" if dark < 0.2 or dark > 0.8 else "#222222")  # an int: never "-0"
            elif exact[i, j]:
                ax.text(j, i, "exact", ha="center", va="center", fontsize=6, color="#222222")
    absent = m.absent[harmonic - 1] if harmonic - 1 < len(m.absent) else None
    if absent is not None:  # the room has no field at this harmonic: say so over the empty cells
        ax.text(0.5, 0.5, f"no field at this harmonic ({absent}),\nso no hum to reject", transform=ax.transAxes, ha="center", va="center", fontsize=11, color="#222222")
    ax.set_xticks(range(nx), [f"{b:g}°" for b in m.bearing_deg], fontsize=8)
    ax.set_yticks(range(ny), [f"{d:g} m" for d in m.distance_m], fontsize=8)
    where = "x–y plane (top faces): 0° neck side, 90° treble side" if m.plane == "xy" else "x–z plane (along the strings): 0° neck side, 90° straight above"
    ax.set_xlabel(f"bearing in the {where}")
    ax.set_ylabel("distance from the pickup's centre")
    fig.colorbar(im, ax=ax, label="rejection (dB)", fraction=0.04, pad=0.02)
    _fix_title(ax, title or f"rejection of a dipole source (axis z) at {m.frequency_hz[harmonic - 1]:g} Hz")
    fig.subplots_adjust(left=0.09, right=0.92, bottom=0.13, top=0.9)
    return save(fig, path, overwrite=overwrite)


def _beyond_palette(i: int) -> str | None:
    """The marker that tells the i-th string from the one whose colour it shares (none for the palette's first eight; up to 16 strings)."""
    return None if i < len(PALETTE) else ("x", "d", "+", "^", "*", "v", "P", "h")[(i - len(PALETTE)) % 8]


SIDE_FLOOR_DB = -60.0  # the balance panel's floor: sideways sensitivities below it are drawn as triangles at it


def sense_plot(path, record, *, overwrite=False):
    """``render sense``: string balance, sensing functions, lateral dropout and H2/H3, per coil."""
    from ..analysis.sense import balance_db

    plt = pyplot()
    fig, axes = plt.subplots(2, 2, figsize=(10, 7))
    (ax_bal, ax_along), (ax_lat, ax_h) = axes
    width = 0.38
    for k, (name, rows) in enumerate(record["coils"].items()):
        strings = [r["string"] for r in rows]
        pos = np.arange(len(rows))
        ax_bal.bar(pos + (k - 0.5) * width, balance_db(rows), width, color=PALETTE[k], label=name)
        loudest = max((abs(r["sensitivity_v_s_per_m"]) for r in rows if r["sensitivity_v_s_per_m"] is not None), default=1.0)
        side_db = 20 * np.log10(np.array([np.nan if r["sensitivity_lateral_v_s_per_m"] is None else abs(r["sensitivity_lateral_v_s_per_m"]) or 1e-300 for r in rows]) / loudest)
        floor = side_db < SIDE_FLOOR_DB  # below the plot's floor: a triangle pointing down at the floor, not a measured ring
        ring = "black" if k == 0 else "0.5"
        x_bal = pos + (k - 0.5) * width
        ax_bal.plot(x_bal[~floor], side_db[~floor], ls="none", marker="o", mfc="none", color=ring, label=f"{name} sideways")
        if floor.any():
            ax_bal.plot(x_bal[floor], np.full(floor.sum(), SIDE_FLOOR_DB), ls="none", marker="v", mfc="none", color=ring, label=f"{name} sideways below {SIDE_FLOOR_DB:g} dB")
        nan = float("nan")
        ax_h.plot(pos, [nan if r["h2_db"] is None else r["h2_db"] for r in rows], marker="o", color=PALETTE[k], label=f"{name} H2")
        ax_h.plot(pos, [nan if r["h3_db"] is None else r["h3_db"] for r in rows], marker="s", ls="--", color=PALETTE[k], label=f"{name} H3")
        for i, r in enumerate(rows):
            if r["lateral_db"] is None:  # not sensed, or below the flux table's resolution: nothing to draw
                continue
            ax_along.plot(
                np.asarray(r["along_x_m"]) * 1e3,
                r["along_weight"],
                color=PALETTE[i % len(PALETTE)],
                ls=STYLES[k],
                lw=1.2,
                marker=_beyond_palette(i),
                markevery=12,
                ms=4,
                label=f"{name} string {r['string']}" if k == 0 or i == 0 else None,
            )
            ax_lat.plot(
                np.asarray(r["lateral_offset_m"]) * 1e3,
                r["lateral_db"],
                color=PALETTE[i % len(PALETTE)],
                ls=STYLES[k],
                marker=_beyond_palette(i) or ("o" if k == 0 else "s"),
                ms=3,
                label=f"string {r['string']}" if k == 0 else None,
            )
        for ax in (ax_bal, ax_h):
            ax.set_xticks(pos, [str(s) for s in strings])
    ax_bal.set_title("string balance: vertical (bars), sideways (rings), dB re the loudest", fontsize=10)
    ax_bal.set_xlabel("string")
    ax_along.set_title("sensing function along the string", fontsize=10)
    ax_along.set_xlabel("from the bridge saddle (mm)")
    ax_along.set_ylabel("V·s/m per m")
    ax_lat.set_title("string pushed sideways (solid: coil_a, dashed: coil_b)", fontsize=10)
    ax_lat.set_xlabel("offset (mm; − bass side, + treble side)")
    ax_lat.set_ylabel("dB re rest")
    ax_h.set_title("harmonics of the EMF, 0.5 mm vertical sine", fontsize=10)
    ax_h.set_xlabel("string")
    ax_h.set_ylabel("dB re fundamental")
    for ax in axes.ravel():
        ax.grid(True, color="#dddddd", linewidth=0.6)
    ax_bal.legend(fontsize=8, frameon=False, loc="upper left", bbox_to_anchor=(0.0, -0.14), ncol=2)  # below the bars, never over them
    ax_along.legend(fontsize=7, frameon=False, ncol=2)
    ax_lat.legend(fontsize=7, frameon=False, ncol=2)
    ax_h.legend(fontsize=7, frameon=False, ncol=2)
    fig.suptitle(f"{record['design']}: what the construction senses", fontsize=11)
    fig.subplots_adjust(left=0.08, right=0.98, bottom=0.08, top=0.91, hspace=0.62, wspace=0.22)
    return save(fig, path, overwrite=overwrite)
