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
"""

from __future__ import annotations

from dataclasses import dataclass


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
