"""Typical conductivity and small-signal permeability of a pickup's core parts.

These are typical values, not a particular part's: a measured coil
(:mod:`render.impedance.measured`) is always better. Each value says where
it comes from.

============================  ===============  ====================  =====================================
material                      σ (MS/m)         μr (small signal)     source
============================  ===============  ====================  =====================================
low-carbon steel (1010–1020)  6                100                   σ: SAE/AISI 1010 data sheets give
                                                                     0.143 µΩ·m (7.0 MS/m; MatMake,
                                                                     "SAE/AISI 1010 Carbon Steel"); more
                                                                     carbon and manganese raise it, so 6
                                                                     (0.167 µΩ·m) for 1010–1020 (our
                                                                     estimate); μr from memory: the
                                                                     incremental μr at the magnet's bias
                                                                     scatters from about 50 to several 100
sintered NdFeB                0.667            1.05                  Stanford Magnets, "Characteristics of
                                                                     NdFeB magnets" (resistivity 150 µΩ·cm,
                                                                     recoil permeability 1.05); other
                                                                     makers give 120–160 µΩ·cm
AlNiCo 5 (cast)               2.1              3.5                   TMC Magnetics, "Alnico" property table
                                                                     (cast Alnico 5: 470 nΩ·m, recoil
                                                                     permeability 3.6); e-Magnets UK,
                                                                     "Characteristics of Alnico Magnets"
                                                                     (45–70 µΩ·cm across grades); μr 3.5
                                                                     is the grade table's (from memory,
                                                                     render.magnetics.magnets), and a
                                                                     construction's magnets use their own
hard ferrite (Sr/Ba)          1e-8             1.1                   from memory (resistivity above
                                                                     10⁴ Ω·m: an insulator for eddy
                                                                     currents; recoil permeability 1.05–1.2)
============================  ===============  ====================  =====================================
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Material:
    """A conducting, permeable core material.

    Attributes
    ----------
    name : str
    conductivity : float, S/m, ≥ 0
    relative_permeability : float, ≥ 1 (small-signal, at the part's working point)
    source : str
        Where the values come from.
    """

    name: str
    conductivity: float
    relative_permeability: float
    source: str


STEEL = Material("low-carbon steel", 6.0e6, 100.0, "σ: AISI 1010 data sheets 0.143 µΩ·m (MatMake), 6 MS/m for 1010–1020 our estimate; μr from memory, scatters 50–several 100")
NDFEB = Material("sintered NdFeB", 1.0 / 150e-8, 1.05, "Stanford Magnets, Characteristics of NdFeB magnets: 150 µΩ·cm, recoil permeability 1.05")
ALNICO = Material("cast AlNiCo 5", 1.0 / 47e-8, 3.5, "TMC Magnetics, Alnico property table: cast Alnico 5 470 nΩ·m (recoil permeability 3.6 there; 3.5 as the grade table, from memory)")
FERRITE = Material("hard ferrite", 1e-8, 1.1, "from memory: resistivity above 1e4 Ω·m, recoil permeability 1.05–1.2")

MATERIALS = {"steel": STEEL, "ndfeb": NDFEB, "alnico": ALNICO, "ferrite": FERRITE}
