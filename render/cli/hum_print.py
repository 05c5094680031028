"""What ``render hum`` prints: the per-harmonic table, each source's share, the measured rejection, the Monte Carlos and the map."""

from __future__ import annotations

import click

from ..units import format_si, microvolts


def _rejection(value, reason) -> str:
    """A table cell: the figure, or the short word for why it does not exist (render.analysis.undefined)."""
    from ..analysis.undefined import cell

    return cell({"rejection_db": value, "rejection_db_reason": reason}, "rejection_db", "6.1f", " dB")


def _vector(v) -> str:
    return "(" + ", ".join(f"{x:.3g}" for x in v) + ")"


def print_source(s: dict) -> None:
    what = f"dipole {s['moment_a_m2']:g} A·m² at {_vector(s['at_m'])} m ({s['distance_m']:.3g} m away)" if s["kind"] == "dipole" else f"uniform {s['field_t'] * 1e6:g} µT"
    extra = ("" if s["harmonics"] is None else ", its own harmonics") + ("" if s["phase_deg"] == 0 else f", phase {s['phase_deg']:g}°")
    link = s["linkage_wb"]
    click.echo(
        f"  source {s['source']}: {what}, axis {_vector(s['axis'])}{extra}; flux linkage coil_a {format_si(link['coil_a'] + 0.0, 'Wb', 4)}, coil_b {format_si(link['coil_b'] + 0.0, 'Wb', 4)} peak at the source's strength (each harmonic takes its share)"
    )


def _total(v_rms: float, reason: str | None) -> str:
    """A total hum in µV rms (another prefix where µV would hide it), or "none" with its reason when it is exactly zero."""
    return f"{microvolts(v_rms, 0, 3)} rms" if v_rms > 0 or not reason else f"none ({reason})"


def print_report(d, r) -> None:
    from ..analysis.hum import field_words

    n = len(r.sources)
    field = field_words(r.field_t, r.table["harmonic_profile"]) if r.field_t is not None else f"{n} hum source{'s' if n > 1 else ''} (they replace the field)"
    click.echo(f"{d.name}  ({d.source})  mains {r.mains_hz:g} Hz, {field}")
    for s in r.sources:
        print_source(s)
    click.echo("  harmonic  frequency   rejection   hum at amp input   coil_a alone   coil_b alone   (amplitudes: peak)")
    for h in r.harmonics:
        rej = _rejection(h.rejection_db, h.rejection_db_reason)
        click.echo(f"  {h.harmonic:>8d}  {h.frequency_hz:7.0f} Hz  {rej:>9s}   {microvolts(h.output_v, 12, 3)}   {microvolts(h.coil_a_v, 9, 2)}   {microvolts(h.coil_b_v, 9, 2)}")
        if n > 1:  # each source's share (shares add as phasors)
            for s in h.sources:
                srej = _rejection(s["rejection_db"], s.get("rejection_db_reason"))
                click.echo(f"       source {s['source']:<2d}       {srej:>9s}   {microvolts(s['output_v'], 12, 3)}   {microvolts(s['coil_a_v'], 9, 2)}   {microvolts(s['coil_b_v'], 9, 2)}")
    # signal to hum is printed once, on the scale it shares with noise (the block below)
    click.echo(f"  total hum {_total(r.total_v_rms, r.note_to_hum_reason)}; passive reference {_total(r.passive_total_v_rms, r.passive_note_to_hum_reason)}")
    if n > 1:
        click.echo("  each source's share is its own hum alone; the shares add as phasors, not as magnitudes")


def print_audio(a, exact):
    """The rejection measured from the hum-only WAVs beside the exact figure (``exact``: the report's harmonics)."""
    from ..analysis.undefined import spread

    click.echo(f"  measured from a {a.seconds:g} s hum-only render (last {a.seconds - 1:g} s):")
    for i, (row, h) in enumerate(zip(a.harmonics[:5], exact)):
        measured = spread(row["rejection_db"], str(row.get("rejection_db_reason")), "6.1f", " dB")
        same = row["rejection_db"] is None and row.get("rejection_db_reason") == h.rejection_db_reason
        exact_text = "as is the exact figure" if same else f"exact {spread(h.rejection_db, str(h.rejection_db_reason), '.1f', ' dB')}"
        click.echo(f"    H{i + 1} {row['frequency_hz']:5.0f} Hz: {measured} ({exact_text})")
    click.echo(f"  hum-only WAVs at {a.volts_full_scale:g} V full scale: {a.files['both']}, and each coil alone beside it")


def _quantiles(rows, count=3):
    from ..analysis.hum_room import quantile_line

    for r in rows[:count]:
        click.echo(quantile_line(r))


def print_monte_carlo(mc):
    pct = ", ".join(f"{k} {v * 100:g} %" for k, v in mc.tolerances.items())
    click.echo(f"  Monte Carlo: {mc.trials} trials (seed {mc.seed}; {pct})")
    _quantiles(mc.summary())
    top = mc.sensitivity[:4]
    if mc.sensitivity_at is None:
        click.echo("    most sensitive: not computed: no harmonic has hum in this room")
        return
    at = "at the fundamental" if mc.sensitivity_at == 0 else f"at {mc.frequency_hz[mc.sensitivity_at]:g} Hz, the lowest harmonic with hum"
    if top and all(isinstance(v, str) and "with +1 %" in v for _, v in top):  # the design itself cancels exactly
        from ..analysis.undefined import NOMINAL_CANCELS

        after = ", ".join(f"{k} {v.rsplit(' it is ', 1)[-1]}" for k, v in top)
        click.echo(f"    most sensitive (+1 % alone, {at}): {NOMINAL_CANCELS}; the rejection with +1 % alone: {after}")
    else:
        click.echo(f"    most sensitive (+1 % alone, {at}): {', '.join(f'{k} {v:+.1f} dB' if isinstance(v, float) else f'{k} ({v})' for k, v in top)}")


def print_positions(rec: dict) -> None:
    inner, outer = rec["shell_m"]
    head = f"  random sources: {rec['trials']} dipoles in a {inner:g}–{outer:g} m shell, random axes (seed {rec['seed']})"
    if "tolerances" in rec:
        pct = ", ".join(f"{k} {v * 100:g} %" for k, v in rec["tolerances"].items())
        head += f", drawn jointly with the part tolerances ({pct})"
    click.echo(head)
    _quantiles(rec["harmonics"])


def print_map(m) -> None:
    from ..analysis.hum_room import map_lines

    for line in map_lines(m):
        click.echo(line)
