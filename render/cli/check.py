"""``render check``: validate design files and print their derived values."""

from __future__ import annotations

import click

from ..design import load_designs
from ..io.folders import refuse_existing as check_new
from .compare_print import compare_option
from .options import emit_json, friendly, json_option, overwrite_option, rig_option, warn
from .values import Finite, InFile


def hz(x: float, digits: int = 3) -> str:
    """A frequency in Hz from 0.01 Hz to 1 kHz ("0.787 Hz", "7.23 Hz"), with its SI prefix outside that ("30.78 kHz",
    "14.47 µHz"), never in exponent form."""
    from ..units import format_si

    return f"{x:.{digits}g} Hz" if 0.01 <= abs(x) < 999.5 else format_si(x, "Hz", digits)


def print_design(rec):
    from ..analysis.summary import rejection_text
    from ..analysis.undefined import figure_or_reason
    from ..units import format_si

    f = rec["figures"]
    c = rec["corners_hz"]
    lo, hi = rec["limit_window_v"]
    click.echo(f"{rec['design']}  ({rec['file']})")
    click.echo(f"  bias point        {rec['bias_v']:.3f} V  (divider parallel {format_si(rec['bias_divider_parallel_ohm'], 'Ω')})")
    click.echo(f"  headroom          up {rec['headroom_up_v']:.3f} V, down {rec['headroom_down_v']:.3f} V  (output limits {lo:g}..{hi:g} V)")
    click.echo(
        f"  corners           input_a {hz(c['input_a_hz'])}, input_b {hz(c['input_b_hz'])}, output {hz(c['output_hz'])}"
        + (f", feedback {hz(c['feedback_hz'], 4)}" if c["feedback_hz"] else "")
        + (f", bias node {hz(c['bias_node_hz'], 4)}" if c["bias_node_hz"] else "")
    )
    pole = f"  (pole pair {rec['pole_resonance_hz']:.0f} Hz, Q {rec['pole_q']:.2f})" if rec["pole_resonance_hz"] else f"  ({rec['pole_resonance_hz_reason']})"
    from ..analysis.peaks import describe_peaks

    click.echo(f"  loaded resonance  {describe_peaks(f)}{pole}")
    if f["level_1k_db"] is None:
        click.echo(f"  gain at 1 kHz     {figure_or_reason(f, 'level_1k_db', '')}")
    else:
        click.echo(f"  gain at 1 kHz     {f['level_1k_db']:+.2f} dB re 1 V per m/s; {figure_or_reason(f, 'gain_vs_passive_db', '+.2f', ' dB against the passive reference')}")
    click.echo(f"  hum rejection     {rejection_text(f, rec['mains_hz'])}")


def print_turns(rows, percent):
    from ..analysis.undefined import cell

    click.echo(f"  turns ±{percent:g} %      coils    L_b        R_b        peak                 1 kHz      hum rejection")
    for r in rows:
        click.echo(
            f"    {r['turns_percent']:+5.1f} %  {r['coils']:>7s}  {r['inductance_b_h'] * 1e3:7.1f} mH  {r['resistance_b_ohm']:7.1f} Ω"
            f"  {cell(r, 'peak_hz', '6.0f', ' Hz'):>9s} {cell(r, 'peak_db', '+6.2f', ' dB'):>9s}  {cell(r, 'level_1k_db', '+6.2f', ' dB'):>9s}  {cell(r, 'hum_rejection_db', '6.1f', ' dB'):>9s}"
        )


FLAT_BOBBIN_RATIO = "2.3"  # Wheeler's round coil over the Neumann sum: 5000 turns, 68 × 13 mm outline, 58 × 3 mm window, 9 mm high


