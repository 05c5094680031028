"""The loopback HTTP server behind ``render listen`` (standard library only).

Routes (anything else is 404; a method other than those listed is 405)::

    GET  /                 the page            GET /page.css, /page.js
    GET  /api/state        plan + answers so far (the listener's own)
    GET  /clip/<name>.wav  a clip named in the plan, and nothing else
    POST /api/answer       {"trial": i, "answer": "A"|"B"|"none", "comment": "..."}
    GET  /api/result       the score, only once every trial is answered (409 before)

Rules that keep the key closed and the session safe:

- binds 127.0.0.1 only; refuses a Host header that is not this address and
  port (DNS rebinding; on port 80 the address alone, as clients send it,
  :func:`render.loopback.own_authorities`) and a POST whose Origin is another site;
- the path is matched whole against the routes above before any decoding,
  so ``..``, ``%2e%2e``, absolute paths and folder names never reach the
  file system; a clip is opened by a name taken from the plan, never from
  the request;
- every clip response carries the same headers (no Last-Modified, no ETag,
  same type, same length), and the key is not read until the last answer
  is recorded;
- request bodies need a Content-Length of at most 8 KiB, JSON content and a
  valid answer; request lines and headers are bounded by :mod:`http.server`
  (64 KiB, 100 headers); idle clients time out; at most 32 connections at once.
"""

from __future__ import annotations

import json
import os
import re
import threading
from typing import cast

from ..errors import InputError
from ..loopback import COMMON_HEADERS, LoopbackServer, QuietHandler, check_port, own_authorities
from .answers import MAX_BODY, AnswerLog, AnswerRefused
from .layout import load_key, load_plan, session_paths
from .page import read_page

CLIP_ROUTE = re.compile(r"^/clip/([0-9a-f]{32}\.wav)$")
MAX_CONNECTIONS = 32  # at once; more are closed at once (a page needs about six)
CSP = "default-src 'none'; script-src 'self'; style-src 'self'; connect-src 'self'; media-src 'self'; img-src 'self'; base-uri 'none'; form-action 'none'; frame-ancestors 'none'"


class _SessionRequestHandler(QuietHandler):
    server_version = "render-listen"

    # -- responses ---------------------------------------------------------

    def _send(self, status: int, body: bytes, content_type: str, *, head: bool = False, extra=()):
        self.send_response(status)
        self.send_header("Content-Type", content_type)
        self.send_header("Content-Length", str(len(body)))
        for name, value in COMMON_HEADERS + tuple(extra):
            self.send_header(name, value)
        self.send_header("Connection", "close")
        self.end_headers()
        self.close_connection = True
        if not head:
            self.wfile.write(body)

    def _json(self, status: int, obj, *, head: bool = False):
        self._send(status, (json.dumps(obj, ensure_ascii=True) + "\n").encode("ascii"), "application/json", head=head)

    def _error(self, status: int, message: str, *, head: bool = False):
        self._json(status, {"error": message}, head=head)

    def send_error(self, code, message=None, explain=None):
        """http.server's own refusals (bad request line, too long, too many headers) as our JSON."""
        self.request_version = "HTTP/1.0"  # always answer with a status line, even to HTTP/0.9 syntax
        self._error(int(code), {400: "bad request", 414: "request line too long", 431: "too many or too long headers"}.get(int(code), "refused"))

    # -- checks ------------------------------------------------------------

    def _route(self) -> str | None:
        """The request's path if the Host is ours and the target is origin-form; else None (answered)."""
        parts = self._target()
        return None if parts is None else parts.path

    # -- methods -----------------------------------------------------------

    def do_GET(self, head: bool = False):
        path = self._route()
        if path is None:
            return
        srv: ListeningServer = self.server  # type: ignore[assignment]  # the server this handler was made for
        if path == "/":
            return self._send(200, srv.page.html, "text/html; charset=utf-8", head=head, extra=(("Content-Security-Policy", CSP),))
        if path == "/page.css":
            return self._send(200, srv.page.css, "text/css; charset=utf-8", head=head)
        if path == "/page.js":
            return self._send(200, srv.page.js, "text/javascript; charset=utf-8", head=head)
        if path == "/favicon.ico":
            return self._send(204, b"", "image/x-icon", head=head)
        if path == "/api/state":
            return self._json(200, srv.state(), head=head)
        if path == "/api/result":
            try:
                result = srv.result()
            except InputError as exc:  # a damaged key: the page and the terminal say what is wrong
                if srv.notify is not None and not srv.told_damage:
                    srv.told_damage = True
                    srv.notify(f"cannot open the result: {exc}")
                return self._error(500, str(exc), head=head)
            if result is None:
                return self._error(409, "the result opens once every trial is answered", head=head)
            return self._json(200, result, head=head)
        m = CLIP_ROUTE.match(path)
        if m and m.group(1) in srv.clip_names:
            data = srv.read_clip(m.group(1))
            if data is None:
                return self._error(500, "clip unreadable", head=head)
            return self._send(200, data, "audio/wav", head=head)
        return self._error(404, "not found", head=head)

    def do_HEAD(self):
        self.do_GET(head=True)

    def do_POST(self):
        path = self._route()
        if path is None:
            return
        srv = cast(ListeningServer, self.server)
        if path != "/api/answer":
            return self._error(404 if path not in srv.get_routes else 405, "not found" if path not in srv.get_routes else "method not allowed")
        origin = self.headers.get("Origin")
        if origin is not None and origin.lower() not in srv.allowed_origins:
            return self._error(403, "Origin: answers are accepted only from this session's own page")
        if self.headers.get("Transfer-Encoding"):
            return self._error(411, "Transfer-Encoding is not accepted; send a Content-Length")
        given = self.headers.get("Content-Length")
        if given is None or not (given.isascii() and given.isdigit()):
            return self._error(411, "Content-Length: required, a whole number of bytes")
        length = int(given)
        if length > MAX_BODY:
            return self._error(413, f"Content-Length={length}: at most {MAX_BODY} bytes")
        ctype = self.headers.get("Content-Type", "").split(";")[0].strip().lower()
        if ctype != "application/json":
            return self._error(415, f"Content-Type={ctype or 'none'}: expected application/json")
        raw = self.rfile.read(length)
        if len(raw) != length:
            return self._error(400, "body: shorter than its Content-Length")
        try:
            data = json.loads(raw.decode("utf-8"))
        except (UnicodeDecodeError, ValueError, RecursionError):  # ValueError: bad JSON or an integer too long to convert
            return self._error(400, "body: not valid UTF-8 JSON")
        try:
            is_new, stored = srv.log.record(data)
        except AnswerRefused as exc:
            return self._error(409, str(exc))
        except ValueError as exc:
            return self._error(400, str(exc))
        except OSError as exc:
            return self._error(507, f"could not save the answer ({exc.strerror or exc}); free some disk space, the page will send it again")
        answered = len(srv.log.answers)
        if is_new and srv.notify is not None:
            srv.notify(f"trial {stored['trial'] + 1} of {srv.trials} recorded" + ("; all answered: run `render score`" if answered == srv.trials else ""))
        self._json(200, {"recorded": is_new, "trial": stored["trial"], "answered": answered, "complete": answered == srv.trials})

    def _not_allowed(self):
        if self._route() is not None:
            self._error(405, "method not allowed")

    do_PUT = do_DELETE = do_PATCH = do_OPTIONS = do_TRACE = do_CONNECT = _not_allowed


