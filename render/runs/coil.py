"""``render coil`` and ``render coil fit`` minus the printing: a coil's impedance, and a measurement fitted.

The impedance at a coil's terminals is its series branch R_dc + Z_L (the
inductance with its core loss: a parallel resistance, a shorted secondary or
an RL ladder, :mod:`render.circuit.coil`) with the winding capacitance
across it, whatever the design gives: typed values, the winding and core
(derived) or a measurement (fitted). The self-resonance is where its phase
crosses zero going up in frequency (the first parallel resonance).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from .. import units as U
from ..errors import InputError
from ..impedance.ladder import REPORT_BAND_HZ
from ..impedance.measured import outside_sweep, self_resonance_hz
from ..usual import USUAL

if TYPE_CHECKING:
    from ..impedance.measured import MeasuredCoil
    from ..impedance.measurement_csv import Measurement

BAND_HZ = REPORT_BAND_HZ  # 20 Hz – 20 kHz
POINTS = 301  # log-spaced over the band for --csv, --json and the plot
SHOWN_HZ = (20.0, 50.0, 100.0, 200.0, 500.0, 1e3, 2e3, 5e3, 10e3, 20e3)  # the printed table
RESIDUAL_BANDS = ((20.0, 200.0), (200.0, 2e3), (2e3, 20e3))  # the fit's residual, reported per decade


def params_terminal_impedance(coil_params, frequency_hz) -> np.ndarray:
    """Z at the terminals of a design's coils as the engine holds them (``CoilParams``), shape (N, F): (R_dc + Z_L) ∥ 1/(jωC_w)."""
    from ..circuit.coil import impedance_at
    from ..impedance.measured import with_winding_capacitance

    f = np.atleast_1d(np.asarray(frequency_hz, float))
    return with_winding_capacitance(impedance_at(coil_params, f), 2j * np.pi * f[None, :], coil_params.Cw[:, None])


def _ladder_dict(lad) -> dict | None:
    if lad is None:
        return None
    return {"series_inductance_h": lad.series_inductance, "inductances_h": list(lad.inductances), "resistances_ohm": list(lad.resistances)}


def coil_source(coil) -> str:
    """How the design gives the coil: "measured", "derived", "ladder", "winding" or "typed"."""
    rec = coil.impedance_from
    if rec is not None:
        return rec.kind
    if coil.ladder is not None:
        return "ladder"
    return "winding" if coil.winding is not None else "typed"


def core_loss_models(coil) -> list[str]:
    """The coil's core-loss models, by name: "ladder" (its R∥L sections), "parallel_resistance", "shorted_secondary"; [] for none.

    A ladder (typed, derived from a construction, or fitted to a measurement)
    replaces the lumped models (:mod:`render.circuit.coil`); a ladder with no
    R∥L section (an air core) has no loss. Otherwise the two lumped models may
    be combined.
    """
    if coil.ladder is not None:
        return ["ladder"] if coil.ladder.inductances else []
    return [name for name, given in (("parallel_resistance", coil.eddy_resistance), ("shorted_secondary", coil.eddy_coupling)) if given]


def lumped_loss_words(rec_coil: dict) -> str:
    """A coil record's lumped core loss in words: "core loss: 220 kΩ in parallel; shorted secondary, k² 0.3, corner 3 kHz", or "no core loss"."""
    parts = []
    if rec_coil["eddy_resistance_ohm"]:
        parts.append(f"{U.format_si(rec_coil['eddy_resistance_ohm'], 'Ω', 4)} in parallel")
    if rec_coil["eddy_coupling_k2"]:
        parts.append(f"shorted secondary, k² {rec_coil['eddy_coupling_k2']:.4g}, corner {U.format_si(rec_coil['eddy_corner_hz'], 'Hz', 4)}")
    return f"core loss: {'; '.join(parts)}" if parts else "no core loss"


