"""Where a session keeps its files, and reading the two JSON records.

``public/plan.json`` (served to the page, through the server's own route)::

    {"format": "render-listening-plan", "version": 1,
     "session": "<random id>", "method": "abx" | "preference",
     "sample_rate": 48000, "seconds": 8.5,
     "trials": [{"index": 0, "clips": {"A": "<name>.wav", "B": ..., "X": ...}}, ...]}

``private/key.json`` (never served; read by ``render score`` and by the
server only after the last answer)::

    {"format": "render-listening-key", "version": 1, "session": ..., "method": ...,
     "seed": ..., "designs": [{"name", "path", "sha256", "toml", "design_sha256", "coil_measurements"}, x2], "rig": ...,
     "dry": {...}, "loudness": {...},
     "render_sha256": [two hashes: each matched render as a float32 WAV, before dither],
     "dither": {"kind": "TPDF", "peak": 2**-23, ...}, "clip_sha256": {"<name>.wav": hash, ...},
     "trials": [{"index", "a": 0|1, "x": "A"|"B"|null, "clips": {...}}, ...]}

``a`` is the design (0 = MODEL_A, 1 = MODEL_B) playing as clip A in that
trial (clip B plays the other); ``x`` is which of A or B clip X repeats.
"""

from __future__ import annotations

import json
import re
from dataclasses import dataclass
from pathlib import Path

from ..errors import ArgumentError, InputError

PLAN_FORMAT = "render-listening-plan"
KEY_FORMAT = "render-listening-key"
VERSION = 1
METHODS = ("abx", "preference")
CLIP_NAME = re.compile(r"^[0-9a-f]{32}\.wav$")
SLOTS = {"abx": ("A", "B", "X"), "preference": ("A", "B")}
ANSWERS = {"abx": ("A", "B"), "preference": ("A", "B", "none")}


@dataclass(frozen=True)
class SessionPaths:
    root: Path

    @property
    def public(self) -> Path:
        return self.root / "public"

    @property
    def private(self) -> Path:
        return self.root / "private"

    @property
    def plan(self) -> Path:
        return self.public / "plan.json"

    @property
    def key(self) -> Path:
        return self.private / "key.json"

    @property
    def answers(self) -> Path:
        return self.root / "answers.jsonl"

    @property
    def lock(self) -> Path:
        return self.root / "listen.lock"

    @property
    def results(self) -> Path:
        return self.root / "results"


def session_paths(path: str | Path) -> SessionPaths:
    """The paths of the session at ``path``; refuses a folder that is not one."""
    root = Path(path)
    if not root.is_dir():
        raise ArgumentError(
            "session",
            f"{path}",
            "no such folder; make a session with `render blind MODEL_A MODEL_B`",
            option="SESSION",
            python_why="no such folder; make a session with render.build_blind_session(...) or `render blind MODEL_A MODEL_B`",
        )
    paths = SessionPaths(root)
    if not paths.plan.is_file() or not paths.key.is_file():
        raise ArgumentError(
            "session",
            f"{path}",
            "not a listening session (no public/plan.json and private/key.json); make one with `render blind MODEL_A MODEL_B`",
            option="SESSION",
            python_why="not a listening session (no public/plan.json and private/key.json); make one with render.build_blind_session(...) or `render blind MODEL_A MODEL_B`",
        )
    return paths


def _read_json(path: Path, what: str, fmt: str) -> dict:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError(f"{path}: unreadable {what} ({exc.__class__.__name__}); the session folder is damaged, make a new one with `render blind`") from None
    if not isinstance(data, dict) or data.get("format") != fmt or data.get("version") != VERSION:
        raise InputError(f"{path}: format={data.get('format') if isinstance(data, dict) else None!r}: expected {fmt!r} version {VERSION}; make a new session with `render blind`")
    return data


def load_plan(paths: SessionPaths) -> dict:
    """The public plan, checked: method known, trials numbered 0..n-1, clip names well formed."""
    plan = _read_json(paths.plan, "plan", PLAN_FORMAT)
    method = plan.get("method")
    trials = plan.get("trials")
    if method not in METHODS or not isinstance(trials, list) or not trials:
        raise InputError(f"{paths.plan}: method={method!r}: expected one of {', '.join(METHODS)} with at least one trial; make a new session")
    for i, t in enumerate(trials):
        clips = t.get("clips") if isinstance(t, dict) else None
        if not isinstance(clips, dict) or t.get("index") != i or set(clips) != set(SLOTS[method]) or not all(isinstance(c, str) and CLIP_NAME.match(c) for c in clips.values()):
            raise InputError(f"{paths.plan}: trials[{i}] is malformed; make a new session with `render blind`")
    return plan


