"""What the loopback HTTP servers of ``render watch`` and ``render listen`` share (standard library only).

Each binds 127.0.0.1 only, on a port the user chose or a free one, and
answers only a Host header naming that address and port (DNS rebinding),
or the address alone on port 80, which clients leave out of Host and
Origin as the scheme's default (RFC 9110 §4.2.1, §4.2.3 and §7.2; WHATWG URL
Standard, "default port"), :func:`own_authorities`;
its handler logs nothing and names no Python version. The routes, bodies and
life cycle stay with each server.
"""

from __future__ import annotations

import socketserver
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from urllib.parse import SplitResult, urlsplit

from .errors import ArgumentError

HOST = "127.0.0.1"
SOCKET_TIMEOUT_S = 15.0  # an idle or stalled client is dropped after this long
COMMON_HEADERS = (
    ("Cache-Control", "no-store"),
    ("X-Content-Type-Options", "nosniff"),
    ("Referrer-Policy", "no-referrer"),
    ("Cross-Origin-Resource-Policy", "same-origin"),
    ("X-Frame-Options", "DENY"),
)


HTTP_DEFAULT_PORT = 80  # http's default port: a client omits it from Host and Origin (RFC 9110 §4.2.1)
LOCAL_NAMES = (HOST, "localhost")


def own_authorities(port: int) -> frozenset[str]:
    """The ``host[:port]`` a client sends for this server: 127.0.0.1 or localhost with ``port``, and without it on port 80.

    Both the Host header and an Origin's authority are compared with these (lower-case; host names are case-insensitive).
    """
    names = {f"{name}:{int(port)}" for name in LOCAL_NAMES}
    return frozenset(names | set(LOCAL_NAMES) if int(port) == HTTP_DEFAULT_PORT else names)


def check_port(port) -> int:
    """``port`` as an int from 0 to 65535 (0: a free one), or the one-line refusal."""
    if not 0 <= int(port) <= 65535:
        raise ArgumentError("port", f"{port}", "must be from 0 to 65535; 0 picks a free port")
    return int(port)


class LoopbackServer(ThreadingHTTPServer):
    """A threading HTTP server bound to :data:`HOST` with ``handler``; :attr:`allowed_hosts` are the Host headers it answers."""

    daemon_threads = True
    allow_reuse_address = True
    request_queue_size = 64

    def __init__(self, port: int, handler: type[BaseHTTPRequestHandler]):
        try:
            super().__init__((HOST, check_port(port)), handler)
        except OSError as exc:
            raise ArgumentError("port", f"{port}", f"cannot listen on {HOST} ({exc.strerror or exc}); choose another port or 0 for a free one") from None
        p = self.server_address[1]
        self.allowed_hosts = own_authorities(p)

    def server_bind(self):
        socketserver.TCPServer.server_bind(self)  # skip HTTPServer's reverse name look-up
        self.server_name, self.server_port = HOST, self.server_address[1]

    def handle_error(self, request, client_address):
        """A connection the browser dropped (a reload, a closed tab) or a stopping server is not an error: say nothing."""
        import sys

        if isinstance(sys.exc_info()[1], OSError):
            return
        super().handle_error(request, client_address)

    @property
    def port(self) -> int:
        return self.server_address[1]

    @property
    def url(self) -> str:
        return f"http://{HOST}:{self.port}/"


class QuietHandler(BaseHTTPRequestHandler):
    """A request handler that logs nothing, names only ``server_version`` and drops idle clients."""

    sys_version = ""
    timeout = SOCKET_TIMEOUT_S

    def version_string(self):
        return self.server_version

    def log_message(self, format, *args):  # quiet: the terminal belongs to the command
        pass

    def _error(self, status: int, message: str, *, head: bool = False):
        raise NotImplementedError

    def _target(self, *, head: bool = False) -> SplitResult | None:
        """The request target, split, if the Host is the server's own and the target is origin-form; else None (answered)."""
        allowed: frozenset[str] = getattr(self.server, "allowed_hosts", frozenset())
        if (self.headers.get("Host") or "").lower() not in allowed:
            self._error(421, "Host: this server answers only for its own loopback address", head=head)
            return None
        if not self.path.startswith("/") or self.path.startswith("//"):
            self._error(404, "not found", head=head)
            return None
        return urlsplit(self.path)
