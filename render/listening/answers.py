"""The answer log: one JSON line per answer, appended and fsynced before it is acknowledged.

A line is ``{"trial": i, "answer": "A"|"B"|"none", "comment": "...", "utc": "...", "session": "..."}``,
the session's id from its plan: a line from another session's log is refused when read (a line
without one, written before the id was kept, is read as this session's).
Trials are answered in order; an answer for a trial already answered is
accepted again only if it is the same (idempotent: a page that resends after
a lost reply changes nothing) and refused otherwise, so the log never holds
two answers for one trial.

One writer at a time: :class:`AnswerLog` holds an exclusive ``flock`` on the
session's ``listen.lock`` for its lifetime; a second one is refused. The
operating system drops the lock when the process dies, so a crash never
leaves a session locked. A line torn by a crash during the write was never
acknowledged; the next writer cuts it off and the page sends it again.
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import fcntl
import json
import os
import threading

from ..errors import InputError
from ..io.atomic import fsync_folder
from .layout import ANSWERS, SessionPaths

MAX_COMMENT = 2000  # characters
MAX_BODY = 8192  # bytes of one request body / one log line


class AnswerRefused(ValueError):
    """An answer that is well formed but cannot be recorded (out of order, or conflicting)."""


def _json(value) -> str:
    """A value from the answer's JSON as JSON writes it (true, null, "A"), cut for a one-line message."""
    import json

    from ..units import shorten

    return shorten(json.dumps(value, ensure_ascii=False))


def validate_answer(data, *, method: str, trials: int) -> dict:
    """The answer in ``data`` (parsed JSON) as a clean dict, or ValueError naming what is wrong."""
    if not isinstance(data, dict):
        raise ValueError("body: expected a JSON object {trial, answer, comment}")
    extra = set(data) - {"trial", "answer", "comment"}
    if extra:
        raise ValueError(f"body: unknown key {sorted(extra)[0]!r}; expected trial, answer, comment")
    trial = data.get("trial")
    if type(trial) is not int or not 0 <= trial < trials:
        raise ValueError(f"trial={_json(trial)}: expected a whole number from 0 to {trials - 1}")
    answer = data.get("answer")
    if answer not in ANSWERS[method]:
        raise ValueError(f"answer={_json(answer)}: expected one of {', '.join(ANSWERS[method])}")
    comment = data.get("comment", "")
    if not isinstance(comment, str) or len(comment) > MAX_COMMENT:
        raise ValueError(f"comment: expected text of at most {MAX_COMMENT} characters")
    if any((ord(c) < 32 and c not in "\n\t") or 0x7F <= ord(c) < 0xA0 or 0xD800 <= ord(c) < 0xE000 for c in comment):
        raise ValueError("comment: control characters are not allowed")
    return {"trial": trial, "answer": answer, "comment": comment}


def _parse_lines(raw: bytes, *, method: str, trials: int, source: str, strict: bool, session: str | None = None):
    """(answers in trial order, byte length of the good part); a torn last line is left out."""
    answers: list[dict] = []
    good = 0
    lines = raw.split(b"\n")
    complete, tail = lines[:-1], lines[-1]
    pos = 0
    for number, line in enumerate(complete, start=1):
        pos += len(line) + 1
        if not line.strip():
            good = pos
            continue
        try:
            data = json.loads(line.decode("utf-8"))
            utc = data.pop("utc", None) if isinstance(data, dict) else None
            owner = data.pop("session", None) if isinstance(data, dict) else None
            clean = validate_answer(data, method=method, trials=trials)
        except (UnicodeDecodeError, json.JSONDecodeError, ValueError) as exc:
            raise InputError(f"{source}: line {number}: {exc}; the log was edited or damaged, fix or remove that line") from None
        if owner is not None and session is not None and owner != session:
            raise InputError(
                f"{source}: line {number}: an answer of another session ({str(owner)[:12]}…, this one is {session[:12]}…); the log was copied from elsewhere: remove it and answer with `render listen`"
            )
        clean["utc"] = utc
        if clean["trial"] < len(answers):
            if answers[clean["trial"]]["answer"] != clean["answer"]:
                raise InputError(f"{source}: line {number}: trial={clean['trial']} answered twice with different answers; keep one of the two lines")
        elif clean["trial"] > len(answers):
            raise InputError(f"{source}: line {number}: trial={clean['trial']} comes before trial {len(answers)} is answered; the log was edited")
        else:
            answers.append(clean)
        good = pos
    if tail.strip() and strict:
        raise InputError(f"{source}: its last line is incomplete")
    return answers, good


