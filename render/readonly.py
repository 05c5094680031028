"""Result objects hand out read-only arrays.

A public result (a :class:`~render.analysis.response.Response`, a
:class:`~render.dry.Dry`, ...) is frozen, and so are its numpy arrays: writing
into one raises ``ValueError: assignment destination is read-only`` rather than
changing the figures derived from it (or a grid that later results share).
Copy an array (``np.array(r.velocity)``) to change it.
"""

from __future__ import annotations

import dataclasses

import numpy as np


def lock_arrays(obj: object) -> None:
    """Make each numpy array among ``obj``'s dataclass fields (and the values of a dict field) read-only."""
    for f in dataclasses.fields(obj):  # type: ignore[arg-type]
        value = getattr(obj, f.name)
        for v in value.values() if isinstance(value, dict) else (value,):
            if isinstance(v, np.ndarray):
                v.flags.writeable = False
