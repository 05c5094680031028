"""The time-domain render chain: pure array-in, array-out functions (no file I/O).

- :mod:`.discretize` analog transfer functions to digital filters;
- :mod:`.limit` the amplifier output's soft limit and its anti-aliased form;
- :mod:`.loop` the preamp's feedback loop as a nonlinear circuit in time;
- :mod:`.hum` the mains field, its derivative and steady-state responses;
- :mod:`.stream` the whole chain, block by block.
"""

from .stream import Plan, Renderer, make_plan, render_blocks, render_signal

__all__ = ["Plan", "Renderer", "make_plan", "render_blocks", "render_signal"]