def read_answers(paths: SessionPaths, plan: dict) -> list[dict]:
    """The recorded answers (a reader: no lock; a torn last line, never acknowledged, is ignored)."""
    try:
        raw = paths.answers.read_bytes()
    except FileNotFoundError:
        return []
    except OSError as exc:
        raise InputError(f"{paths.answers}: cannot read ({exc.strerror}); check permissions") from None
    answers, _ = _parse_lines(raw, method=plan["method"], trials=len(plan["trials"]), source=str(paths.answers), strict=False, session=plan.get("session"))
    return answers


class AnswerLog:
    """The one writer of a session's answers. Use as a context manager, or call :meth:`close`."""

    def __init__(self, paths: SessionPaths, plan: dict):
        self.paths = paths
        self.method = plan["method"]
        self.trials = len(plan["trials"])
        self.session = plan.get("session")
        self._mutex = threading.Lock()
        try:
            self._lock_fd = os.open(paths.lock, os.O_RDWR | os.O_CREAT, 0o600)
        except OSError as exc:
            raise InputError(f"SESSION={paths.root}: cannot create {paths.lock.name} ({exc.strerror}); check permissions") from None
        try:
            fcntl.flock(self._lock_fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            os.close(self._lock_fd)
            raise InputError(f"SESSION={paths.root}: another `render listen` is already serving this session ({paths.lock.name} is held); use that one or stop it first") from None
        try:
            os.ftruncate(self._lock_fd, 0)
            os.write(self._lock_fd, f"{os.getpid()}\n".encode())
            self._fd = os.open(paths.answers, os.O_RDWR | os.O_CREAT | os.O_APPEND, 0o600)
            raw = b""
            while chunk := os.read(self._fd, 1 << 20):
                raw += chunk
            self._answers, good = _parse_lines(raw, method=self.method, trials=self.trials, source=str(paths.answers), strict=False, session=self.session)
            if good < len(raw):  # a torn, never-acknowledged line from a crash: cut it off
                os.ftruncate(self._fd, good)
            os.fsync(self._fd)
            fsync_folder(paths.root)
        except BaseException:
            self.close()
            raise

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def close(self) -> None:
        # under the mutex, so that an answer being written while the server stops is
        # finished before its descriptor closes (and a reused descriptor is never written)
        mutex = getattr(self, "_mutex", None)
        with mutex if mutex is not None else contextlib.nullcontext():
            for name in ("_fd", "_lock_fd"):
                fd = getattr(self, name, None)
                if fd is not None:
                    setattr(self, name, None)
                    os.close(fd)  # closing the lock's descriptor releases the flock

    @property
    def answers(self) -> list[dict]:
        with self._mutex:
            return [dict(a) for a in self._answers]

    @property
    def complete(self) -> bool:
        with self._mutex:
            return len(self._answers) == self.trials

    def record(self, data) -> tuple[bool, dict]:
        """Validate and append ``data``; returns (newly recorded?, the stored answer).

        Raises ValueError for a malformed answer, AnswerRefused for one out of
        order or conflicting with the answer already given for that trial.
        """
        clean = validate_answer(data, method=self.method, trials=self.trials)
        with self._mutex:
            if self._fd is None:
                raise AnswerRefused("the log is closed")
            i = clean["trial"]
            if i < len(self._answers):
                stored = self._answers[i]
                if stored["answer"] == clean["answer"] and stored["comment"] == clean["comment"]:
                    return False, dict(stored)
                raise AnswerRefused(f"trial={i}: already answered {stored['answer']!r}; an answer cannot be changed")
            if i > len(self._answers):
                raise AnswerRefused(f"trial={i}: answer trial {len(self._answers)} first")
            clean["utc"] = _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds")
            owned = clean if self.session is None else {**clean, "session": self.session}
            line = (json.dumps(owned, ensure_ascii=True, separators=(",", ":")) + "\n").encode("ascii")
            size = os.fstat(self._fd).st_size
            try:
                view = memoryview(line)
                while view:
                    written = os.write(self._fd, view)
                    view = view[written:]
                os.fsync(self._fd)
            except OSError:
                os.ftruncate(self._fd, size)  # never leave a torn line before the next one
                raise
            self._answers.append(clean)
            return True, dict(clean)
