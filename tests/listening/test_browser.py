"""A real browser runs a whole ABX session: headless Chromium driven by Playwright.

Source of the check value: the one-sided binomial tail P(X ≥ 3 | n = 6, p = ½) = 42/64
(binomial distribution, as scipy.stats.binomtest).

The page is loaded, the clips of each trial are fetched and decoded, played
and switched; every trial is answered; half-way the server is stopped while
an answer is being recorded (the page keeps it and sends it again) and then
restarted, and the page is reloaded and resumes where it left off. At the
end the answers file and ``render score`` are checked.

Needs Debian's ``chromium`` and ``pip install playwright`` (never
``playwright install``: the system browser is used). Without them the test
skips with the reason printed; under CI=true it fails instead.
"""

from __future__ import annotations

import json
import os
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

CHROMIUM = "/usr/bin/chromium"
ARGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]
TIMEOUT_MS = 20000


def _browser_or_skip() -> str:
    """The Chromium to launch; skips (or, under CI=true, fails) with the reason when something is missing."""
    missing = []
    executable = CHROMIUM if Path(CHROMIUM).exists() else shutil.which("chromium")
    if not executable:
        missing.append(f"{CHROMIUM} not found (Debian: apt-get install chromium)")
    try:
        from playwright.sync_api import sync_playwright  # noqa: F401
    except ImportError:
        missing.append("playwright for Python not installed (pip install playwright; the system chromium is used)")
    if missing:
        reason = "browser test needs " + "; ".join(missing)
        if os.environ.get("CI") == "true":
            pytest.fail(reason + " (CI=true: required)")
        print(reason)
        pytest.skip(reason)
    return executable


def _wait_phase(page, phase, **attrs):
    sel = f'body[data-phase="{phase}"]' + "".join(f'[data-{k}="{v}"]' for k, v in attrs.items())
    page.wait_for_selector(sel, state="attached", timeout=TIMEOUT_MS)


def test_a_listener_answers_every_trial_across_a_server_restart(make_session, serve, tmp_path):
    executable = _browser_or_skip()
    from playwright.sync_api import sync_playwright

    from render.cli.score import score_command
    from render.listening.build import slot_design

    trials = 6
    paths = make_session(method="abx", trials=trials, seed=21, seconds=1.0)
    key = json.loads(paths.key.read_text())
    # answer right on even trials, wrong on odd ones: the score must come out as 3 of 6
    given = [t["x"] if t["index"] % 2 == 0 else {"A": "B", "B": "A"}[t["x"]] for t in key["trials"]]
    server = serve(paths.root)
    port = server.port
    errors = []
    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=executable, args=ARGS, headless=True)
        try:
            page = browser.new_page()
            page.on("pageerror", lambda exc: errors.append(str(exc)))
            page.goto(server.url)
            _wait_phase(page, "caution")
            caution = page.inner_text("#caution")
            assert "volume" in caution and "stays" in caution and "loud" in caution
            page.click("#begin")

            for i in range(trials):
                _wait_phase(page, "ready", trial=i)
                if i == 3:
                    # stop the server, record an answer while it is down, then bring it back
                    server.stop()
                    page.click(f'.choice[data-answer="{given[i]}"]')
                    page.click("#record")
                    page.wait_for_selector('body[data-saving="retrying"]', state="attached", timeout=TIMEOUT_MS)
                    assert "Not saved yet" in page.inner_text("#status")
                    assert paths.answers.read_text().count("\n") == 3  # nothing reached the disk meanwhile
                    server = serve(paths.root, port=port)
                    _wait_phase(page, "ready", trial=4)
                    # and a reload resumes where the listener left off
                    page.reload()
                    _wait_phase(page, "caution")
                    assert "Welcome back" in page.inner_text("#heading")
                    assert page.get_attribute("body", "data-answered") == "4"
                    page.click("#begin")
                    continue
                assert page.get_attribute("body", "data-decoded") == "3"  # A, B and X decoded
                assert abs(float(page.get_attribute("body", "data-duration")) - 1.0) < 0.01  # s, as rendered
                assert page.inner_text("#heading") == f"Trial {i + 1} of {trials}"
                if i == 0:
                    page.click("#play")
                    page.wait_for_selector('body[data-playing="true"]', state="attached", timeout=TIMEOUT_MS)
                    for slot in ("B", "X", "A"):
                        page.click(f'.tile[data-slot="{slot}"]')
                        assert page.get_attribute("body", "data-active") == slot
                    page.click("#play")
                    page.wait_for_selector('body[data-playing="false"]', state="attached", timeout=TIMEOUT_MS)
                    page.fill("#comment", "brighter attack on X")
                page.click(f'.choice[data-answer="{given[i]}"]')
                page.click("#record")
            _wait_phase(page, "done")
            page.wait_for_selector('body[data-result="shown"]', state="attached", timeout=TIMEOUT_MS)
            assert "3 of 6" in page.inner_text("#result")
        finally:
            browser.close()
    server.stop()
    assert errors == []

    lines = [json.loads(line) for line in paths.answers.read_text().splitlines()]
    assert [a["trial"] for a in lines] == list(range(trials))  # each trial once, in order: nothing lost or duplicated
    assert [a["answer"] for a in lines] == given
    assert lines[0]["comment"] == "brighter attack on X"

    result = CliRunner().invoke(score_command, [str(paths.root), "--no-plot"])
    assert result.exit_code == 0, result.output
    assert "3 of 6 correct" in result.output
    # one-sided binomial P(X >= 3 | n = 6, p = 1/2) = 42/64 (binomial distribution, as scipy.stats.binomtest)
    assert "p = 0.6562" in result.output
    # the table names the design in each slot as the key has it
    first = key["trials"][0]
    names = [d["name"] for d in key["designs"]]
    row = next(line for line in result.output.splitlines() if line.strip().startswith("1 "))
    assert names[slot_design(first, "X")] in row
