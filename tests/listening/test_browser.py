"""A real browser runs a whole ABX session: headless Chromium driven by Playwright.

Source of the check value: the one-sided binomial tail P(X ≥ 3 | n = 6, p = ½) = 42/64
(binomial distribution, as scipy.stats.binomtest).

The page is loaded, the clips of each trial are fetched and decoded, played
and switched; every trial is answered; half-way the server is stopped while
an answer is being recorded (the page keeps it and sends it again) and then
restarted, and the page is reloaded and resumes where it left off. At the
end the answers file and ``render score`` are checked. Further tests drive
the page from the keyboard alone, check the cards' layout (A left, X between,
B right) and run a preference session to its outcome.

Needs Debian's ``chromium`` and ``pip install playwright`` (never
``playwright install``: the system browser is used). Without them the test
skips with the reason printed; under CI=true it fails instead.
"""

from __future__ import annotations

import contextlib
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
            assert page.inner_text("#tally") == f"0 answered \u00b7 {trials} to go"
            page.click("#begin")

            for i in range(trials):
                _wait_phase(page, "ready", trial=i)
                if i == 3:
                    # stop the server, record an answer while it is down, then bring it back
                    server.stop()
                    page.click(f'.pick[data-answer="{given[i]}"]')
                    page.click("#save")
                    page.wait_for_selector('body[data-saving="retrying"]', state="attached", timeout=TIMEOUT_MS)
                    assert "Not saved yet" in page.inner_text("#status")
                    assert paths.answers.read_text().count("\n") == 3  # nothing reached the disk meanwhile
                    server = serve(paths.root, port=port)
                    _wait_phase(page, "ready", trial=4)
                    # and a reload resumes where the listener left off
                    page.reload()
                    _wait_phase(page, "caution")
                    assert "where you left off" in page.inner_text("#heading")
                    assert page.get_attribute("body", "data-answered") == "4"
                    page.click("#begin")
                    continue
                assert page.get_attribute("body", "data-decoded") == "3"  # A, B and X decoded
                assert abs(float(page.get_attribute("body", "data-duration")) - 1.0) < 0.01  # s, as rendered
                assert page.inner_text("#heading") == "Where does X belong?"
                assert page.inner_text("#tally") == f"{i} answered \u00b7 {trials - i} to go"
                assert page.locator("#ruler li.answered").count() == i and page.locator("#ruler li.current").count() == 1
                if i == 0:
                    page.click("#play")
                    page.wait_for_selector('body[data-playing="true"]', state="attached", timeout=TIMEOUT_MS)
                    for slot in ("B", "X", "A"):
                        page.click(f'.listen[data-slot="{slot}"]')
                        assert page.get_attribute("body", "data-active") == slot
                    page.click("#play")
                    page.wait_for_selector('body[data-playing="false"]', state="attached", timeout=TIMEOUT_MS)
                    page.fill("#comment", "brighter attack on X")
                page.click(f'.pick[data-answer="{given[i]}"]')
                assert page.inner_text("#picked") == f"Marked: X copies {given[i]}."
                page.click("#save")
            _wait_phase(page, "done")
            page.wait_for_selector('body[data-result="shown"]', state="attached", timeout=TIMEOUT_MS)
            assert "X placed right in 3 of 6 trials" in page.inner_text("#result")
            # one-sided binomial P(X >= 3 | n = 6, p = 1/2) = 42/64 = 0.65625 (binomial distribution), an exact tie
            # at four places rounded half up, in the words render score prints (the page shows the score's own texts)
            assert "66 % of the time (p = 0.6563" in page.inner_text("#result")
            assert page.inner_text("#figure").startswith("3 / 6")
            cells = page.locator("#outcome li")
            assert [cells.nth(k).get_attribute("class") for k in range(trials)] == ["right" if k % 2 == 0 else "wrong" for k in range(trials)]
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
    assert "p = 0.6563: guessing alone does as well or better 66 % of the time" in result.output
    # the table names the design in each slot as the key has it
    first = key["trials"][0]
    names = [d["name"] for d in key["designs"]]
    row = next(line for line in result.output.splitlines() if line.strip().startswith("1 "))
    assert names[slot_design(first, "X")] in row


