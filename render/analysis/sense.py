"""What a design's construction senses, as a record (``render sense``).

Per coil and per string, with the EMF as it drives the coil's input
(``hum_polarity``·dΦ/dt, :mod:`render.design.construction`):

- ``string``: as guitarists number them (1 the highest);
- ``sensitivity_v_s_per_m``: the EMF per m/s when the whole sensed length
  moves vertically (up positive);
- ``sensitivity_lateral_v_s_per_m``: the EMF per m/s when it moves sideways
  (towards +y, the treble side, positive);
- ``along_x_m`` and ``along_weight``: the sensing function, at x from the
  bridge saddle (x_saddle = x + the mean of the two coils' positions), in
  V·s/m per metre of string;
- ``lateral_offset_m`` and ``lateral_db``: the vertical sensitivity with
  the string pushed sideways, −6 … +6 mm (+y the treble side, −y the bass
  side), dB re rest;
- ``h2_db`` and ``h3_db``: the 2nd and 3rd harmonics of the EMF for a
  0.5 mm peak vertical sine, dB re the fundamental;
- ``polarization_t``: the largest polarisation µ0·|M| (T) along the string
  at rest;
- ``differential_permeability``: the string steel's differential relative
  permeability 1 + dM/dH along the string where it is most polarised at
  rest (``string_permeability`` in a weak field, lower towards saturation:
  what a small change of the field, the vibration's, meets there).

- ``balance_db``: the vertical sensitivity in dB re the coil's loudest string.

A figure that means nothing is ``null`` with a ``<key>_reason`` beside it
(:mod:`render.analysis.undefined`), as :func:`mark_unsensed` decides:

- below the flux table's resolution (:data:`TABLE_AGREEMENT`): the two
  sensitivities, the balance, the dropout and H2/H3;
- not sensed, more than :data:`NOT_SENSED_DB` below the coil's loudest
  (resolved) string: the balance, the dropout and H2/H3 (a string the coil
  does not hear has no balance to speak of, and its dropout and harmonics
  are ratios of a negligible signal).

And, for the design, ``warnings``: the model's limits it passes (:func:`construction_warnings`).

The string's steel saturates along the string (its Fröhlich–Kennelly curve,
:mod:`render.magnetics.strings`). Where a string at rest is polarised past
:data:`NEAR_SATURATION` of the steel's saturation, :func:`saturation_warning`
says so, with the differential permeability left there: a stronger magnet
adds little output to that string, and its figures lean on the shape of the
steel's curve near its knee, which ``string_permeability`` and
``string_saturation`` set. An AlNiCo magnet's field and every figure here are
overstated where the magnet works past its knee
(:meth:`render.magnetics.construction.Construction.knee_warning`).
:func:`construction_warnings` gives both, as the record's ``warnings``.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

KEYS = (
    "string",
    "sensitivity_v_s_per_m",
    "sensitivity_lateral_v_s_per_m",
    "balance_db",
    "along_x_m",
    "along_weight",
    "lateral_offset_m",
    "lateral_db",
    "h2_db",
    "h3_db",
    "polarization_t",
    "differential_permeability",
)
NOT_SENSED_DB = -60.0  # dB re the coil's loudest string: a string this far down is not sensed (our choice, no source: 1/1000 of the output)
# The flux table's central difference over ±0.5 mm against the sensing function's integral: on the shipped demos they
# agree within 1.7 % (the difference's own error, h²/6 times the third derivative, Press et al., Numerical Recipes, 3rd ed.,
# 2007, §5.7). More than this and the table's numerical noise (about 1e-12 Wb) is as large as the string's own flux
# (our bound, five times the demos').
TABLE_AGREEMENT = 0.10
TABLE_STEP = 0.5e-3  # m, the central difference's half step: a level of every table (render.magnetics.sensing.VERTICAL)
NEAR_SATURATION = (
    0.5  # of µ0·Ms: past this a string at rest is near saturation (our choice, no source: there the Fröhlich–Kennelly curve's differential permeability is a quarter of its initial one or less)
)
WEIGHT_STEP = 1e-3  # m, the sensing function is reported every millimetre (computed every 0.5 mm)


def sense_record(design) -> dict:
    """The JSON-ready record of ``design``'s construction: {"design", "file", "coils": {coil: [per string]}}."""
    from ..design.construction import sensing
    from ..design.provenance import design_provenance

    result = sensing(design)
    if result is None:
        raise InputError(f"{design.source or design.name}: no [construction] table; render sense needs one (see the README's construction section)")
    coils = {}
    for name in ("coil_a", "coil_b"):
        pol = getattr(design, name).hum_polarity
        rows = []
        for s in result.coil(name):
            step = max(1, int(round(WEIGHT_STEP / (s.x[1] - s.x[0]))))
            rows.append(
                {
                    "string": int(s.string),
                    "sensitivity_v_s_per_m": pol * s.sensitivity_z,
                    "sensitivity_lateral_v_s_per_m": pol * s.sensitivity_y,
                    "along_x_m": [float(v) for v in (s.x + result.x_offset)[::step]],
                    "along_weight": [float(v) for v in (pol * s.along_z)[::step]],
                    "lateral_offset_m": [float(v) for v in s.lateral],
                    "lateral_db": [float(v) for v in s.lateral_db],
                    "h2_db": float(s.h2_db),
                    "h3_db": float(s.h3_db),
                    "polarization_t": float(s.polarization),
                    "differential_permeability": float(s.differential),
                }
            )
        rows = sorted(rows, key=lambda r: -r["string"])  # lowest string first
        coils[name] = mark_unsensed(rows, {int(s.string): table_disagreement(s) for s in result.coil(name)})
    return {"design": design.name, "file": design.source, **design_provenance(design), "coils": coils, "warnings": construction_warnings(design)}


