"""The design's own divider in every bias sweep, and labels that tell ratios apart (rules of our own: no outside source)."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import pytest

from render.analysis.bias import sweep
from render.analysis.bias_labels import own_ratio, ratio_labels
from render.design import load_design

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"


def test_own_ratio_is_added_in_order_and_marked():
    d = load_design(REF)
    d = replace(d, input_b=replace(d.input_b, bias_top=220e3, bias_bottom=270e3))
    r0 = 270 / 490  # bottom/(top + bottom) = 0.551020…
    assert own_ratio(d) == pytest.approx(r0)
    s = sweep(d, ratios=[0.3, 0.5, 0.7], include_own=True)
    assert [x.ratio for x in s] == pytest.approx([0.3, 0.5, r0, 0.7])
    assert [x.label for x in s] == ["ratio 0.30, 9 V", "ratio 0.50, 9 V", "ratio 0.5510 (own), 9 V", "ratio 0.70, 9 V"]


def test_own_ratio_already_swept_is_only_marked():
    s = sweep(load_design(REF), ratios=[0.4, 0.5, 0.6], include_own=True)
    assert [x.label for x in s] == ["ratio 0.40, 9 V", "ratio 0.50 (own), 9 V", "ratio 0.60, 9 V"]


def test_explicit_dividers_get_the_own_one():
    s = sweep(load_design(REF), tops=[100e3], bottoms=[330e3], include_own=True)
    assert len(s) == 2 and s[1].label.endswith("(own), 9 V") and s[1].top == pytest.approx(220e3)


def test_the_low_level_sweep_adds_nothing_unless_asked():
    s = sweep(load_design(REF), ratios=[0.7])
    assert [x.label for x in s] == ["ratio 0.70, 9 V"]


@pytest.mark.parametrize(
    "ratios,labels",
    [
        ([0.3, 0.55], ["ratio 0.30", "ratio 0.55"]),
        ([0.5, 0.50004], ["ratio 0.500", "ratio 0.50004"]),
        ([0.45, 0.454545454545], ["ratio 0.45", "ratio 0.4545"]),
    ],
)
def test_labels_differ(ratios, labels):
    assert ratio_labels(ratios) == labels
