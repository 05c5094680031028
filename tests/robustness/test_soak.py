"""A short soak in the test suite: renders in one process with a stable resident set
(the full 200 renders are ``python tests/bench/soak.py``)."""

from __future__ import annotations

import importlib.util

from .conftest import ROOT

_spec = importlib.util.spec_from_file_location("render_soak", ROOT / "tests" / "bench" / "soak.py")
soak = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(soak)


def test_sixty_renders_do_not_grow_the_resident_set(tmp_path):
    lines = []
    series = soak.soak(60, every=10, out=tmp_path, show=lines.append)
    assert [n for n, _ in series] == [1, 10, 20, 30, 40, 50, 60] and len(lines) == 7
    # the script's own bound (40 MB after a 20-render warm-up: common practice, no source)
    assert soak.growth_mb(series) <= soak.BOUND_MB, lines
    assert sorted(p.name for p in tmp_path.iterdir()) == ["soak.json", "soak.png", "soak.wav"]  # one of each, replaced each time