DAMAGED_KEY = "the session's key is damaged: build the session again with `render blind`"


def _text(value) -> bool:
    return isinstance(value, str)


def _file_fields(rec, fields=("path", "sha256", "toml")) -> str | None:
    """The first of ``fields`` that ``rec`` lacks as text, or None."""
    return next((f for f in fields if not _text(rec.get(f))), None)


def key_damage(key: dict) -> str | None:
    """What is wrong with the shape of a key (beyond its trials), as ``field: problem``; None for a sound key.

    Checks everything scoring reads: two designs, each with its name, path, SHA-256 and TOML text (text that
    parses as TOML), their changes and measured coils; the rig's file, if any; two loudness gains.
    """
    import math

    from ..io.toml import TOMLDecodeError, loads

    designs = key.get("designs")
    if not isinstance(designs, list) or len(designs) != 2:
        got = (f"{len(designs)} entr{'y' if len(designs) == 1 else 'ies'}") if isinstance(designs, list) else "missing" if designs is None else f"a {type(designs).__name__}"
        return f"designs: {got}, expected two (MODEL_A and MODEL_B)"
    records = [("designs[0]", designs[0]), ("designs[1]", designs[1])]
    rig = key.get("rig")
    if rig is not None:
        records.append(("rig", rig))
    for where, rec in records:
        if not isinstance(rec, dict):
            return f"{where}: a {type(rec).__name__}, expected an object"
        lacking = _file_fields(rec, ("name", "path", "sha256", "toml") if where != "rig" else ("path", "sha256", "toml"))
        if lacking:
            return f"{where}.{lacking}: missing or not text"
        try:
            loads(rec["toml"])
        except TOMLDecodeError as exc:
            return f"{where}.toml: not valid TOML ({exc})".replace("\n", " ")
        if where == "rig":
            continue
        changes = rec.get("design_changes", {})
        if not isinstance(changes, dict):
            return f"{where}.design_changes: a {type(changes).__name__}, expected an object"
        measured = rec.get("coil_measurements", [])
        if not isinstance(measured, list) or not all(isinstance(m, dict) and not _file_fields(m, ("coil", "file", "sha256")) for m in measured):
            return f"{where}.coil_measurements: expected a list of objects with coil, file and sha256 as text"
    if designs[0]["name"] == designs[1]["name"]:
        return f"designs: both named {designs[0]['name']!r}; the score could not tell them apart"
    loudness = key.get("loudness")
    gains = loudness.get("gains_db") if isinstance(loudness, dict) else None
    if not isinstance(gains, list) or len(gains) != 2 or not all(isinstance(g, (int, float)) and not isinstance(g, bool) and math.isfinite(g) for g in gains):
        return "loudness.gains_db: expected two finite numbers (MODEL_A's and MODEL_B's gain in dB)"
    return None


def load_key(paths: SessionPaths, plan: dict) -> dict:
    """The private key, checked against the plan (same session, same trials and clips) and in its whole shape
    (:func:`key_damage`): a damaged key is one line, never a traceback later."""
    key = _read_json(paths.key, "key", KEY_FORMAT)
    trials = key.get("trials")
    if key.get("session") != plan.get("session") or key.get("method") != plan["method"] or not isinstance(trials, list) or len(trials) != len(plan["trials"]):
        raise InputError(f"{paths.key}: session={key.get('session')!r} does not match {paths.plan}; the two files come from different sessions")
    for t, p in zip(trials, plan["trials"]):
        if not isinstance(t, dict) or t.get("clips") != p["clips"] or t.get("a") not in (0, 1) or t.get("index") != p["index"]:
            raise InputError(f"{paths.key}: trials[{p['index']}] does not match the plan; {DAMAGED_KEY}")
        if plan["method"] == "abx" and t.get("x") not in ("A", "B"):
            raise InputError(f"{paths.key}: trials[{p['index']}] x={t.get('x')!r}: expected 'A' or 'B'; {DAMAGED_KEY}")
    damage = key_damage(key)
    if damage:
        raise InputError(f"{paths.key}: {damage}; {DAMAGED_KEY}")
    return key