@contextlib.contextmanager
def _loaded_page(server, errors):
    """The session's page as loaded, in a headless Chromium that is closed afterwards; page errors go to ``errors``."""
    from playwright.sync_api import sync_playwright

    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=_browser_or_skip(), args=ARGS, headless=True)
        try:
            page = browser.new_page(viewport={"width": 900, "height": 900})
            page.on("pageerror", lambda exc: errors.append(str(exc)))
            page.goto(server.url)
            yield page
        finally:
            browser.close()


@contextlib.contextmanager
def _session_page(server, errors):
    """The session's page past its caution, in a headless Chromium that is closed afterwards."""
    with _loaded_page(server, errors) as page:
        _wait_phase(page, "caution")
        page.click("#begin")
        yield page


def test_the_keys_follow_the_cards_and_a_trial_is_answered_from_the_keyboard(make_session, serve):
    _browser_or_skip()
    paths = make_session(method="abx", trials=2, seed=5, seconds=1.0)
    key = json.loads(paths.key.read_text())
    server = serve(paths.root)
    errors = []
    with _session_page(server, errors) as page:
        _wait_phase(page, "ready", trial=0)
        # the layout: A on the left, the hidden X between, B on the right, in one row
        boxes = {s: page.locator(f'.listen[data-slot="{s}"]').bounding_box() for s in "AXB"}
        assert boxes["A"]["x"] + boxes["A"]["width"] <= boxes["X"]["x"] and boxes["X"]["x"] + boxes["X"]["width"] <= boxes["B"]["x"]
        assert page.locator('.pick[data-answer="A"]').count() == 1 and page.locator('.pick[data-answer="B"]').count() == 1
        assert page.locator('.pick[data-answer="none"]').count() == 0  # ABX has no "neither"
        # arrows follow the cards: left A, up X, right B
        for press, slot in (("ArrowRight", "B"), ("ArrowUp", "X"), ("ArrowLeft", "A")):
            page.keyboard.press(press)
            assert page.get_attribute("body", "data-active") == slot
        for press in ("2", "3", "b", "x", " "):  # no other keys switch or play
            page.keyboard.press(press)
        assert page.get_attribute("body", "data-active") == "A" and page.get_attribute("body", "data-playing") == "false"
        # Home goes back to the start
        box = page.locator("#track").bounding_box()
        page.mouse.click(box["x"] + box["width"] / 2, box["y"] + box["height"] / 2)
        assert page.inner_text("#clock") == "0.5 s of 1.0 s"
        page.keyboard.press("Home")
        assert page.inner_text("#clock") == "0.0 s of 1.0 s"
        page.keyboard.press("p")
        page.wait_for_selector('body[data-playing="true"]', state="attached", timeout=TIMEOUT_MS)
        page.keyboard.press("P")
        page.wait_for_selector('body[data-playing="false"]', state="attached", timeout=TIMEOUT_MS)
        # Shift with an arrow marks that side and hands Enter to the save button
        page.keyboard.press("Shift+ArrowRight")
        assert page.get_attribute("body", "data-picked") == "B"
        assert page.get_attribute('.pick[data-answer="B"]', "aria-pressed") == "true"
        assert page.evaluate("document.activeElement.id") == "save"
        page.keyboard.press("Shift+ArrowDown")  # no "neither" in ABX: the mark stays
        assert page.get_attribute("body", "data-picked") == "B"
        page.keyboard.press("Enter")
        _wait_phase(page, "ready", trial=1)
        assert page.get_attribute("body", "data-answered") == "1"
        page.keyboard.press("Shift+ArrowLeft")
        page.keyboard.press("Enter")
        _wait_phase(page, "done")
        page.wait_for_selector('body[data-result="shown"]', state="attached", timeout=TIMEOUT_MS)
        result = page.inner_text("#result")
    assert errors == []
    assert [json.loads(line)["answer"] for line in paths.answers.read_text().splitlines()] == ["B", "A"]
    right = sum(a == t["x"] for a, t in zip("BA", key["trials"]))
    assert f"X placed right in {right} of 2 trials" in result