def print_winding(name, c):
    from ..units import format_si

    w = c.winding
    if w is None:
        return
    wire = f"AWG {w.wire_awg:g} ({w.wire_diameter * 1e3:.4f} mm)" if w.wire_awg else f"{w.wire_diameter * 1e3:.4f} mm"
    click.echo(
        f"  {name} winding    {w.turns:.0f} turns of {wire}, {w.wire_length:.1f} m of wire at {w.temperature:g} °C:"
        f" {format_si(w.inductance, 'H')}, {format_si(w.resistance, 'Ω')} (estimates; replace with measured values)"
    )
    if c.geometry is None:  # Wheeler's round coil of the same mean turn: a flat bobbin reads 2-3 times high
        # the ratio is the flat bobbin's of the README ("A flat bobbin"), which tests/impedance/test_coil_model.py recomputes
        click.echo(
            f"{' ' * 20}L as a round coil of this mean turn; a flat bobbin's is lower ({FLAT_BOBBIN_RATIO} times for 68 × 13 mm around a 58 × 3 mm window): for its own, give wire and a full [{name}.geometry] in place of [{name}.winding]"
        )


def print_geometry(name, c):
    g = c.geometry
    if g is None:
        return
    mm = lambda x: f"{x * 1e3:.3g}"  # noqa: E731
    entered = f"entered {c.entered_turns_area:.3g} m²" if c.entered_turns_area is not None else "none entered"
    if abs(c.turns_area - g.turns_area) > 1e-9 * g.turns_area:  # a construction's steel adds its share
        entered += f"; with the steel {c.turns_area:.3g} m²"
    click.echo(
        f"  {name} geometry   {g.turns:.0f} turns, {mm(g.length)} × {mm(g.width)} mm outline, {mm(g.window_length)} × {mm(g.window_width)} mm window,"
        f" {mm(g.height)} mm high{' (from its winding)' if c.winding is not None else ''}: turns_area {g.turns_area:.3g} m² ({entered}), mean turn {mm(g.mean_turn)} mm"
    )


@click.command("check")
@click.argument("models", nargs=-1, type=InFile())
@rig_option
@click.option(
    "--turns-sweep",
    "turns_percent",
    type=Finite(0.1, 50, unit="%"),
    default=None,
    help="Also print what ±PERCENT turns on coil_b alone, and on both coils, does to L, R, resonance and hum rejection.",
)
@compare_option
@json_option()
@overwrite_option
@friendly
def check_command(models, rig_path, turns_percent, compare_path, json_path, overwrite):
    """Validate design files and print the derived values.

    MODELS are design files (default: every models/*.toml). Prints, per
    design, the bias point, the headroom up and down, the input networks'
    corners, the loaded resonance and Q, the gain at 1 kHz against the
    passive reference, and the hum rejection.
    """
    from ..analysis.summary import check_designs

    check_new([json_path], overwrite=overwrite)
    designs, rig = load_designs(models, rig=rig_path)
    records = check_designs(designs, turns_percent=turns_percent)
    from .compare_print import comparison_of, echo, figure_lines, load_compare

    compared = comparison_of(load_compare(compare_path, rig_path))

    from ..analysis.summary import hum_warnings
    from ..plausible import design_warnings

    for d, rec in zip(designs, records):
        own = design_warnings(d)  # legal but unlikely values; the hum lines name the file themselves
        rec["warnings"] = [*own, *hum_warnings(d)]
        for i, w in enumerate(rec["warnings"]):
            warn(f"{rec['design']}: {w}" if i < len(own) else w)
    for i, (d, rec) in enumerate(zip(designs, records)):
        if i:
            click.echo()
        print_design(rec)
        for name in ("coil_a", "coil_b"):
            print_winding(name, getattr(d, name))
            print_geometry(name, getattr(d, name))
        if turns_percent:
            print_turns(rec["turns_sweep"], turns_percent)
    if compared is not None:
        click.echo()
        echo(figure_lines(compared, [(r["design"], r["figures"]["level_1k_db"]) for r in records]))
    if json_path:
        from ..design.provenance import rig_provenance

        emit_json(json_path, {"rig": rig_provenance(rig), "designs": records, **({"compare": compared.as_dict()} if compared is not None else {})}, overwrite=overwrite)
