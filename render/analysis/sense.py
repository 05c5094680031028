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
  the string pushed towards +y (the treble side), dB re rest;
- ``h2_db`` and ``h3_db``: the 2nd and 3rd harmonics of the EMF for a
  0.5 mm peak vertical sine, dB re the fundamental;
- ``polarization_t``: the largest polarisation µ0·|M| (T) along the string
  at rest, as the model's linear string gives it.

and, for the design, ``warnings``: the model's limits it passes (:func:`construction_warnings`).

The string's steel is linear in the model. Where its polarisation comes near
the steel's saturation (near 2 T for string steel, from memory), the output
and distortion are overstated: :func:`saturation_warning` says so. So are
an AlNiCo magnet's field and every figure here where the magnet works past
its knee (:meth:`render.magnetics.construction.Construction.knee_warning`).
:func:`construction_warnings` gives both, as the record's ``warnings``.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

KEYS = ("string", "sensitivity_v_s_per_m", "sensitivity_lateral_v_s_per_m", "along_x_m", "along_weight", "lateral_offset_m", "lateral_db", "h2_db", "h3_db", "polarization_t")
SATURATION_WARN_T = 1.8  # T: a string's linear polarisation past this is near or past string steel's saturation, near 2 T (from memory)
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
                }
            )
        coils[name] = sorted(rows, key=lambda r: -r["string"])  # lowest string first
    return {"design": design.name, "file": design.source, **design_provenance(design), "coils": coils, "warnings": construction_warnings(design)}


def balance_db(rows: list[dict]) -> np.ndarray:
    """Each string's output in dB re the loudest string of the coil."""
    s = np.abs([r["sensitivity_v_s_per_m"] for r in rows])
    return 20.0 * np.log10(s / s.max())


def saturation_warning(polarizations: dict[int, float]) -> str | None:
    """One line when a string's linear polarisation passes :data:`SATURATION_WARN_T`, else None.

    polarizations : {string number: T}, each string's largest polarisation at rest

    The model's string is linear (µr constant), so past the steel's
    saturation its magnetisation, and with it the output and the
    distortion, keep growing where the real string's would not.
    """
    over = sorted(k for k, v in polarizations.items() if v > SATURATION_WARN_T)
    if not over:
        return None
    top = max(over, key=lambda k: polarizations[k])
    return (
        f"[construction] the linear string model polarises string{'s' if len(over) > 1 else ''} {', '.join(map(str, over))} up to "
        f"{polarizations[top]:.1f} T (string {top}); string steel saturates near 2 T (from memory), "
        "so this design's output and distortion are overstated"
    )


def design_saturation_warning(design) -> str | None:
    """:func:`saturation_warning` for a design with a construction (None without one)."""
    from ..design.construction import sensing

    result = sensing(design)
    if result is None:
        return None
    return saturation_warning({int(s.string): float(s.polarization) for s in result.coil_a})  # the magnets' field: the same for both coils


def construction_warnings(design) -> list[str]:
    """One line per limit of the model that this design's construction passes (empty without one):
    an AlNiCo magnet past its knee, strings polarised near saturation."""
    build = getattr(design, "construction", None)
    if build is None:
        return []
    out = [note] if (note := build.construction.knee_warning()) else []
    if note := design_saturation_warning(design):
        out.append(note)
    return out