def balance_db(rows: list[dict]) -> np.ndarray:
    """Each string's output in dB re the loudest string of the coil (NaN where the record has no balance)."""
    return np.array([np.nan if r.get("balance_db") is None else r["balance_db"] for r in rows], float)


def table_disagreement(s) -> float:
    """|the flux table's central difference over ±:data:`TABLE_STEP` − the sensitivity| / |the sensitivity| of one
    :class:`~render.magnetics.sensing.StringSensing` (inf for a sensitivity of zero): two computations of one figure."""
    c = int(np.flatnonzero(np.abs(s.dy) < 1e-12)[0])
    ip, im = (int(np.flatnonzero(np.abs(s.dz - d) < 1e-12)[0]) for d in (TABLE_STEP, -TABLE_STEP))
    slope = (s.flux[c, ip] - s.flux[c, im]) / (2 * TABLE_STEP)
    return float(abs(slope - s.sensitivity_z) / abs(s.sensitivity_z)) if s.sensitivity_z else float("inf")


def mark_unsensed(rows: list[dict], disagreement: dict[int, float]) -> list[dict]:
    """Each row with its ``balance_db``, and the figures that mean nothing made null with their reason.

    rows : one coil's records, with ``sensitivity_v_s_per_m``
    disagreement : {string: :func:`table_disagreement`}
    """
    from .undefined import BELOW_RESOLUTION, NOT_SENSED, mark

    resolved = [r for r in rows if disagreement[r["string"]] <= TABLE_AGREEMENT]
    loudest = max((abs(r["sensitivity_v_s_per_m"]) for r in resolved), default=0.0)
    for r in rows:
        if disagreement[r["string"]] > TABLE_AGREEMENT:
            for key in ("sensitivity_v_s_per_m", "sensitivity_lateral_v_s_per_m", "balance_db", "lateral_db", "h2_db", "h3_db"):
                mark(r, key, BELOW_RESOLUTION)
            continue
        r["balance_db"] = float(20.0 * np.log10(abs(r["sensitivity_v_s_per_m"]) / loudest))
        if r["balance_db"] < NOT_SENSED_DB:
            for key in ("balance_db", "lateral_db", "h2_db", "h3_db"):
                mark(r, key, NOT_SENSED)
    return [{k: r[k] for k in (*KEYS, *sorted(k for k in r if k.endswith("_reason")))} for r in rows]


def saturation_warning(polarizations: dict[int, float], differentials: dict[int, float], *, saturation: float, permeability: float) -> str | None:
    """One line when a string at rest is polarised past :data:`NEAR_SATURATION` of the steel's saturation, else None.

    polarizations : {string number: T}, each string's largest polarisation at rest
    differentials : {string number: its steel's differential relative permeability there}
    saturation : T, the strings' steel's saturation polarisation µ0·Ms
    permeability : the strings' steel's initial relative permeability
    """
    near = sorted(k for k, v in polarizations.items() if v > NEAR_SATURATION * saturation)
    if not near:
        return None
    top = max(near, key=lambda k: polarizations[k])
    low = min(differentials[k] for k in near)
    return (
        f"[construction] string{'s' if len(near) > 1 else ''} {', '.join(map(str, near))} at rest "
        f"{'are' if len(near) > 1 else 'is'} polarised past half the steel's saturation: up to {polarizations[top]:.2f} T of {saturation:g} T "
        f"(string {top}), where the steel's differential permeability has fallen to {low:.0f} (from {permeability:g}); a stronger magnet adds "
        "little output there, and these figures rest on the steel's curve near its knee (string_permeability, string_saturation)"
    )


def design_saturation_warning(design) -> str | None:
    """:func:`saturation_warning` for a design with a construction (None without one)."""
    from ..design.construction import sensing

    result = sensing(design)
    if result is None:
        return None
    strings = design.construction.construction.strings
    rows = result.coil_a  # the magnets' field: the same for both coils
    return saturation_warning(
        {int(s.string): float(s.polarization) for s in rows},
        {int(s.string): float(s.differential) for s in rows},
        saturation=strings.saturation,
        permeability=strings.permeability,
    )


def construction_warnings(design) -> list[str]:
    """One line per limit of the model that this design's construction passes (empty without one):
    an AlNiCo magnet past its knee, outer strings beyond the pole pieces' ends, strings at rest near saturation."""
    build = getattr(design, "construction", None)
    if build is None:
        return []
    out = [note] if (note := build.construction.knee_warning()) else []
    if note := build.construction.reach_warning(min(build.geometry_a.window_length, build.geometry_b.window_length)):
        out.append(note)
    if note := design_saturation_warning(design):
        out.append(note)
    return out