def ladder_fit_words(derived: dict) -> str:
    """A derived coil's ladder fit error (its record's ``from``) as printed: "ladder within 0.03 dB, 0.18°, loss within 2.5 %"
    (the loss's largest relative error), or "…, loss below the fit tolerance (…)" where the loss was too small to fit."""
    loss = derived.get("ladder_error_loss")
    said = f"loss within {100 * loss:.1f} %" if loss is not None else derived.get("ladder_error_loss_reason", "")
    return f"ladder within {derived['ladder_error_db']:.2f} dB, {derived['ladder_error_deg']:.2f}°, {said}"


NO_PARALLEL_LOSS = "no parallel core-loss resistor (eddy_resistance not given)"
NO_SECONDARY = "no shorted secondary (eddy_coupling not given)"


def _lumped_loss_record(c) -> dict:
    """The lumped core-loss values, each None with its reason where the coil has no such model."""
    from ..analysis import undefined as UD

    out: dict = {}
    UD.put(out, "eddy_resistance_ohm", c.eddy_resistance, NO_PARALLEL_LOSS)
    UD.put(out, "eddy_coupling_k2", c.eddy_coupling, NO_SECONDARY)
    UD.put(out, "eddy_corner_hz", c.eddy_corner if c.eddy_coupling else None, NO_SECONDARY)
    return out


def coil_record(design, *, points: int = POINTS) -> dict:
    """Each coil's impedance over 20 Hz–20 kHz, its self-resonance and where it came from (JSON-ready)."""
    from dataclasses import asdict

    from ..circuit.ladder import coil_ladder
    from ..circuit.params import from_designs
    from ..design.provenance import design_provenance

    p = from_designs([design])
    f = np.geomspace(*BAND_HZ, points)
    coils = {}
    for name in ("coil_a", "coil_b"):
        c = getattr(design, name)
        cp = getattr(p, name)
        z = params_terminal_impedance(cp, f)[0]
        rec = c.impedance_from
        unsure = getattr(rec, "self_resonance_doubt", "")  # a measured coil whose sweep does not determine C
        srf = None if unsure else self_resonance_hz(lambda x, cp=cp: params_terminal_impedance(cp, x)[0])
        coils[name] = {
            "source": coil_source(c),
            "resistance_ohm": c.resistance,
            "inductance_h": c.inductance,
            "capacitance_f": c.capacitance,
            **_lumped_loss_record(c),
            "core_loss": core_loss_models(c),
            **({"core_loss_reason": why} if not core_loss_models(c) and (why := getattr(rec, "ladder_error_loss_reason", "")) else {}),
            "ladder": _ladder_dict(coil_ladder(c)),
            "self_resonance_hz": srf,
            **({"self_resonance_hz_reason": unsure or "no phase crossing from 10 Hz to 10 MHz"} if srf is None else {}),
            "from": None if rec is None else {"kind": rec.kind, **{k: v for k, v in asdict(rec).items() if k != "ladder_error_loss_reason" or v}},
            "frequency_hz": f.tolist(),
            "magnitude_ohm": np.abs(z).tolist(),
            "phase_deg": np.degrees(np.angle(z)).tolist(),
            "extrapolated": outside_sweep(f, _sweep(rec)).tolist(),
        }
    return {"design": design.name, "file": design.source, **design_provenance(design), "coils": coils}


def _sweep(rec) -> tuple[float, float] | None:
    """A measured coil's swept band (Hz), from its record (an object or its JSON dict); None for a coil not measured."""
    if isinstance(rec, dict):
        kind, band = rec.get("kind"), rec.get("band_hz")
    else:
        kind, band = getattr(rec, "kind", ""), getattr(rec, "band_hz", None)
    return (float(band[0]), float(band[1])) if kind == "measured" and band is not None else None


EXTRAPOLATED_MARK = "*"  # after a printed figure the fit extrapolates beyond a measured sweep


