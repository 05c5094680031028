"""The package face's one rule for inputs (``import render``).

Every public function that takes a design takes it as a design file's path or
a loaded :class:`render.Design`; every one that takes a rig takes it as
``rig=``: a rig file's path, a loaded :class:`render.RigFile` or None. Anything
else is refused with one :class:`render.InputError` line that names the
argument and what to pass. :func:`takes_files` wraps each such function as
:mod:`render` hands it out; the functions behind it take loaded objects.
"""

from __future__ import annotations

import functools
import inspect
from collections.abc import Callable
from pathlib import Path
from typing import Any

# the type lines the wrapped functions' docstrings give, as the face takes them
_DOC_TYPES = {
    "design : Design\n": "design : Design or str or Path\n",
    "designs : sequence of Design\n": "designs : sequence of Design or str or Path\n",
    "designs : two Design\n": "designs : two Design or str or Path\n",
    "rig : RigFile or None\n": "rig : RigFile or str or Path or None\n",
}


def _designs(value: Any) -> list:
    from .design.loading import DESIGN_FORMS, load_design
    from .errors import InputError

    if isinstance(value, (str, Path)) or not hasattr(value, "__iter__"):
        raise InputError(f"designs: got {type(value).__name__}; pass a list, each {DESIGN_FORMS}")
    return [load_design(d, argument=f"designs[{i}]") for i, d in enumerate(value)]


def _coerce(name: str, value: Any, *, recording: bool = False) -> Any:
    from .design.loading import as_rig, load_design
    from .design.vary import check_matches_text

    if name == "design":
        design = load_design(value, argument="design")
        if recording:
            check_matches_text([design], "design")
        return design
    if name == "designs":
        designs = _designs(value)
        if recording:
            check_matches_text(designs)
        return designs
    return as_rig(value, argument="rig")


def takes_files(func: Callable, *, recording: bool = False) -> Callable:
    """``func`` with its ``design``, ``designs`` and ``rig`` arguments read as the face takes them.

    recording : the function records the designs it renders (their files and changes): a design
    whose values were changed after loading other than with :func:`render.with_values` is refused.
    """
    sig = inspect.signature(func)
    names = [n for n in ("design", "designs", "rig") if n in sig.parameters]
    if not names:
        return func

    @functools.wraps(func)
    def call(*args: Any, **kwargs: Any) -> Any:
        try:
            bound = sig.bind(*args, **kwargs)
        except TypeError:
            return func(*args, **kwargs)  # Python's own message for a wrong call
        for n in names:
            if n in bound.arguments:
                bound.arguments[n] = _coerce(n, bound.arguments[n], recording=recording)
        return func(*bound.args, **bound.kwargs)

    doc = func.__doc__ or ""
    for old, new in _DOC_TYPES.items():
        doc = doc.replace(old, new)
    call.__doc__ = doc
    return call