def test_a_preference_session_runs_to_its_outcome(make_session, serve):
    _browser_or_skip()

    paths = make_session(method="preference", trials=4, seed=12, seconds=1.0)
    key = json.loads(paths.key.read_text())
    names = [d["name"] for d in key["designs"]]
    # prefer design 0 three times, then no preference
    given = [("A" if t["a"] == 0 else "B") for t in key["trials"][:3]] + ["none"]
    server = serve(paths.root)
    errors = []
    with _session_page(server, errors) as page:
        for i, g in enumerate(given):
            _wait_phase(page, "ready", trial=i)
            assert page.get_attribute("body", "data-decoded") == "2"  # A and B only
            assert page.inner_text("#heading") == "Which do you prefer?"
            assert page.locator(".listen").count() == 2
            page.keyboard.press("ArrowUp")  # no X in a preference session: nothing changes
            assert page.get_attribute("body", "data-active") == "A"
            if g == "none":
                page.keyboard.press("Shift+ArrowDown")
                assert page.inner_text("#picked") == "Marked: no preference."
            else:
                page.click(f'.pick[data-answer="{g}"]')
            page.click("#save")
        _wait_phase(page, "done")
        page.wait_for_selector('body[data-result="shown"]', state="attached", timeout=TIMEOUT_MS)
        text = page.inner_text("#result")
        assert f"You preferred {names[0]} 3 times (blue) and {names[1]} 0 times (copper); no preference: once" in text
        # two-sided exact binomial of 3 against 0: 2 · (1/2)^3 = 0.25 (binomial distribution)
        assert "25 % of the time (p = 0.2500" in text
        cells = page.locator("#outcome li")
        assert [cells.nth(k).get_attribute("class") for k in range(4)] == ["first", "first", "first", ""]
    assert errors == []
    assert [json.loads(line)["answer"] for line in paths.answers.read_text().splitlines()] == given


def test_a_preference_session_with_no_decided_trial_says_there_is_no_test(make_session, serve):
    # every answer "no preference": the binomial test of the decided answers has no trials, so the page
    # says so in words (and the score's JSON has p_value null with its reason)
    from render.listening.score import NO_DECIDED

    _browser_or_skip()

    paths = make_session(method="preference", trials=2, seed=12, seconds=1.0)
    server = serve(paths.root)
    errors = []
    with _session_page(server, errors) as page:
        for i in range(2):
            _wait_phase(page, "ready", trial=i)
            page.keyboard.press("Shift+ArrowDown")
            page.click("#save")
        _wait_phase(page, "done")
        page.wait_for_selector('body[data-result="shown"]', state="attached", timeout=TIMEOUT_MS)
        text = page.inner_text("#result")
        assert "no preference: 2 times" in text and NO_DECIDED[0].upper() + NO_DECIDED[1:] in text and "p = " not in text
    assert errors == []


def test_a_perfect_score_shows_its_tiny_p_value_as_render_score_does(make_session, serve):
    # 16 of 16 right: P = (1/2)^16 = 1.52587890625e-5 (binomial distribution); the page and render score both
    # show it to two significant figures without exponent notation, never as 0.0000
    from render.cli.score import score_command
    from render.listening.answers import AnswerLog
    from render.listening.layout import load_plan

    _browser_or_skip()
    paths = make_session(method="abx", trials=16, seed=4, seconds=1.0)
    key = json.loads(paths.key.read_text())
    with AnswerLog(paths, load_plan(paths)) as log:  # the first 15 answered before the page opens
        for t in key["trials"][:15]:
            log.record({"trial": t["index"], "answer": t["x"], "comment": ""})
    server = serve(paths.root)
    errors = []
    with _session_page(server, errors) as page:
        _wait_phase(page, "ready", trial=15)
        last = key["trials"][15]["x"]
        page.click(f'.pick[data-answer="{last}"]')
        page.click("#save")
        _wait_phase(page, "done")
        page.wait_for_selector('body[data-result="shown"]', state="attached", timeout=TIMEOUT_MS)
        text = page.inner_text("#result")
        assert "X placed right in 16 of 16 trials" in text and "0.0015 % of the time (p = 0.000015," in text, text
        assert "That is under 5 %" in text
    server.stop()
    assert errors == []
    result = CliRunner().invoke(score_command, [str(paths.root), "--no-plot"])
    assert result.exit_code == 0, result.output
    assert "16 of 16 correct, p = 0.000015: guessing alone does as well or better 0.0015 % of the time" in result.output