def shown_marks(rec_coil: dict) -> list[str]:
    """The mark after each printed column (:data:`SHOWN_HZ`) of a coil record: :data:`EXTRAPOLATED_MARK` outside a measured sweep, else ""."""
    return [EXTRAPOLATED_MARK if x else "" for x in outside_sweep(SHOWN_HZ, _sweep(rec_coil["from"] or {}))]


def extrapolated_note(rec_coil: dict) -> str | None:
    """The footnote to :func:`shown_marks`, or None when no printed column is marked."""
    if not any(shown_marks(rec_coil)):
        return None
    lo, hi = _sweep(rec_coil["from"])  # type: ignore[misc]
    return f"{EXTRAPOLATED_MARK} outside the sweep ({U.format_si(lo, 'Hz', 3)} – {U.format_si(hi, 'Hz', 3)}): the fitted model's extrapolation, not measured"


def at(rec_coil: dict, frequency_hz: float) -> tuple[float, float]:
    """(|Z| Ω, phase °) of a coil record at ``frequency_hz``, interpolated in log frequency."""
    lf = np.log(rec_coil["frequency_hz"])
    x = np.log(frequency_hz)
    mag = float(np.exp(np.interp(x, lf, np.log(rec_coil["magnitude_ohm"]))))
    return mag, float(np.interp(x, lf, rec_coil["phase_deg"]))


def coil_csv_text(rec: dict) -> str:
    """frequency_hz and each coil's |Z| (Ω) and phase (°), one row per frequency."""
    a, b = rec["coils"]["coil_a"], rec["coils"]["coil_b"]
    rows = ["frequency_hz,coil_a_z_ohm,coil_a_phase_deg,coil_b_z_ohm,coil_b_phase_deg"]
    for i, f in enumerate(a["frequency_hz"]):
        rows.append(f"{f:.6g},{a['magnitude_ohm'][i]:.6g},{a['phase_deg'][i]:.5g},{b['magnitude_ohm'][i]:.6g},{b['phase_deg'][i]:.5g}")
    return "\n".join(rows) + "\n"


# --- render coil fit -------------------------------------------------------------------


