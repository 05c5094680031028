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


def _view(v: np.ndarray) -> np.ndarray:
    w = v.view()
    w.flags.writeable = False
    return w


def lock_arrays(obj: object) -> None:
    """Hold each numpy array among ``obj``'s dataclass fields (and the values of a dict field) as a read-only view.

    A view, not the array itself: the array a caller passed in (a frequency grid, a velocity) stays
    writable for the caller, while the result's own handle on it cannot write.
    """
    for f in dataclasses.fields(obj):  # type: ignore[arg-type]
        value = getattr(obj, f.name)
        if isinstance(value, np.ndarray):
            object.__setattr__(obj, f.name, _view(value))
        elif isinstance(value, dict):
            object.__setattr__(obj, f.name, {k: _view(v) if isinstance(v, np.ndarray) else v for k, v in value.items()})
