"""The loopback server of ``render watch``: the live comparison page, its state and its clips (standard library only).

Routes (anything else is 404; any method but GET and HEAD is 405)::

    GET /                        the page (the comparison page in live mode)
    GET /api/state               the latest state: every design's entry, its clip's address, the problems
    GET /api/changes?after=N     the state as soon as its version passes N (204 after WAIT_S without a change)
    GET /clip/<slot>-<version>.wav   a clip named in the latest state, and nothing else

It binds 127.0.0.1 only, answers only a Host header naming this address
and port (DNS rebinding), and serves files from memory (a :class:`Board`
the watcher publishes to), never from the file system. :meth:`LiveServer.stop`
wakes every waiting request, shuts the open connections and joins the
threads, so nothing is left running.
"""

from __future__ import annotations

import contextlib
import json
import re
import socket
import threading
import time
from urllib.parse import parse_qs

from ..loopback import COMMON_HEADERS, LoopbackServer, QuietHandler, check_port

WAIT_S = 20.0  # a change request waits at most this long before answering 204
CLIP_ROUTE = re.compile(r"^/clip/([0-9]{1,4}-[0-9]{1,9}\.wav)$")


class Board:
    """What the live page shows: the latest state and the clips it names; requests wait on it for a change."""

    def __init__(self) -> None:
        self._cond = threading.Condition()
        self._version = 0
        self._state = b'{"version": 0, "designs": []}'
        self._clips: dict[str, bytes] = {}
        self._closed = False
        self._waiting = 0

    def publish(self, state: dict, clips: dict[str, bytes]) -> int:
        """Make ``state`` (JSON-ready; its ``version`` is set here) and ``clips`` (name -> WAV bytes) the latest; returns the version."""
        with self._cond:
            self._version += 1
            body = json.dumps({**state, "version": self._version}, ensure_ascii=True, separators=(",", ":"), allow_nan=False).encode("ascii")
            self._state, self._clips = body, dict(clips)
            self._cond.notify_all()
            return self._version

    @property
    def version(self) -> int:
        with self._cond:
            return self._version

    def state(self) -> bytes:
        with self._cond:
            return self._state

    def clip(self, name: str) -> bytes | None:
        with self._cond:
            return self._clips.get(name)

    def wait(self, after: int, timeout: float = WAIT_S) -> bytes | None:
        """The state once its version passes ``after`` (at once if it has); None after ``timeout`` s or when closed."""
        with self._cond:
            self._waiting += 1
            try:
                self._cond.wait_for(lambda: self._version > after or self._closed, timeout=timeout)
            finally:
                self._waiting -= 1
            return self._state if self._version > after and not self._closed else None

    @property
    def waiting(self) -> int:
        """How many requests wait for a change now."""
        with self._cond:
            return self._waiting

    def close(self) -> None:
        """Wake every waiting request; they answer at once from now on."""
        with self._cond:
            self._closed = True
            self._cond.notify_all()


class _Handler(QuietHandler):
    server_version = "render-watch"
    protocol_version = "HTTP/1.0"

    def _send(self, status: int, body: bytes, content_type: str, *, head: bool = False):
        self.send_response(status)
        self.send_header("Content-Type", content_type)
        self.send_header("Content-Length", str(len(body)))
        for name, value in COMMON_HEADERS:
            self.send_header(name, value)
        self.end_headers()
        if not head and body:
            self.wfile.write(body)

    def _error(self, status: int, message: str, *, head: bool = False):
        self._send(status, json.dumps({"error": message}).encode("utf-8"), "application/json", head=head)

    def do_GET(self, head: bool = False):
        srv: LiveServer = self.server  # type: ignore[assignment]  # the server this handler was made for
        parts = self._target(head=head)
        if parts is None:
            return
        route = parts.path
        if route == "/":
            return self._send(200, srv.page, "text/html; charset=utf-8", head=head)
        if route == "/favicon.ico":
            return self._send(204, b"", "image/x-icon", head=head)
        if route == "/api/state":
            return self._send(200, srv.board.state(), "application/json", head=head)
        if route == "/api/changes":
            after = parse_qs(parts.query).get("after", ["0"])[0]
            if not (after.isascii() and after.lstrip("-").isdigit()):
                return self._error(400, "after: expected a whole number (the version the page has)", head=head)
            state = srv.board.wait(int(after), srv.wait_s)
            if state is None:
                return self._send(204, b"", "application/json", head=head)
            return self._send(200, state, "application/json", head=head)
        m = CLIP_ROUTE.match(route)
        if m:
            data = srv.board.clip(m.group(1))
            if data is not None:
                return self._send(200, data, "audio/wav", head=head)
        return self._error(404, "not found", head=head)

    def do_HEAD(self):
        self.do_GET(head=True)

    def _not_allowed(self):
        self._error(405, "method not allowed")

    do_POST = do_PUT = do_DELETE = do_PATCH = do_OPTIONS = do_TRACE = do_CONNECT = _not_allowed


STOP_GRACE_S = 1.0  # s: how long a stop lets woken requests finish their replies


class LiveServer(LoopbackServer):
    """Serves the live comparison page of a :class:`Board` on 127.0.0.1 (``port=0``: a free port)."""

    def __init__(self, board: Board, *, page: bytes, port: int = 0, wait_s: float = WAIT_S):
        check_port(port)
        self.board, self.page, self.wait_s = board, page, float(wait_s)
        self._open: set[socket.socket] = set()
        self._open_lock = threading.Lock()
        self._workers: set[threading.Thread] = set()
        self._thread: threading.Thread | None = None
        super().__init__(port, _Handler)

    def process_request(self, request, client_address):
        with self._open_lock:
            self._open.add(request)
        t = threading.Thread(target=self.process_request_thread, args=(request, client_address), daemon=True, name="render-watch-request")
        with self._open_lock:
            self._workers.add(t)
        t.start()

    def process_request_thread(self, request, client_address):
        try:
            super().process_request_thread(request, client_address)
        finally:
            with self._open_lock:
                self._open.discard(request)
                self._workers.discard(threading.current_thread())

    def start_thread(self) -> LiveServer:
        """Serve from a background thread; returns self."""
        self._thread = threading.Thread(target=self.serve_forever, kwargs={"poll_interval": 0.05}, name="render-watch-server", daemon=True)
        self._thread.start()
        return self

    def stop(self, timeout: float = 5.0) -> None:
        """Stop serving: wake the waiting requests, shut every open connection, join every thread."""
        self.board.close()
        if self._thread is not None:
            self.shutdown()
            self._thread.join(timeout=timeout)
            self._thread = None
        self.server_close()
        # a request the board just woke is still writing its reply: let it finish (briefly) before the
        # connections are cut; one idle between requests (keep-alive) is cut when the grace is over
        grace_end = time.monotonic() + min(timeout, STOP_GRACE_S)
        with self._open_lock:
            workers = list(self._workers)
        for t in workers:
            t.join(timeout=max(0.0, grace_end - time.monotonic()))
        with self._open_lock:
            sockets, workers = list(self._open), list(self._workers)
        for s in sockets:
            with contextlib.suppress(OSError):
                s.shutdown(socket.SHUT_RDWR)
        for t in workers:
            t.join(timeout=timeout)

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.stop()
