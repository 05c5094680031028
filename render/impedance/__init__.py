"""A coil's impedance across the band, from its winding and its core, or from a measurement.

- :mod:`.inductance`: air-core inductance of a rectangular multilayer winding
  (Neumann integral over filamentary turns, Grover 1946) and of round coils
  (Maxwell's coaxial circles, Nagaoka's solenoid).
- :mod:`.eddy`: eddy-current (core-loss) response of conducting slabs and
  cylinders from the 1-D diffusion solutions (Lammeraner & Štafl 1966), and
  the coil impedance they add.
- :mod:`.materials`: typical conductivities and permeabilities of core parts.
- :mod:`.ladder`: an RL ladder (Foster form) fitted to such an impedance, so the
  time-domain renderer and the small-signal engine can take it.
- :mod:`.capacitance`: winding capacitance from the layers and the insulation
  (Massarini & Kazimierczuk 1997).
- :mod:`.measured`: the coil model fitted to a measured |Z| and phase.
- :mod:`.measurement_csv`: a measured coil's CSV text parsed (the file is read
  by :mod:`render.io.measurement`).

Everything here is pure: arrays, parameters or text in, arrays out, SI units;
no module reads a file.
"""