class ListeningServer(LoopbackServer):
    """Serves one session on 127.0.0.1; holds the session's writer lock while it lives.

    ``port=0`` takes a free port; :attr:`url` is where to point the browser.
    Stop with :meth:`stop` (or use as a context manager after
    :meth:`start_thread`).
    """

    get_routes = ("/", "/page.css", "/page.js", "/favicon.ico", "/api/state", "/api/result")

    def __init__(self, session, *, port: int = 0, notify=None):
        check_port(port)
        self.paths = session_paths(session)
        self.plan = load_plan(self.paths)
        self.trials = len(self.plan["trials"])
        self.clip_names = frozenset(c for t in self.plan["trials"] for c in t["clips"].values())
        sizes = set()
        for name in self.clip_names:
            p = self.paths.public / name
            if not p.is_file() or p.is_symlink():
                raise InputError(f"SESSION={session}: clip {name} is missing from public/; the session folder is damaged, make a new one with `render blind`")
            sizes.add(p.stat().st_size)
        if len(sizes) != 1:
            raise InputError(f"SESSION={session}: the clips differ in size; the session folder is damaged, make a new one with `render blind`")
        self.notify = notify
        self.told_damage = False  # a damaged key is reported on the terminal once
        self.page = read_page()
        self._connections = threading.BoundedSemaphore(MAX_CONNECTIONS)
        self._result_lock = threading.Lock()
        self._result: dict | None = None
        self._thread: threading.Thread | None = None
        self.log = AnswerLog(self.paths, self.plan)  # refuses a second writer before anything binds
        try:
            super().__init__(port, _SessionRequestHandler)
        except InputError:
            self.log.close()
            raise
        p = self.server_address[1]
        self.allowed_origins = frozenset(f"http://{a}" for a in own_authorities(p))

    def process_request(self, request, client_address):
        if not self._connections.acquire(blocking=False):
            self.shutdown_request(request)
            return
        try:
            super().process_request(request, client_address)
        except BaseException:
            self._connections.release()
            raise

    def process_request_thread(self, request, client_address):
        try:
            super().process_request_thread(request, client_address)
        finally:
            self._connections.release()

    def state(self) -> dict:
        answers = self.log.answers
        return {
            "session": self.plan["session"],
            "method": self.plan["method"],
            "seconds": self.plan["seconds"],
            "sample_rate": self.plan["sample_rate"],
            "trials": [{"index": t["index"], "clips": t["clips"]} for t in self.plan["trials"]],
            "answered": [{"trial": a["trial"], "answer": a["answer"], "comment": a["comment"]} for a in answers],
            "complete": len(answers) == self.trials,
        }

    def read_clip(self, name: str) -> bytes | None:
        try:
            fd = os.open(self.paths.public / name, os.O_RDONLY | os.O_NOFOLLOW)
        except OSError:
            return None
        with os.fdopen(fd, "rb") as fh:
            return fh.read()

    def result(self) -> dict | None:
        """The score once every trial is answered; None before (the key is not read until then)."""
        if not self.log.complete:
            return None
        with self._result_lock:
            if self._result is None:
                from .score import score

                answers = self.log.answers
                key = load_key(self.paths, self.plan)
                self._result = score(self.plan, key, answers)
            return self._result

    # -- life cycle --------------------------------------------------------

    def start_thread(self) -> ListeningServer:
        """Serve from a background thread (for tests and embedding); returns self."""
        self._thread = threading.Thread(target=self.serve_forever, kwargs={"poll_interval": 0.05}, name="render-listen", daemon=True)
        self._thread.start()
        return self

    def stop(self) -> None:
        """Stop serving, close the socket and release the session's writer lock."""
        if self._thread is not None:
            self.shutdown()
            self._thread.join(timeout=5)
            self._thread = None
        self.server_close()
        self.log.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.stop()