@dataclass(frozen=True)
class CoilFit:
    """A measurement and the coil model fitted to it (``render coil fit``; ``render.CoilFit``).

    Attributes
    ----------
    measurement : Measurement
        The file as read: ``frequency_hz`` (Hz, shape (N,)) and complex ``impedance`` (Ω, shape (N,)).
    fit : MeasuredCoil
        The fitted model: ``resistance`` (Ω), ``inductance`` (H, at DC), ``capacitance`` (F), its RL
        ``ladder``, and the residuals (dB, °) at the measured points.
    self_resonance_hz : float or None, Hz
        Where the fitted terminal impedance's phase first crosses zero, inductive to capacitive (None: not within 10 Hz–10 MHz).
    """

    measurement: Measurement
    fit: MeasuredCoil
    self_resonance_hz: float | None

    def self_resonance_words(self) -> str | None:
        """Why no self-resonance is given, in words, when the sweep does not determine C (the model's phase crossing is then a guess or noise); None otherwise."""
        return self.fit.self_resonance_doubt(capacitance_floor())

    def residual_bands(self) -> list[dict]:
        """Max and rms residual (dB, °) over 20 Hz–20 kHz and per decade within it (bands with no point, or with the whole band's points, left out).

        Each band's ``from_hz`` and ``to_hz`` are where the data cover it: a
        sweep that ends at 1 kHz reports "20 Hz – 1 kHz", not the whole band.
        """
        f = self.fit.frequency_hz
        out = []
        whole = None
        for lo, hi in (BAND_HZ, *RESIDUAL_BANDS):
            m = (f >= lo * (1 - 1e-9)) & (f <= hi * (1 + 1e-9))
            if not np.any(m) or (whole is not None and np.array_equal(m, whole)):
                continue  # no point here, or the same points as the whole band (a sweep within one decade)
            whole = m if whole is None else whole
            db, deg = self.fit.residual_db[m], self.fit.residual_deg[m]
            out.append(
                {
                    "from_hz": max(lo, float(f[0])),
                    "to_hz": min(hi, float(f[-1])),
                    "points": int(m.sum()),
                    "max_db": float(np.max(np.abs(db))),
                    "rms_db": float(np.sqrt(np.mean(db**2))),
                    "max_deg": float(np.max(np.abs(deg))),
                    "rms_deg": float(np.sqrt(np.mean(deg**2))),
                }
            )
        return out

    def record(self) -> dict:
        m, fit = self.measurement, self.fit
        return {
            "file": m.source,
            "sha256": m.sha256,
            "points": int(m.frequency_hz.size),
            "resistance_ohm": fit.resistance,
            "inductance_h": fit.inductance,
            "capacitance_f": fit.capacitance,
            "capacitance_given": fit.capacitance_given,
            "capacitance_rel_sd": None if fit.capacitance_given else fit.capacitance_rel_sd,
            "capacitance_share_at_top": fit.top_share,
            "capacitance_determined": fit.capacitance_given or fit.capacitance_doubt() is None,
            "resistance_given": fit.resistance_given,
            "resistance_rel_sd": None if fit.resistance_given else fit.resistance_rel_sd,
            "resistance_determined": fit.resistance_doubt() is None,
            "inductance_rel_sd": fit.inductance_rel_sd,
            "inductance_determined": fit.inductance_doubt() is None,
            "lowest_phase_deg": fit.lowest_phase_deg,
            "ladder": _ladder_dict(fit.ladder),
            "self_resonance_hz": None if self.self_resonance_words() else self.self_resonance_hz,
            **({"self_resonance_hz_reason": "no phase crossing from 10 Hz to 10 MHz"} if self.self_resonance_hz is None else {}),
            **({"self_resonance_hz_reason": words} if (words := self.self_resonance_words()) else {}),
            "residual": self.residual_bands(),
            "warnings": list(fit_warnings(self)),
            "frequency_hz": fit.frequency_hz.tolist(),
            "residual_db": fit.residual_db.tolist(),
            "residual_deg": fit.residual_deg.tolist(),
        }


def read_capacitance(text: str) -> float:
    """F: ``render coil fit --capacitance`` read as a design's ``[coil_x] capacitance`` is ("95p", "95pF", "1.2e-10"); InputError otherwise."""
    from ..design.schema import COIL
    from ..validate import read_value

    return float(read_value(text, COIL["capacitance"], source="--capacitance", table="", key="", part=("coil_a", "capacitance")))


def read_resistance(text: str) -> float:
    """Ω: ``render coil fit --resistance`` read as a design's ``[coil_x] resistance`` is ("4.1k", "4100", "4.1kohm"); InputError otherwise."""
    from ..design.schema import COIL
    from ..validate import read_value

    return float(read_value(text, COIL["resistance"], source="--resistance", table="", key="", part=("coil_a", "resistance")))


def fit_coil(path, *, capacitance: float | None = None, resistance: float | None = None) -> CoilFit:
    """Read a measurement CSV and fit the coil model to it (``render.fit_coil``; the fit is cached by the file's hash).

    Parameters
    ----------
    path : str or Path
        A CSV of frequency (Hz), ``|Z|`` (Ω) and phase (°) (README: "Bringing in a measured coil").
    capacitance : float or None, F
        Hold C at this value instead of fitting it.
    resistance : float or None, Ω
        Hold R_dc at this value (an ohmmeter's reading) instead of fitting it.

    Returns
    -------
    CoilFit
        The measurement and the fitted model (:class:`render.CoilFit`).
    """
    from .. import arguments as A
    from ..design.coil_impedance import read_and_fit

    path = A.path("path", path, what="a measurement CSV's path")
    if capacitance is not None:
        A.number("capacitance", capacitance, lo=0, lo_open=True, unit="F", hint=" (farads: 95e-12 for 95 pF)")
    if resistance is not None:
        A.number("resistance", resistance, lo=0, lo_open=True, unit="Ω", hint=" (ohms: 4100 for 4.1 kΩ)")
    m, fit = read_and_fit(path, capacitance=capacitance, resistance=resistance)
    return CoilFit(m, fit, self_resonance_hz(fit.impedance))


