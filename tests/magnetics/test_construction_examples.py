"""A missing [construction] key's message suggests a value that key accepts.

The check is against the schema itself (render.design.construction.CONSTRUCTION): each field's
suggested example, pasted into a design as TOML, is read back by that field's own reader and is
inside its range; and each required key's suggestion, pasted into the demo it was taken from,
gives a [construction] table that reads.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from render.design.construction import CONSTRUCTION, read_construction
from render.errors import InputError
from render.io.toml import loads, read_toml
from render.validate import field_example, read_value

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "models" / "slipway-magnet-blades.toml"  # the first kind, the one kind's example names


@pytest.mark.parametrize("key", list(CONSTRUCTION))
def test_every_fields_example_reads(key):
    spec = CONSTRUCTION[key]
    text = f"{key} = {field_example(spec)}"
    raw = loads(text)[key]  # valid TOML as written
    read_value(raw, spec, source="x.toml", table="construction", key=key)  # refused would raise


@pytest.mark.parametrize("key", [k for k, f in CONSTRUCTION.items() if f.required])
def test_a_missing_keys_suggestion_pasted_back_reads(key):
    data, _ = read_toml(DEMO)
    table = dict(data["construction"])
    del table[key]
    if key == "string_cores":
        table.pop("string_diameters")  # the per-string lists follow the cores' count: one height for all
        table["string_height"] = table["string_height"][0]
    with pytest.raises(InputError, match=f"missing required key '{key}'") as info:
        read_construction(table, source="x.toml")
    line = re.search(r"add e\.g\. (.+)$", str(info.value)).group(1)
    table.update(loads(line))
    read_construction(table, source="x.toml")


def test_no_suggestion_is_refused_by_its_own_key():
    """The old message suggested kind = 1 and string_spacing = "30mm" or "6m" (6 m is outside 3 mm..30 mm)."""
    assert field_example(CONSTRUCTION["kind"]) == '"magnet-blades"'
    assert field_example(CONSTRUCTION["string_spacing"]) == '"9.5mm"'  # √(3 mm · 30 mm) to two figures
