"""Permanent magnet grades: typical remanence and recoil permeability.

A magnet here is a block of uniform remanent polarisation J_r = B_r (T)
along its axis, on a straight recoil line of relative permeability µ_rec
(:mod:`.steel` solves it with the steel). A grade gives typical values; a
design can give its own ``remanence`` instead (a measured magnet, or the
effective value of a magnet working past its knee).

==========  =========  =======  ===============================================
grade       B_r (T)    µ_rec    source
==========  =========  =======  ===============================================
alnico2     0.75       6.4      MMPA Standard No. 0100-00, *Standard
                                Specifications for Permanent Magnet
                                Materials*, 2000, cast Alnico 2 (from memory)
alnico5     1.25       3.5      same table, cast Alnico 5 (from memory; its
                                recoil permeability 3–4.5 as in
                                :mod:`render.impedance.materials`)
ceramic5    0.38       1.1      same table, Ceramic 5 (hard ferrite, from
                                memory)
ceramic8    0.39       1.1      same table, Ceramic 8 (from memory)
ndfeb       1.2        1.05     sintered NdFeB of grade N35–N38, makers'
                                typical 1.17–1.26 T (from memory); recoil 1.05
                                as in :mod:`render.impedance.materials`
==========  =========  =======  ===============================================

AlNiCo's limit: its demagnetisation curve bends at a knee near its low
coercivity (about 50 kA/m for Alnico 5, from memory). A short AlNiCo
magnet magnetised along a short side (a pickup's bar magnet across its
width) works past that knee, and the straight recoil line from B_r then
overstates its field, by a factor of two or more. Ferrite and NdFeB keep a
straight line through their working points in a pickup. For AlNiCo bars,
give ``remanence`` as measured (a gaussmeter on the pole face, matched with
:func:`render.magnetics.sensing.pickup_sensing`), or treat the grade's
figures as an upper bound.

:func:`knee_warning` says so for a design: it places the magnet's working
point on the model's straight line, from its shape alone (the demagnetising
factor of a rectangular prism, Aharoni, J. Appl. Phys. 83, 3432 (1998); the
tests check it against magpylib's field of a uniformly magnetised cuboid,
averaged over its volume), and warns when the field inside reaches
:data:`KNEE_SHARE` of the grade's coercivity. The steel on a bar raises its
permeance, so the shape alone overstates the field inside: the warning may
come where the bar, with its steel, stays just above the knee.
"""

from __future__ import annotations

from dataclasses import dataclass

from scipy.constants import mu_0


@dataclass(frozen=True)
class Grade:
    """A magnet grade's typical figures: remanence B_r (T) and recoil permeability µ_rec."""

    name: str
    remanence: float
    recoil_permeability: float
    source: str


GRADES = {
    g.name: g
    for g in (
        Grade("alnico2", 0.75, 6.4, "MMPA Standard No. 0100-00 (2000), cast Alnico 2; from memory"),
        Grade("alnico5", 1.25, 3.5, "MMPA Standard No. 0100-00 (2000), cast Alnico 5; from memory"),
        Grade("ceramic5", 0.38, 1.1, "MMPA Standard No. 0100-00 (2000), Ceramic 5; from memory"),
        Grade("ceramic8", 0.39, 1.1, "MMPA Standard No. 0100-00 (2000), Ceramic 8; from memory"),
        Grade("ndfeb", 1.2, 1.05, "sintered NdFeB N35–N38, makers' typical 1.17–1.26 T; from memory"),
    )
}
# A/m, the coercivity H_c of the grades whose curve bends at a knee (MMPA Standard No. 0100-00, 2000: cast
# Alnico 2 about 560 Oe, cast Alnico 5 about 640 Oe; from memory). Ferrite and NdFeB: straight through a pickup's working points.
COERCIVITY = {"alnico2": 45e3, "alnico5": 50e3}
# The straight recoil line from B_r is trusted while the field inside stays below this share of H_c
# (our estimate, no source: the knee lies below H_c, and an AlNiCo curve bends before its knee).
KNEE_SHARE = 0.5


def working_field(size: tuple, axis: int, remanence: float, recoil_permeability: float) -> float:
    """|H| (A/m) inside a free magnet block on its straight recoil line, magnetised along ``axis`` (0 x, 1 y, 2 z).

    size : (x, y, z), m. On the line J = B_r + (µ_rec − 1)·µ0·H with H = −N·J/µ0 (N from
    :func:`render.impedance.eddy.prism_demagnetising_factor`, Aharoni 1998): |H| = N·B_r / (µ0·(1 + N·(µ_rec − 1))).
    """
    from ..impedance.eddy import prism_demagnetising_factor

    sides = list(size)
    along = sides.pop(axis)
    n = prism_demagnetising_factor(sides[0], sides[1], along)
    return n * remanence / (mu_0 * (1.0 + n * (recoil_permeability - 1.0)))


def knee_warning(grade: str | None, remanence: float, recoil_permeability: float, size: tuple, axis: int, what: str) -> str | None:
    """One line when an AlNiCo grade's magnet works near or past its knee on the model's straight line, else None.

    Only for a grade's own remanence: a ``remanence`` given in the design (a measured magnet) is taken as it is.
    what : the magnet as the message names it ("the bar magnet", "each magnet blade")
    """
    g = GRADES.get(grade or "")
    if g is None or grade not in COERCIVITY or remanence != g.remanence:
        return None
    h = working_field(size, axis, remanence, recoil_permeability)
    hc = COERCIVITY[grade]
    if h < KNEE_SHARE * hc:
        return None
    return (
        f"[construction] magnet_grade={grade}: on the model's straight line {what} works at about {h / 1e3:.0f} kA/m (from its shape alone),"
        f" beyond {KNEE_SHARE:g} of the grade's coercivity ({KNEE_SHARE * hc / 1e3:.0f} of {hc / 1e3:.0f} kA/m), where AlNiCo bends at its knee;"
        " its field and every sensitivity are overstated (by a factor of two or more for a short bar): give the measured remanence instead"
    )
