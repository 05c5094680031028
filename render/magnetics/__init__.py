"""Magnets, steel and coils in space: fields, flux linkage and hum sources.

The home of everything that places a pickup's parts in space and asks what
field they make or what flux they catch. Axes, in metres, are those of the
pickup: the origin lies midway between the two coils' centres on their top
faces; x runs along the strings towards the neck, y across the strings
towards the treble side, z up towards the strings.

- :mod:`.field` free-space fields in closed form: straight current segments
  and closed polygons of them (Biot–Savart), point dipoles;
- :mod:`.coil` a coil's turns in space: the rectangular winding of a
  bobbin, its quadrature by filaments, its own field at 1 A, and its flux
  linkage from a dipole (by reciprocity) or a uniform field;
- :mod:`.coil_steel` what a construction's steel and magnets add to a
  coil's flux linkage from outside sources (its hum pickup with the steel);
- :mod:`.hum` hum sources (dipoles, uniform fields) and each coil's hum EMF,
  as phasors per mains harmonic and as samples;
- :mod:`.rejection` what the design's networks make of those EMFs: the
  rejection with sources, its map over a source's distance and bearing, and
  a Monte Carlo over random source positions (optionally jointly with the
  part tolerances).
"""
