"""Which parts of a loaded design the loader computed rather than took as typed, and from what.

:func:`render.design.load_design` derives some coil keys from other tables
(:mod:`.loading`, :mod:`.construction`, :mod:`.coil_impedance`) and leaves a
mark on the coil where it did: ``winding``, ``geometry``, ``ladder`` and
``impedance_from``, and the design's ``construction``. A tool that changes a
part on a loaded design (``render fit``) must not change one of these alone:
the value it sets is not the one the design's file would give, since the
loader computes it again from its source.
"""

from __future__ import annotations

from dataclasses import dataclass

IMPEDANCE = ("inductance", "resistance", "capacitance", "eddy_resistance", "eddy_coupling", "eddy_corner")
CORE_LOSS = ("inductance", "eddy_resistance", "eddy_coupling", "eddy_corner")  # what a typed [coil_x.ladder] stands for


@dataclass(frozen=True)
class Derived:
    """How the loader computes a part (``why``: "is derived from …"), and what a user may change instead (both in words)."""

    why: str
    instead: str


def derived_parts(design) -> dict[str, Derived]:
    """``{"table.key": Derived}`` for every part ``design`` (as loaded) computes from another table.

    A coil's impedance from ``wire`` and its geometry, from a measurement, or
    its inductance and resistance from a winding; its inductance and core loss
    from a typed ladder; its ``turns_area`` from its geometry; with a
    ``[construction]``, its ``sensitivity`` and ``aperture`` from the field
    solve, and its ``position``, which that solve (and the bobbins' fit
    beside each other) depends on.
    """
    from .coil_impedance import DerivedImpedance, MeasuredImpedance

    out: dict[str, Derived] = {}

    def put(table: str, keys, why: str, instead: str) -> None:
        for k in keys:
            out.setdefault(f"{table}.{k}", Derived(why, instead))

    networks = "free the input networks' parts (input_a.load_c, input_a.load_r, …) instead"
    for name in ("coil_a", "coil_b"):
        c = getattr(design, name)
        source = c.impedance_from
        if isinstance(source, DerivedImpedance):
            put(name, IMPEDANCE, f"is derived from wire and [{name}.geometry]", f"type inductance, resistance and capacitance in place of wire to free them, or {networks}")
        elif isinstance(source, MeasuredImpedance):
            put(name, IMPEDANCE, f"is fitted to the measurement {source.file}", networks)
        elif c.ladder is not None:
            put(name, CORE_LOSS, f"is given by [{name}.ladder] (the inductance with its core loss)", f"free {name}.resistance or {name}.capacitance, or {networks}")
        if c.winding is not None:
            put(name, ("inductance", "resistance"), f"is derived from [{name}.winding]", f"type inductance and resistance in place of the winding to free them, or {networks}")
        if design.construction is not None:
            put(name, ("sensitivity", "aperture"), "is derived from [construction]'s field solve", f"change [construction] or the coils' geometry by hand and compare with render check, or {networks}")
            put(
                name,
                ("position",),
                "places the coil in [construction]'s field solve (seconds for each position; the bobbins must not overlap)",
                "try positions by hand with render check (each solve is kept), or free the networks' parts",
            )
        if c.geometry is not None:
            put(name, ("turns_area",), f"is derived from [{name}.geometry]" + (" and the steel" if design.construction is not None else ""), f"change [{name}.geometry] by hand, or {networks}")
    return out