# what a pickup coil's fitted values usually are; outside them `render coil fit` warns (one line each)
COIL_RESISTANCE_USUAL = (USUAL[("coil", "resistance")].lo, USUAL[("coil", "resistance")].hi)  # Ω (from memory): render.usual's range
RESIDUAL_WARN = (1.0, 6.0)  # dB, °: a fit off by more than this somewhere in 20 Hz–20 kHz is not the coil (common practice, no source)


def capacitance_floor() -> float:
    """F: the least winding capacitance a design file accepts (``[coil_x] capacitance``)."""
    from ..design.schema import COIL

    return COIL["capacitance"].lo


def written_capacitance(fit: MeasuredCoil) -> float:
    """F: the capacitance ``coil_table`` writes: the fitted one, or the design reader's floor when the fit lies below it."""
    return max(fit.capacitance, capacitance_floor())


def floor_effect_db(fit: MeasuredCoil) -> float:
    """dB: the most the written capacitance moves |Z| from the fitted model's over the measured frequencies."""
    from ..impedance.measured import terminal_impedance

    f = fit.frequency_hz
    z_fit = fit.impedance(f)
    z_written = terminal_impedance(f, resistance=fit.resistance, ladder=fit.ladder, capacitance=written_capacitance(fit))
    return float(np.max(np.abs(20 * np.log10(np.abs(z_written) / np.abs(z_fit)))))


def measured_note(coil: str, *, resistance_given: bool, capacitance_given: bool) -> str:
    """What ``measured = …`` replaces in a written coil table, and which held values to keep beside it."""
    held = [k for k, given in (("resistance", resistance_given), ("capacitance", capacitance_given)) if given]
    replaced = [k for k in ("resistance", "capacitance") if k not in held] + [f"[{coil}.ladder]"]
    keep = f"; keep {' and '.join(held)} beside it to hold {' and '.join('R_dc' if k == 'resistance' else 'C' for k in held)}" if held else ""
    return f" (in place of {', '.join(replaced[:-1])} and {replaced[-1]}{keep})" if len(replaced) > 1 else f" (in place of {replaced[0]}{keep})"


def band_text(band: dict) -> str:
    """A residual band's span as printed: "20 Hz – 1 kHz"."""
    return f"{U.format_si(band['from_hz'], 'Hz', 3)} – {U.format_si(band['to_hz'], 'Hz', 3)}"


