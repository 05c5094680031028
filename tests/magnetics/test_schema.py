"""Reading [coil_x.geometry] and [[hum.source]] tables: values, units and one-line refusals."""

import numpy as np
import pytest

from render.design import Winding
from render.errors import InputError
from render.io import toml as tomllib  # the standard library parser, or tomli on Python 3.10
from render.magnetics.schema import read_geometry, read_sources

GEOMETRY_TOML = """
[coil_a.geometry]
turns = 1200
length = "68mm"
width = "13mm"
window_length = "58mm"
window_width = "3mm"
height = "9mm"
"""

SOURCES_TOML = """
[[hum.source]]
kind = "dipole"
moment = 0.05
at = ["0.4m", "0.1m", "-5cm"]
axis = [0, 0, 2]

[[hum.source]]
kind = "uniform"
field = "0.5uT"
axis = [1, 0, 0]
harmonics = [1.0, 0.0, 0.2]
phase = -30
"""


def _winding(**kw):
    base = dict(turns=1200, wire_diameter=6.35e-5, wire_awg=42.0, mean_turn=0.142, height=0.009, depth=0.005, core_factor=1.0, temperature=20.0, wire_length=170.4, inductance=0.3, resistance=500.0)
    return Winding(**{**base, **kw})


def test_geometry_table():
    g = read_geometry(tomllib.loads(GEOMETRY_TOML)["coil_a"]["geometry"], source="m.toml", table="coil_a.geometry")
    assert (g.turns, g.length, g.width, g.window_length, g.window_width, g.height) == pytest.approx((1200, 0.068, 0.013, 0.058, 0.003, 0.009))
    # 0.6148 m²: arithmetic by hand in test_coil.py
    assert g.turns_area == pytest.approx(0.6148, rel=1e-12)


def test_geometry_with_a_winding_takes_only_the_window_width():
    g = read_geometry({"window_width": "3mm"}, source="m.toml", table="coil_a.geometry", winding=_winding())
    assert (g.length, g.width, g.window_length) == pytest.approx((0.068, 0.013, 0.058))
    with pytest.raises(InputError, match=r"m.toml: \[coil_a.geometry\]: turns given here and in the coil's winding table"):
        read_geometry({"turns": 1200, "window_width": "3mm"}, source="m.toml", table="coil_a.geometry", winding=_winding())
    with pytest.raises(InputError, match="length given with a winding table"):
        read_geometry({"window_width": "3mm", "length": "68mm"}, source="m.toml", table="coil_a.geometry", winding=_winding())
    with pytest.raises(InputError, match="missing window_width"):
        read_geometry({}, source="m.toml", table="coil_a.geometry", winding=_winding())


@pytest.mark.parametrize(
    "change, message",
    [
        ({"window_length": "70mm"}, "window_length=70mm: must be smaller than length=68mm"),
        ({"height": "9"}, "height="),
        ({"lenght": "68mm"}, "unknown key 'lenght'"),
    ],
)
def test_bad_geometry_tables(change, message):
    data = tomllib.loads(GEOMETRY_TOML)["coil_a"]["geometry"]
    data.update(change)
    if "lenght" in change:
        del data["length"]
    with pytest.raises(InputError) as e:
        read_geometry(data, source="m.toml", table="coil_a.geometry")
    assert message in str(e.value) and "\n" not in str(e.value)


def test_sources_table():
    s = read_sources(tomllib.loads(SOURCES_TOML)["hum"]["source"], source="r.toml", n_harmonics=3)
    assert s[0].kind == "dipole" and s[0].moment == 0.05
    np.testing.assert_allclose(s[0].at, (0.4, 0.1, -0.05))
    assert s[0].axis == (0.0, 0.0, 1.0)  # normalised
    assert s[1].kind == "uniform" and s[1].field == pytest.approx(0.5e-6) and s[1].phase == -30.0
    assert s[1].harmonics == (1.0, 0.0, 0.2) and s[0].harmonics is None


@pytest.mark.parametrize(
    "table, message",
    [
        ({"kind": "wire", "moment": 1}, 'kind=\'wire\': expected "dipole" or "uniform"'),
        ({"kind": "dipole", "moment": 0.05}, "missing required key 'at'"),
        ({"kind": "dipole", "moment": 0.05, "at": ["1m", "0m"]}, "at=['1m', '0m']: expected three values"),
        ({"kind": "dipole", "moment": 0.05, "at": [1, 0, 0], "axis": [0, 0, 0]}, "an axis needs a direction"),
        ({"kind": "uniform", "field": "1uT", "at": [1, 0, 0]}, "unknown key 'at' for a uniform source"),
        ({"kind": "uniform", "field": "1uT", "harmonics": [1, 0.5]}, "harmonics: 2 values, but the [hum] profile has 3"),
        ({"kind": "dipole", "moment": -1, "at": [1, 0, 0]}, "moment=-1: must not be negative"),
        ({"kind": "uniform", "field": "1uT", "phase": 400}, "phase=400"),
    ],
)
def test_bad_sources(table, message):
    with pytest.raises(InputError) as e:
        read_sources([table], source="r.toml", n_harmonics=3)
    assert message in str(e.value) and str(e.value).startswith("r.toml: [hum.source 1]") and "\n" not in str(e.value)
