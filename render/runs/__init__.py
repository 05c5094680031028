"""What each command does, end to end, minus the printing.

A run takes inputs already read (designs, a dry signal, settings), renders and
measures them, writes its files through :mod:`render.io` and
:mod:`render.report`, and returns a frozen result object that the command line
(or a script) prints or inspects. Progress comes back through an optional
callback; warnings come back in the result. Nothing here prints.
"""
