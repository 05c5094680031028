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


def _frozen(v: np.ndarray) -> bool:
    """True when nobody can write into ``v``'s samples: ``v`` and the array that owns its memory are both read-only."""
    root = v
    while isinstance(root.base, np.ndarray):
        root = root.base
    return not v.flags.writeable and root.base is None and root.flags.owndata and not root.flags.writeable


def _locked(v: np.ndarray) -> np.ndarray:
    if _frozen(v):
        return v  # already nobody's to change (another result's array): shared, not copied
    w = np.array(v, copy=True)
    w.flags.writeable = False
    return w


def lock_arrays(obj: object) -> None:
    """Hold each numpy array among ``obj``'s dataclass fields (and the values of a dict field) read-only.

    An array that anyone could still write into (the frequency grid or velocity a caller passed in,
    or a view of one) is copied first, so the caller's array stays theirs to change and the result
    does not change with it; an array already frozen (another result's) is shared as it is.
    """
    for f in dataclasses.fields(obj):  # type: ignore[arg-type]
        value = getattr(obj, f.name)
        if isinstance(value, np.ndarray):
            object.__setattr__(obj, f.name, _locked(value))
        elif isinstance(value, dict):
            object.__setattr__(obj, f.name, {k: _locked(v) if isinstance(v, np.ndarray) else v for k, v in value.items()})
