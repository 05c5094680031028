"""One meaning per name: a public function or class name is defined once in the package.

The project's own naming rule (DEVELOPERS.md); no outside source. Names defined in more
than one module are listed below, each with why the two are kept apart; a new name
defined twice fails until it gets a name of its own or a line here.
"""

from __future__ import annotations

import ast
import collections
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "render"

KEPT = {
    # one job at two layers: the dispatch on whether a design has hum sources in space
    "hum_only": {"analysis/hum.py", "analysis/hum_sources.py"},
    "rejection_curve": {"analysis/hum.py", "analysis/hum_sources.py"},
    # a click command's function and printers, each private to its command module
    "fit_command": {"cli/coil_fit.py", "cli/fit.py"},
    "print_record": {"cli/coil.py", "cli/sense.py"},
    "summary_lines": {"cli/noise.py", "cli/response.py", "listening/score.py"},
}


def _definitions() -> dict[str, set[str]]:
    found: dict[str, set[str]] = collections.defaultdict(set)
    for p in sorted(PACKAGE.rglob("*.py")):
        for node in ast.parse(p.read_text(encoding="utf-8")).body:
            if isinstance(node, (ast.FunctionDef, ast.ClassDef)) and not node.name.startswith("_"):
                found[node.name].add(p.relative_to(PACKAGE).as_posix())
    return found


def test_no_public_name_is_defined_in_two_modules_unless_listed():
    twice = {name: places for name, places in _definitions().items() if len(places) > 1 and KEPT.get(name) != places}
    assert not twice, f"defined in more than one module (give each meaning its own name): {twice}"


def test_the_list_of_kept_names_is_current():
    defs = _definitions()
    stale = {name: places for name, places in KEPT.items() if defs.get(name) != places}
    assert not stale, f"no longer defined in exactly these modules; drop or mend the line: {stale}"
