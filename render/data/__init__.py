"""Files shipped inside the package, so that the defaults are found from any folder.

``default.toml`` is the demo phrase (the default of ``render clips``, ``bias``,
``blind``, ``watch`` and ``fit --render``) and ``near-transformer.toml`` the
demo rig. The copies in the project's ``dry_signals/`` and ``rigs/`` folders
are the user-facing ones and stay byte-identical to these (a test checks it).
"""

from __future__ import annotations

from pathlib import Path

DATA = Path(__file__).resolve().parent
DEFAULT_PHRASE = "default.toml"
DEMO_RIG = "near-transformer.toml"


def shipped(name: str) -> Path:
    """The path of a shipped file (``DEFAULT_PHRASE`` or ``DEMO_RIG``)."""
    return DATA / name
