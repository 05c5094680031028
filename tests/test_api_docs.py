"""The public API's docstrings describe the public API (``import render``).

No outside source: these tests hold the reference (docs/api, built from these
docstrings) to the names a script can use. Each public function documents every
parameter and each public result type every field, numpydoc style
(``name : type``); each public function and type is defined under its public
name (so the reference documents it there, not as an alias of another name);
no docstring names a ``render.…`` name that does not exist.
"""

from __future__ import annotations

import dataclasses
import importlib
import inspect
import re

import pytest

import render
from render import _HOME

PUBLIC = [n for n in render.__all__ if not n.startswith("__")]


def _documented(doc: str, name: str) -> bool:
    """``name`` has a numpydoc entry: a line ``name : ...`` (or ``a, name : ...``)."""
    return re.search(rf"^\s*(?:\w+, )*{re.escape(name)}(?:, \w+)* :", doc, re.M) is not None


def _resolves(dotted: str) -> bool:
    parts = dotted.split(".")
    for i in range(len(parts), 0, -1):
        try:
            obj = importlib.import_module(".".join(parts[:i]))
        except ImportError:
            continue
        for p in parts[i:]:
            if dataclasses.is_dataclass(obj) and p in {f.name for f in dataclasses.fields(obj)}:
                return True  # a dataclass's field is no class attribute
            if not hasattr(obj, p):
                return False
            obj = getattr(obj, p)
        return True
    return False


@pytest.mark.parametrize("name", PUBLIC)
def test_docstring_describes_the_public_api(name):
    obj = getattr(render, name)
    doc = inspect.getdoc(obj) or ""
    assert doc, name
    for ref in re.findall(r"(?<![\w/-])(render(?:\.\w+)+)", doc):
        assert _resolves(ref), f"{name}'s docstring refers to {ref}, which does not exist"
    if inspect.isfunction(obj):
        missing = [p for p in inspect.signature(obj).parameters if not _documented(doc, p)]
        assert not missing, f"{name}: parameters not documented: {missing}"
    elif dataclasses.is_dataclass(obj):
        missing = [f.name for f in dataclasses.fields(obj) if not _documented(doc, f.name)]
        assert not missing, f"{name}: fields not documented: {missing}"


@pytest.mark.parametrize("name", PUBLIC)
def test_each_public_name_is_the_name_it_is_defined_under(name):
    home = importlib.import_module(_HOME[name])
    obj = inspect.unwrap(getattr(render, name))
    assert getattr(home, name) is obj
    if inspect.isclass(obj) or inspect.isfunction(obj):
        assert obj.__name__ == name, f"render.{name} is {obj.__module__}.{obj.__name__}"


def test_figures_takes_its_responses_by_keyword_only():
    params = inspect.signature(render.figures).parameters
    assert [p.name for p in params.values() if p.kind is not inspect.Parameter.KEYWORD_ONLY] == ["designs"]


# each command the README says has a public function, and the function(s) doing its work
FUNCTIONS = {
    "response": ["response", "figures"],
    "hum": ["hum", "hum_map", "hum_positions", "hum_tolerances", "hum_run"],
    "noise": ["noise", "noise_run"],
    "bias": ["bias_sweep", "bias_run"],
    "clips": ["render_clips"],
    "fit": ["fit", "fit_and_render"],
    "unvoice": ["unvoice"],
    "blind": ["build_blind_session"],
    "score": ["score_blind_session"],
    "coil fit": ["fit_coil"],
}


def test_readme_says_which_commands_have_a_public_function():
    from pathlib import Path

    from render.cli import main

    text = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    flat = " ".join(text.split())
    m = re.search(r"The commands (.*?) are thin layers over public functions .*? The commands (.*?) have no public function", flat)
    assert m, "README.md: the two lists of commands under 'Using render from Python'"
    having, without = (re.findall(r"`([^`]+)`", g) for g in m.groups())
    assert sorted(having) == sorted(FUNCTIONS)
    for command in having:
        assert all(f in render.__all__ for f in FUNCTIONS[command]), command
    tops = {c.split()[0] for c in having + without}
    assert tops == set(main.list_commands(None))  # every command is in one list or the other
    assert {"coil fit", "coil MODEL"} <= set(having + without)
