"""The listening page: HTML, CSS and JavaScript, package data files served as they are.

The page is the same bytes for every session; everything about a session
comes from ``/api/state`` as JSON and is put into the page with
``textContent`` only. A trial is laid out as three cards in a row: A on
the left, B on the right, and between them the hidden X (ABX) or a "no
preference" mark (preference); the answer is marked on the card itself
("same as X", "prefer this"). The keys follow the layout: left arrow A,
up arrow X, right arrow B; Shift with an arrow marks that side (Shift and
down: no preference), and focus moves to "Save and go on", so Enter saves;
P plays or pauses, Home goes back to the start.

Playback uses the Web Audio API: every clip of a trial is fetched and
decoded first, then all of them start together from the same offset, each
through its own gain; switching cards only moves the gains (a 2 ms glide, so
the switch is instant and click-free, at the very same position). An answer
is sent the moment "Save and go on" is pressed and is kept in the tab
(sessionStorage) until the server confirms it, so a server restart or a
reload loses nothing. At the end the page shows the score (correct of
total, or the preference counts), one cell per trial and the exact binomial
p-value, also as a percentage, in the words ``render score`` prints (the
score's ``p_shown`` and ``percent_shown``, :func:`render.listening.score.p_shown`).

The three files live in ``render/listening/static/`` (declared as package
data in ``pyproject.toml``) and are read with :mod:`importlib.resources`, so
an installed package, a wheel or a zip finds them as the source tree does.
"""

from __future__ import annotations

from dataclasses import dataclass
from importlib import resources

from ..errors import InputError

STATIC_FOLDER = "static"  # beside this module, inside the package
PAGE_FILE_NAMES = ("page.html", "page.css", "page.js")


@dataclass(frozen=True)
class PageFiles:
    """The page's three files as served (UTF-8 bytes)."""

    html: bytes
    css: bytes
    js: bytes


def page_file(name: str) -> bytes:
    """The bytes of one of :data:`PAGE_FILE_NAMES`, read from the installed package."""
    if name not in PAGE_FILE_NAMES:
        raise ValueError(f"{name!r}: not one of the page's files {PAGE_FILE_NAMES}")
    try:
        return resources.files(__package__).joinpath(STATIC_FOLDER).joinpath(name).read_bytes()
    except OSError as exc:
        raise InputError(f"render/listening/{STATIC_FOLDER}/{name}: the listening page's file is missing from the installed package ({exc.strerror or exc}); reinstall render") from None


def read_page() -> PageFiles:
    """All three files of the listening page."""
    html, css, js = (page_file(name) for name in PAGE_FILE_NAMES)
    return PageFiles(html=html, css=css, js=js)