def test_a_damaged_key_is_named_on_the_page(make_session, serve):
    # every trial answered, then the key loses its designs: the page asks for the result and shows the server's
    # one line (render.listening.layout.DAMAGED_KEY), not a bare failure
    from render.listening.answers import AnswerLog
    from render.listening.layout import DAMAGED_KEY, load_plan

    _browser_or_skip()
    paths = make_session(method="abx", trials=2, seed=3, seconds=1.0)
    key = json.loads(paths.key.read_text())
    with AnswerLog(paths, load_plan(paths)) as log:
        for t in key["trials"]:
            log.record({"trial": t["index"], "answer": t["x"], "comment": ""})
    del key["designs"]
    paths.key.write_text(json.dumps(key))
    server = serve(paths.root)
    errors = []
    with _loaded_page(server, errors) as page:
        _wait_phase(page, "done")
        page.wait_for_function("document.getElementById('result').textContent.length > 0", timeout=TIMEOUT_MS)
        text = page.inner_text("#result")
        assert "could not be read from the server" in text and "designs: missing" in text and DAMAGED_KEY in text, text
    assert errors == []


def test_the_level_starts_20_db_down_and_follows_its_control_after_back_and_forward(make_session, serve):
    # the page's own rule (README, "A blind listening session"): the start is 20 dB down whatever a browser
    # restored into the level control, and the gain heard follows the control as it stands after Back or Forward
    from playwright.sync_api import sync_playwright

    executable = _browser_or_skip()
    paths = make_session(method="abx", trials=1, seed=3, seconds=1.0)
    server = serve(paths.root)
    html = Path(__file__).resolve().parents[2] / "render" / "listening" / "static" / "page.html"
    assert html.read_text().count('autocomplete="off"') >= 2  # the level and repeat controls
    errors = []

    def restored(route):
        # a browser that filled the form in again: the control at full level, repeat off
        response = route.fetch()
        text = response.text().replace('value="-20" autocomplete="off"', 'value="0"').replace('autocomplete="off" checked', "")
        route.fulfill(response=response, body=text)

    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=executable, args=ARGS, headless=True)
        try:
            page = browser.new_page()
            page.on("pageerror", lambda exc: errors.append(str(exc)))
            page.route(lambda url: url.rstrip("/") == server.url.rstrip("/"), restored)
            page.goto(server.url)
            _wait_phase(page, "caution")
            page.click("#begin")
            _wait_phase(page, "ready", trial=0)
            assert page.get_attribute("body", "data-gain-db") == "-20"
            assert page.eval_on_selector("#level", "e => e.value") == "-20" and page.eval_on_selector("#loop", "e => e.checked")
            # Back and Forward: the control shows -6 dB and the page is shown again; the gain follows it
            page.eval_on_selector("#level", "e => { e.value = '-6'; }")
            assert page.get_attribute("body", "data-gain-db") == "-20"
            page.evaluate("window.dispatchEvent(new PageTransitionEvent('pageshow', {persisted: true}))")
            assert page.get_attribute("body", "data-gain-db") == "-6" and page.inner_text("#level-db") == "\u22126 dB"
        finally:
            browser.close()
    assert errors == []