def fit_warnings(result: CoilFit) -> tuple[str, ...]:
    """One line per reason to doubt that the sweep is a pickup coil's, or that the fit is its model.

    Ranges: R_dc :data:`COIL_RESISTANCE_USUAL`; inductance and capacitance
    :data:`render.usual.USUAL`; the residual :data:`RESIDUAL_WARN`. A
    capacitance below the design reader's floor (0.1 pF) is not a doubt
    about the coil but about the sweep (it shows no capacitance): said once.
    A sweep that does not reach far enough towards the self-resonance to fix
    C (:meth:`render.impedance.measured.MeasuredCoil.capacitance_doubt`) is
    said once, with the fix.
    """
    from ..usual import USUAL

    fit = result.fit
    out: list[str] = [d for d in (fit.resistance_doubt(), fit.inductance_doubt()) if d is not None]
    lo, hi = COIL_RESISTANCE_USUAL
    if not lo <= fit.resistance <= hi:
        out.append(f"R_dc {U.format_si(fit.resistance, 'Ω', 4)} is outside {U.format_si(lo, 'Ω')} to {U.format_si(hi, 'Ω')} (pickup coils, from memory): is this a coil's sweep?")
    rng = USUAL[("coil", "inductance")]
    a_coil = rng.holds(fit.inductance)  # else its capacitance is no winding's: no word on how well the sweep fixes it
    if not a_coil:
        out.append(f"inductance {U.format_si(fit.inductance, 'H', 4)} at DC is outside {rng.text('H')} (pickup coils): is this a coil's sweep?")
    rng = USUAL[("coil", "capacitance")]
    floor = capacitance_floor()
    if fit.capacitance < floor:
        out.append(
            f"the sweep shows no winding capacitance (fitted {U.format_si(fit.capacitance, 'F', 3)}): the table gives {U.format_si(floor, 'F')},"
            f" the least a design accepts, which moves |Z| by {floor_effect_db(fit):.2g} dB at most over the sweep; sweep past the self-resonance, or hold C at the coil's value with --capacitance ({rng.text('F')})"
        )
    elif a_coil and (doubt := fit.capacitance_doubt()) is not None:
        out.append(f"{doubt}; sweep on past the self-resonance, or hold C at the coil's value with --capacitance (e.g. from the winding's estimate or a bridge reading)")
    elif not fit.capacitance_given and not rng.holds(fit.capacitance):
        out.append(f"capacitance {U.format_si(fit.capacitance, 'F', 4)} is outside {rng.text('F')} (pickup coils): is this a coil's sweep?")
    if (doubt := fit.band_doubt()) is not None:
        from ..plausible import BAND_FIX

        out.append(f"{doubt}; {BAND_FIX}")
    bands = result.residual_bands()
    if bands:
        b = bands[0]
        db, deg = RESIDUAL_WARN
        if b["max_db"] > db or b["max_deg"] > deg:
            head = f"the fit is off by up to {b['max_db']:.2f} dB and {b['max_deg']:.1f}° over {band_text(b).replace(' – ', '–')} (more than {db:g} dB or {deg:g}°, common practice, no source)"
            rows = off_rows(fit)
            if rows is not None:
                named = ", ".join(f"{i + 1} ({U.format_si(float(fit.frequency_hz[i]), 'Hz', 4)})" for i in rows)
                out.append(
                    f"{head}: {len(rows)} of {fit.frequency_hz.size} points carry most of it, data rows {named} (counted after the header); check those rows (a slipped contact, a typing slip) or remove them"
                )
            else:
                out.append(f"{head}: the model (R_dc, a ladder and C) does not describe this sweep; check the file's columns and units")
    return tuple(out)


OFF_ROWS_MAX = 5  # at most this many rows are named as the residual's cause (common practice, no source)
OFF_ROWS_SHARE = 0.8  # ... when they carry this much of the summed squared residual (common practice, no source)


def off_rows(fit: MeasuredCoil) -> list[int] | None:
    """The few data rows (0-based, in frequency order) that carry the misfit, or None when it is spread.

    Each row's misfit is (dB / 1 dB)² + (° / 6°)² (:data:`RESIDUAL_WARN`); the fewest rows, at most
    :data:`OFF_ROWS_MAX`, that carry :data:`OFF_ROWS_SHARE` of the sum are named. A noisy sweep spreads it
    (its 5 worst rows carry about a quarter, measured on the shipped example).
    """
    db, deg = RESIDUAL_WARN
    e = (fit.residual_db / db) ** 2 + (fit.residual_deg / deg) ** 2
    total = float(np.sum(e))
    if total <= 0 or fit.frequency_hz.size < 2 * OFF_ROWS_MAX:
        return None
    order = np.argsort(e)[::-1][:OFF_ROWS_MAX]
    share = np.cumsum(e[order]) / total
    n = int(np.searchsorted(share, OFF_ROWS_SHARE)) + 1
    return sorted(int(i) for i in order[:n]) if n <= OFF_ROWS_MAX else None


def _value(x: float, unit: str) -> str:
    """``x`` to 5 digits as a design file reads it: with an SI prefix, or a plain exponent beyond the prefixes (never both)."""
    text = U.format_si(x, unit, digits=5).replace(" ", "")
    if "e" in text.removesuffix(unit).lower():
        text = f"{x:.5g}{unit}"
    return f'"{text}"'


