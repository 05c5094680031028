"""render: hear and measure an active humbucker voicing before it is built.

Physics lives in pure functions (arrays in, arrays out); files, plots and the
command line live at the edges (``render.report``, ``render.cli``).
"""

__version__ = "0.1.0"
