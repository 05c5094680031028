"""`render bias` names one clip per setting: settings that agree to three decimals still get their own files."""

from __future__ import annotations

from types import SimpleNamespace as S

from render.runs.bias import setting_tags


def test_three_decimals_when_they_tell_settings_apart():
    # the README's file names: r0p300-9V … (a ratio to three decimals, the battery as written)
    assert setting_tags([S(ratio=0.3, battery=9.0), S(ratio=0.5, battery=9.0), S(ratio=0.5, battery=7.5)]) == ["r0p300-9V", "r0p500-9V", "r0p500-7p5V"]


def test_close_ratios_get_more_decimals():
    # 0.5 (the design's own) and 0.5004 both read "r0p500" to three decimals, and one clip overwrote the other
    tags = setting_tags([S(ratio=0.5, battery=9.0), S(ratio=0.5004, battery=9.0)])
    assert tags == ["r0p5000-9V", "r0p5004-9V"]


def test_settings_equal_to_nine_decimals_are_numbered():
    # 0.5 and 0.5 + 1e-12 agree to nine decimals (arithmetic), so only their place in the sweep tells them apart
    tags = setting_tags([S(ratio=0.5, battery=9.0), S(ratio=0.5 + 1e-12, battery=9.0)])
    assert len(set(tags)) == 2 and tags[0].endswith("-1") and tags[1].endswith("-2")