def check_table(text: str, *, coil: str) -> None:
    """Read a written table back as a design file would (resistance, capacitance, the ladder and its DC inductance); InputError if it would not load."""
    from ..design.coil_impedance import LADDER
    from ..design.schema import COIL
    from ..impedance.ladder import Ladder
    from ..io.toml import loads
    from ..validate import read_table, read_value

    source = "the written table"
    data = loads(text)[coil]
    read_table({k: v for k, v in data.items() if k != "ladder"}, {k: COIL[k] for k in ("resistance", "capacitance")}, source=source, table=coil)
    t = read_table(data["ladder"], LADDER, source=source, table=f"{coil}.ladder")
    read_value(Ladder(t["series_inductance"], t["inductances"], t["resistances"]).dc_inductance, COIL["inductance"], source=source, table=coil, key="inductance")


def coil_table(result: CoilFit, *, coil: str = "coil_a", measured_as: str | None = None) -> str:
    """The fitted coil as a design file's table (TOML): ``resistance``, ``capacitance`` and ``[coil_x.ladder]``.

    The coil's other keys (sensitivity or a construction, turns_area or a
    geometry, position) are the design's; they are left as comments to fill in.
    ``measured_as``: the path a design would give in ``measured`` instead.
    Every value is written so that the design reader reads it back; a
    capacitance below the reader's floor is written as the floor, with a
    warning line (:func:`fit_warnings`). Raises InputError, naming the value,
    when the fit lies outside what a design accepts (not a pickup coil).
    """
    m, fit = result.measurement, result.fit
    lad = fit.ladder
    band = result.residual_bands()[0] if result.residual_bands() else None
    lines = [
        f"# {coil} fitted by render coil fit to {m.source} (SHA-256 {m.sha256})",
        f"# {m.frequency_hz.size} points, {U.format_si(m.frequency_hz[0], 'Hz')} to {U.format_si(m.frequency_hz[-1], 'Hz')}; inductance at DC {U.format_si(fit.inductance, 'H', 4)}"
        + (f", self-resonance {words}" if (words := result.self_resonance_words()) else f", self-resonance {U.format_si(result.self_resonance_hz, 'Hz', 3)}" if result.self_resonance_hz else ""),
    ]
    if band is not None:
        lines.append(f"# residual over {band_text(band).replace(' – ', '–')}: max {band['max_db']:.2f} dB and {band['max_deg']:.2f}°, rms {band['rms_db']:.3f} dB and {band['rms_deg']:.2f}°")
    if fit.capacitance_given:
        lines.append("# capacitance held at the value given (--capacitance), not fitted")
    if fit.resistance_given:
        lines.append("# resistance held at the value given (--resistance), not fitted")
    lines += [f"# WARNING: {w}" for w in fit_warnings(result)]
    lines += [
        f'# or, to keep the measurement itself: measured = "{measured_as or m.source}"' + measured_note(coil, resistance_given=fit.resistance_given, capacitance_given=fit.capacitance_given),
        f"[{coil}]",
        f"resistance = {_value(fit.resistance, '')}",
        f"capacitance = {_value(written_capacitance(fit), 'F')}",
        "# sensitivity = …, turns_area = …, position = … (or [construction] and a geometry): the design's own",
        "",
        f"[{coil}.ladder]   # the inductance with its core loss: L0 in series with R_k ∥ L_k sections",
        f"series_inductance = {_value(lad.series_inductance, 'H')}",
        f"inductances = [{', '.join(_value(v, 'H') for v in lad.inductances)}]",
        f"resistances = [{', '.join(_value(v, '') for v in lad.resistances)}]",
    ]
    text = "\n".join(lines) + "\n"
    try:
        check_table(text, coil=coil)
    except InputError as exc:
        raise InputError(
            f"render coil fit --out: the fitted coil would not load in a design ({exc}); this sweep does not look like a pickup coil's (see the warnings), so no table was written"
        ) from None
    return text
