"""A design with some of its values changed, as a design file would hold them.

:func:`with_values` is the one way the package face offers to change a part of a
loaded design: it edits the design file's own text (comments and layout kept,
with tomlkit) and reads the result back through the loader, so every check a
file gets and everything the loader derives (a winding's L and R, a
construction's field solve, a geometry's turns area) apply to the changed
design as well. The design keeps the file it came from (``source``, whose
folder relative paths are found from) and its bytes' SHA-256, and records the
changes (``changes``) and the changed text (``text``), so a render's record and
a blind session's key say what was heard.

A design changed any other way (``dataclasses.replace``) no longer matches its
text; the jobs that write records refuse it (:func:`check_matches_text`) rather
than record a file that was not what they rendered.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import replace
from pathlib import Path
from typing import Any

from ..errors import ArgumentError, InputError
from .model import Design
from .schema import MAX_NAME_CHARS


def _plain(value: Any, key: str) -> Any:
    """``value`` as TOML can hold it: str, bool, int, float, or a list of them."""
    import numpy as np

    if isinstance(value, (bool, str)):
        return value
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        if not math.isfinite(value):
            raise ArgumentError("values", f"{{{key!r}: {value}}}", 'expected a finite number, or a string with its unit as in a design file ("220p")')
        return float(value)
    if isinstance(value, (list, tuple, np.ndarray)):
        return [_plain(v, key) for v in list(value)]
    raise ArgumentError("values", f"{{{key!r}: {type(value).__name__}}}", 'expected a number in SI units, a string as in a design file ("220p", "4k7") or a list of them, or None to leave the key out')


def _set(doc: Any, key: str, value: Any) -> None:
    """Set ``key`` ("table.key", "coil_a.geometry.turns", "hum.source.0.moment") in the tomlkit document."""
    import tomlkit

    parts = key.split(".")
    if len(parts) < 2 or not all(parts):
        raise ArgumentError("values", repr(key), 'expected "table.key" as in the design file, e.g. "feedback.c" or "coil_a.geometry.turns"')
    node = doc
    for i, part in enumerate(parts[:-1]):
        if isinstance(node, list):
            if not part.isdigit() or int(part) >= len(node):
                raise ArgumentError("values", repr(key), f"{'.'.join(parts[:i])} holds {len(node)} table{'s' if len(node) != 1 else ''}; index them from 0")
            node = node[int(part)]
            continue
        if part not in node:
            if value is None:
                return  # leaving out a key whose table is absent changes nothing
            node[part] = tomlkit.table()
        node = node[part]
        if not isinstance(node, (dict, list)):
            raise ArgumentError("values", repr(key), f"{'.'.join(parts[: i + 1])} is a value, not a table")
    last = parts[-1]
    if isinstance(node, list):
        raise ArgumentError("values", repr(key), f"{'.'.join(parts[:-1])} holds tables; name one by its index, e.g. {key.rsplit('.', 1)[0]}.0.{last}")
    if value is None:
        if last in node:
            del node[last]
        return
    node[last] = _plain(value, key)


def _default_name(design: Design, changes: Mapping[str, Any]) -> str:
    shown = ", ".join(f"{k}={v}" if not isinstance(v, float) else f"{k}={v:g}" for k, v in changes.items())
    name = f"{design.name} {shown}"
    if len(name) > MAX_NAME_CHARS or not name.isprintable():
        raise ArgumentError("name", repr(name), f"the name made from the changes is over {MAX_NAME_CHARS} characters; give name= (one line, it heads every report)")
    return name


def with_values(design: Design, values: Mapping[str, Any], *, name: str | None = None) -> Design:
    """The design with some values changed, checked and derived as if its file said so.

    Parameters
    ----------
    design : Design
        A design loaded from its file (:func:`render.load_design`), or one this function made.
    values : mapping of str to (str or float or int or bool or list or None)
        ``"table.key"`` as in the design file (``"feedback.c"``, ``"input_b.bias_top"``,
        ``"coil_a.geometry.turns"``, ``"hum.source.0.moment"``) to its new value, written as
        the file would hold it: a string with its unit (``"220p"``, ``"4k7"``, ``"3mm"``) or a
        number in SI units (F, Ω, m, H, V, T); None leaves the key out (its default applies).
    name : str, optional
        The changed design's name, one line (it heads every report and names its clip's
        files). Default: the design's name followed by the changes.

    Returns
    -------
    Design
        Read back through the loader from the design file's text with the changes made:
        ``source`` and ``sha256`` are still the file's, ``changes`` lists every change made
        since the file was read (in order, a later value of a key replacing an earlier one)
        and ``text`` is the changed file. A rig applied to ``design`` is applied again.

    Raises
    ------
    ArgumentError
        For a design that has no file text (built in memory) or no longer matches it,
        a key that is not "table.key", or a value TOML cannot hold.
    InputError
        For a changed design the loader refuses (the same one line a file would get,
        prefixed with the change).

    Examples
    --------
    >>> d = render.load_design("models/studio-reference.toml")             # doctest: +SKIP
    >>> d2 = render.with_values(d, {"feedback.c": "220p"}, name="ref 220p")  # doctest: +SKIP
    """
    import tomlkit

    from ..io.toml import parse_toml_text
    from .loading import parse_design

    if not isinstance(values, Mapping) or not values:
        raise ArgumentError("values", type(values).__name__ if not isinstance(values, Mapping) else "{}", 'expected a mapping of "table.key" to its new value, e.g. {"feedback.c": "220p"}')
    base = _file_design(design, "design")
    changes = dict(design.changes)
    for k, v in values.items():
        if not isinstance(k, str):
            raise ArgumentError("values", repr(k), 'each key is a string "table.key", e.g. "feedback.c"')
        changes.pop(k, None)  # a key changed again moves to the end
        changes[k] = None if v is None else _plain(v, k)
    if name is None:
        name = _default_name(base, {k: values[k] for k in values})
    doc = tomlkit.parse(design.text)
    for k, v in values.items():
        _set(doc, k, v)
    doc["name"] = name
    shown = ", ".join(f"{k} = {v!r}" for k, v in values.items())
    text = tomlkit.dumps(doc)
    text = f"# {Path(design.source).name} with {shown} (render.with_values)\n" + text
    where = f"{design.source} with {shown}"
    try:
        changed = parse_design(parse_toml_text(text, where), source=design.source, name=name, sha256=design.sha256, text=text, changes=tuple(changes.items()))
    except InputError as exc:
        raise InputError(f"{where}: {exc}" if not str(exc).startswith(design.source) else f"with {shown}: {exc}") from None
    if (design.rig, design.hum) != (base.rig, base.hum):  # a rig file applied after loading
        changed = replace(changed, rig=design.rig, hum=design.hum)
    return changed


def _file_design(design: Any, argument: str) -> Design:
    """The design as its text reads (rig and hum as the text gives them); refuses one with no text or changed since."""
    from ..io.toml import parse_toml_text
    from .loading import parse_design

    if not isinstance(design, Design):
        raise ArgumentError(argument, type(design).__name__, "expected a render.Design (render.load_design)")
    if not design.text:
        raise ArgumentError(argument, design.name, "built in memory, with no design file text to change or record; load it from its file with render.load_design")
    base = parse_design(parse_toml_text(design.text, design.source), source=design.source, name=design.name, sha256=design.sha256, text=design.text, changes=design.changes)
    played = replace(base, rig=design.rig, hum=design.hum)
    if played != design:
        raise ArgumentError(
            argument,
            design.name,
            "its values were changed after it was read (dataclasses.replace?), so its file no longer says what it is; change values with render.with_values(design, {...}) so the records say what was rendered",
        )
    return base


def check_matches_text(designs: Any, argument: str = "designs") -> None:
    """Refuse a design whose values no longer match its file text (changed with ``dataclasses.replace``): a record of it would name the wrong file."""
    for i, d in enumerate(designs):
        if isinstance(d, Design) and d.text:
            _file_design(d, f"{argument}[{i}]" if argument == "designs" else argument)
