"""The ``--compare FILE`` option (a passive pickup beside every design) and the hum-and-noise scale, as printed."""

from __future__ import annotations

import click

from .values import InFile

compare_option = click.option(
    "--compare",
    "compare_path",
    type=InFile(),
    default=None,
    help='A passive pickup\'s file (kind = "passive": coils, pots, cable) to show beside every design.',
)


def load_compare(path, rig_path=None):
    """The passive pickup of ``path`` playing into the rig file's cable and amplifier (None without a path)."""
    if not path:
        return None
    from ..design import load_rig
    from ..design.passive import load_passive

    return load_passive(path, rig=load_rig(rig_path) if rig_path else None)


def comparison_of(p, **kw):
    from ..analysis.comparison import comparison

    return None if p is None else comparison(p, **kw)


def _hz(f: float) -> str:
    return f"{f / 1000:g} kHz" if f >= 1000 else f"{f:g} Hz"


def _uv(v: float) -> str:
    from ..units import microvolts

    return microvolts(v, digits=3).strip()


def _who(hon) -> str:
    if hon is None:
        return "noise (no hum)"
    return f"hum by {hon:.1f} dB" if hon >= 0 else f"noise by {-hon:.1f} dB"


def _ratio(signal_v: float, x_v: float) -> str:
    import math

    if x_v <= 0:
        return "no hum"
    if signal_v <= 0:
        return "no signal"
    return f"{20 * math.log10(signal_v / x_v):.1f} dB"


def _no_hum(s) -> tuple[str, str]:
    """(table cell, words after "noise") for a circuit with no hum, from its reason."""
    from ..analysis import undefined as U

    if s.no_hum_reason == U.NOTHING_LINKS:
        return "none: no source links the coils", "no source links the coils"
    if s.no_hum_reason == U.NO_HUM:
        return "none: it cancels exactly", "the hum cancels exactly"
    return "none", "there is no hum"


def scale_lines(scales) -> list[str]:
    """The hum-and-noise table of :class:`~render.analysis.one_scale.OneScale` results, one column each."""
    s0 = scales[0]
    w = 28
    rows = [
        ("hum", [f"{_uv(s.hum_v)} (A: {_uv(s.hum_a_v)})" if s.hum_v > 0 else _no_hum(s)[0] for s in scales]),
        ("noise", [f"{_uv(s.noise_v)} (A: {_uv(s.noise_a_v)})" for s in scales]),
        ("signal to hum", [s.no_signal_cell or f"{_ratio(s.signal_v, s.hum_v)} (A: {_ratio(s.signal_v, s.hum_a_v)})" if s.hum_v > 0 else "no hum" for s in scales]),
        ("signal to noise", [s.no_signal_cell or f"{_ratio(s.signal_v, s.noise_v)} (A: {_ratio(s.signal_v, s.noise_a_v)})" for s in scales]),
    ]
    w = max(w, 2 + max(len(c) for _, cells in rows for c in cells))  # columns never run together
    out = [
        f"  hum and noise on one scale: rms at the amp input, 20 Hz–20 kHz, against a {_hz(s0.reference_hz)} sine of {s0.reference_velocity:g} m/s rms string velocity",
        f"  {'':20s}" + "".join(f"{s.circuit:{w}s}" for s in scales).rstrip(),
    ]
    out += [f"  {name:20s}" + "".join(f"{c:{w}s}" for c in cells).rstrip() for name, cells in rows]
    for s in scales:
        prefix = "dominant" if s is s0 else ""
        label = "" if len(scales) == 1 else f"{s.circuit}: "
        if s.hum_over_noise_db is None:
            out.append(f"  {prefix:20s}{label}noise ({_no_hum(s)[1]})")
        else:
            out.append(f"  {prefix:20s}{label}{_who(s.hum_over_noise_db)} unweighted, {_who(s.hum_over_noise_a_db)} A-weighted")
    return out


def figure_lines(c, designs_levels=()) -> list[str]:
    """A comparison pickup's response figures, and each design's level at 1 kHz against it."""
    from ..analysis.comparison import level_against
    from ..analysis.summary import rejection_text
    from ..analysis.undefined import cell, figure_or_reason
    from ..units import format_si

    f = c.figures
    p = c.design
    out = [f"{p.name}  ({p.source}; passive comparison pickup)"]
    if f["peak_hz"] is None:
        out.append(f"  response          {figure_or_reason(f, 'peak_hz', '')}")
    else:
        out.append(f"  resonance peak    {f['peak_hz']:.0f} Hz, {f['peak_db']:+.2f} dB re 1 kHz, Q {figure_or_reason(f, 'q', '.2f')}")
        out.append(f"  level at 1 kHz    {f['level_1k_db']:+.2f} dB re 1 V per m/s")
    out.append(f"  output impedance  {format_si(f['output_impedance_1k_ohm'], 'Ω')} at 1 kHz, {format_si(f['output_impedance_10k_ohm'], 'Ω')} at 10 kHz")
    out.append(f"  cable treble loss {cell(f, 'cable_loss_db', '+.2f', ' dB at 5 kHz')} ({p.rig.cable_length:g} m)")
    out.append(f"  hum rejection     {rejection_text(f, p.hum.mains)}")
    for name, level in designs_levels:
        diff = level_against(level, c)
        out.append(f"  {name} at 1 kHz: " + ("undefined" if diff is None else f"{diff:+.2f} dB against {p.name}"))
    return out


def hum_lines(c) -> list[str]:
    """A comparison pickup's hum per mains harmonic (V peak) and its total (V rms)."""
    from ..analysis.one_scale import harmonics_rms

    p = c.design
    out = [f"{p.name}  ({p.source}; passive comparison pickup)  mains {p.hum.mains:g} Hz", "  harmonic  frequency   hum at amp input (peak)"]
    for i, (f, v) in enumerate(zip(c.hum_frequency_hz, c.hum_peak_v)):
        out.append(f"  {i + 1:>8d}  {f:7.0f} Hz  {v * 1e6:12.3f} µV")
    out.append(f"  total hum {harmonics_rms(c.hum_frequency_hz, c.hum_peak_v) * 1e6:.3f} µV rms")
    return out


def noise_lines(c) -> list[str]:
    """A comparison pickup's noise floor."""
    n = c.noise
    p = c.design
    return [
        f"{p.name}  ({p.source}; passive comparison pickup)",
        f"  density at 1 kHz  {n.density_1k_v_per_rthz * 1e9:.3g} nV/√Hz",
        f"  total             {_uv(n.total_v)} unweighted, {_uv(n.a_weighted_v)} A-weighted, 20 Hz–20 kHz",
        f"  reference signal  {n.signal_v * 1e3:.3g} mV rms" if not n.silent_reason else f"  reference signal  {n.silent_reason}",
        "  largest contributors: " + ", ".join(f"{x.key} {100 * x.share:.1f} %" for x in n.contributors[:3]),
    ]


def echo(lines) -> None:
    for line in lines:
        click.echo(line)
