"""The listening server at the HTTP level: what it serves, what it refuses, what it keeps.

No check values that need a source here: loopback addresses, durations, exit codes and
message text only.

Requests go over raw sockets to 127.0.0.1 so that the exact request line
(traversal in every spelling, absolute paths, odd methods, broken bodies)
reaches the server unaltered. Every server started here is stopped by the
``serve`` fixture, and every subprocess is killed and waited for.

Status codes are those of RFC 9110 (400, 403, 404, 405, 409, 411, 413, 414,
415, 421), RFC 6585 (431) and RFC 4918 (507).
"""

from __future__ import annotations

import contextlib
import json
import os
import signal
import socket
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from render.errors import InputError
from render.listening.answers import MAX_BODY
from render.listening.page import read_page
from render.listening.server import ListeningServer

ROOT = Path(__file__).resolve().parents[2]


def request(port, method="GET", path="/", *, body=b"", headers=None, host=None, raw=None, timeout=5.0):
    """(status, headers as a dict of lower-case names, body bytes) for one request."""
    if raw is None:
        head = {"Host": host or f"127.0.0.1:{port}", "Connection": "close"}
        if body or method == "POST":
            head["Content-Length"] = str(len(body))
            head["Content-Type"] = "application/json"
        head.update(headers or {})
        head = {k: v for k, v in head.items() if v is not None}
        raw = f"{method} {path} HTTP/1.1\r\n".encode("latin-1") + b"".join(f"{k}: {v}\r\n".encode("latin-1") for k, v in head.items()) + b"\r\n" + body
    with socket.create_connection(("127.0.0.1", port), timeout=timeout) as s:
        s.sendall(raw)
        chunks = []
        while chunk := s.recv(65536):
            chunks.append(chunk)
    data = b"".join(chunks)
    head, _, payload = data.partition(b"\r\n\r\n")
    lines = head.decode("latin-1").split("\r\n")
    status = int(lines[0].split()[1])
    hdrs = {}
    for line in lines[1:]:
        k, _, v = line.partition(":")
        hdrs[k.strip().lower()] = v.strip()
    return status, hdrs, payload


def answer(port, trial, value, comment=None, **kw):
    obj = {"trial": trial, "answer": value}
    if comment is not None:
        obj["comment"] = comment
    status, _, payload = request(port, "POST", "/api/answer", body=json.dumps(obj).encode(), **kw)
    return status, json.loads(payload)


def lines_of(paths):
    return paths.answers.read_text().splitlines() if paths.answers.exists() else []


@pytest.fixture()
def running(make_session, serve):
    paths = make_session(method="abx", trials=4)
    return paths, serve(paths.root)


# -- what is served ---------------------------------------------------------


def test_binds_loopback_only_and_serves_the_page(running):
    paths, server = running
    assert server.server_address[0] == "127.0.0.1" and server.url == f"http://127.0.0.1:{server.port}/"
    status, hdrs, body = request(server.port, path="/")
    assert status == 200 and body == read_page().html
    assert "script-src 'self'" in hdrs["content-security-policy"] and hdrs["cache-control"] == "no-store"
    status, _, body = request(server.port, path="/page.js")
    assert status == 200 and body == read_page().js
    status, _, body = request(server.port, path="/page.css")
    assert status == 200 and body == read_page().css
    st = json.loads(request(server.port, path="/api/state")[2])
    assert st["method"] == "abx" and len(st["trials"]) == 4 and st["answered"] == [] and not st["complete"]


@pytest.mark.parametrize(
    "path",
    [
        "/../private/key.json",
        "/clip/../private/key.json",
        "/clip/../../private/key.json",
        "/%2e%2e/private/key.json",
        "/%2E%2E%2Fprivate%2Fkey.json",
        "/clip/%2e%2e%2fprivate%2fkey.json",
        "/clip/..%2f..%2fprivate%2fkey.json",
        "/clip/%2e%2e/%2e%2e/etc/passwd",
        "/..%5c..%5cprivate%5ckey.json",
        "/private/key.json",
        "/private/",
        "/public/",
        "/public/plan.json",
        "/clip/",
        "/clip",
        "/answers.jsonl",
        "/listen.lock",
        "/etc/passwd",
        "//etc/passwd",
        "///private/key.json",
        "/%2fetc%2fpasswd",
        "/clip/%2fetc%2fpasswd",
        "http://127.0.0.1/private/key.json",
        "/index.html",
        "/page.js/../private/key.json",
    ],
)
def test_nothing_outside_the_routes_is_served(running, path):
    paths, server = running
    status, _, body = request(server.port, path=path)
    assert status == 404, (path, status)
    key = json.loads(paths.key.read_text())
    assert key["designs"][0]["toml"][:40].encode() not in body


def test_a_clip_is_served_only_by_its_planned_name(running):
    paths, server = running
    plan = json.loads(paths.plan.read_text())
    name = plan["trials"][0]["clips"]["A"]
    status, _, body = request(server.port, path=f"/clip/{name}")
    assert status == 200 and body == (paths.public / name).read_bytes()
    assert request(server.port, path=f"/clip/{name.upper()}")[0] == 404
    assert request(server.port, path=f"/clip/{name}/")[0] == 404
    # a well-formed name that is not in the plan, even if the file is there
    stray = "0" * 32 + ".wav"
    (paths.public / stray).write_bytes(b"RIFF")
    assert request(server.port, path=f"/clip/{stray}")[0] == 404


def test_every_clip_has_the_same_headers_and_size(running):
    paths, server = running
    plan = json.loads(paths.plan.read_text())
    seen = []
    for t in plan["trials"]:
        for name in t["clips"].values():
            status, hdrs, body = request(server.port, path=f"/clip/{name}")
            assert status == 200
            hdrs.pop("date")
            seen.append((tuple(sorted(hdrs.items())), len(body)))
            assert "last-modified" not in hdrs and "etag" not in hdrs
    assert len(set(seen)) == 1  # one set of headers, one size: nothing tells the designs apart
    head_status, head_hdrs, head_body = request(server.port, "HEAD", f"/clip/{plan['trials'][0]['clips']['B']}")
    head_hdrs.pop("date")
    assert head_status == 200 and head_body == b"" and tuple(sorted(head_hdrs.items())) == seen[0][0]


def test_nothing_served_before_the_end_contains_the_key(make_session, serve):
    paths = make_session(method="abx", trials=4, seed=8_765_432_109_876_543)
    server = serve(paths.root)
    key = json.loads(paths.key.read_text())
    served = b"".join(request(server.port, path=p)[2] for p in ("/", "/page.js", "/page.css", "/api/state", "/api/result"))
    for secret in [d["name"] for d in key["designs"]] + [d["sha256"] for d in key["designs"]] + key["render_sha256"] + list(key["clip_sha256"].values()) + [str(key["seed"])]:
        assert secret.encode() not in served, secret
    assert request(server.port, path="/api/result")[0] == 409
    state = json.loads(request(server.port, path="/api/state")[2])
    assert all(set(t) == {"index", "clips"} for t in state["trials"])


def test_wrong_host_and_foreign_origin_are_refused(running):
    paths, server = running
    assert request(server.port, path="/api/state", host="attacker.example:80")[0] == 421  # DNS rebinding
    assert request(server.port, path="/", host=f"localhost:{server.port}")[0] == 200
    status, reply = answer(server.port, 0, "A", headers={"Origin": "http://attacker.example"})
    assert status == 403 and lines_of(paths) == []
    status, reply = answer(server.port, 0, "A", headers={"Origin": f"http://127.0.0.1:{server.port}"})
    assert status == 200 and reply["recorded"]


def test_port_80_is_answered_without_the_port_in_host_and_origin(make_session, serve):
    # a client leaves http's default port 80 out of Host and Origin (RFC 9110 §4.2.1, §4.2.3 and §7.2; the
    # WHATWG URL Standard serialises a default port as nothing), so "127.0.0.1" must be accepted there, and
    # only there; "localhost" likewise; other names still are refused
    from render.loopback import own_authorities

    assert own_authorities(80) == {"127.0.0.1", "localhost", "127.0.0.1:80", "localhost:80"}
    assert own_authorities(8080) == {"127.0.0.1:8080", "localhost:8080"}
    paths = make_session(method="abx", trials=2)
    try:
        server = serve(paths.root, port=80)
    except InputError as exc:  # port 80 taken, or binding it needs privileges here: the rule above still ran
        pytest.skip(f"cannot listen on 127.0.0.1:80 here ({exc})")
    assert request(80, path="/", host="127.0.0.1")[0] == 200
    assert request(80, path="/api/state", host="localhost")[0] == 200
    assert request(80, path="/api/state", host="LOCALHOST:80")[0] == 200  # host names are case-insensitive (RFC 9110 §4.2.3)
    assert request(80, path="/api/state", host="attacker.example")[0] == 421
    status, _ = answer(80, 0, "A", host="127.0.0.1", headers={"Origin": "http://127.0.0.1"})
    assert status == 200 and len(lines_of(paths)) == 1
    assert answer(80, 1, "A", host="127.0.0.1", headers={"Origin": "http://attacker.example"})[0] == 403
    server.stop()


def test_on_another_port_the_bare_address_is_refused(running):
    paths, server = running
    assert request(server.port, path="/api/state", host="127.0.0.1")[0] == 421  # the port is part of its Host there
    assert answer(server.port, 0, "A", headers={"Origin": "http://127.0.0.1"})[0] == 403 and lines_of(paths) == []


def test_other_methods_are_refused(running):
    paths, server = running
    for method in ("PUT", "DELETE", "PATCH", "OPTIONS"):
        assert request(server.port, method, "/api/answer", body=b"{}")[0] == 405
    assert request(server.port, "POST", "/", body=b"{}")[0] == 405
    assert request(server.port, "POST", "/private/key.json", body=b"{}")[0] == 404
    assert lines_of(paths) == []


# -- answers: malformed, oversized, duplicated -------------------------------


@pytest.mark.parametrize(
    "body, status",
    [
        (b"", 400),
        (b"{", 400),
        (b"\xff\xfe{}", 400),
        (b"[]", 400),
        (b'"A"', 400),
        (b"{}", 400),
        (b'{"trial": 0}', 400),
        (b'{"trial": 0, "answer": "X"}', 400),
        (b'{"trial": 0, "answer": "none"}', 400),  # no "no preference" in ABX
        (b'{"trial": true, "answer": "A"}', 400),
        (b'{"trial": 0.0, "answer": "A"}', 400),
        (b'{"trial": "0", "answer": "A"}', 400),
        (b'{"trial": -1, "answer": "A"}', 400),
        (b'{"trial": 4, "answer": "A"}', 400),
        (b'{"trial": 99999999999999999999, "answer": "A"}', 400),
        (b'{"trial": 0, "answer": "A", "comment": 5}', 400),
        (b'{"trial": 0, "answer": "A", "comment": "bell\\u0007"}', 400),
        (b'{"trial": 0, "answer": "A", "x": "A"}', 400),
        (b'{"trial": NaN, "answer": "A"}', 400),
        (b'{"trial": ' + b"9" * 5000 + b', "answer": "A"}', 400),  # past Python's int-conversion digit limit
        (b"[" * 4000 + b"]" * 4000, 400),  # nested past the recursion limit, inside the size limit
        (b'{"trial": 1, "answer": "A"}', 409),  # trial 0 first
    ],
)
def test_malformed_answers_are_refused_and_nothing_is_written(running, body, status):
    paths, server = running
    got, _, payload = request(server.port, "POST", "/api/answer", body=body)
    assert got == status and "error" in json.loads(payload)
    assert lines_of(paths) == []


def test_oversized_and_unframed_bodies_are_refused(running):
    paths, server = running
    big = json.dumps({"trial": 0, "answer": "A", "comment": "x" * MAX_BODY}).encode()
    assert request(server.port, "POST", "/api/answer", body=big)[0] == 413
    # a huge declared length is refused before any of it is read
    assert request(server.port, "POST", "/api/answer", body=b"", headers={"Content-Length": str(10**12)})[0] == 413
    too_long = json.dumps({"trial": 0, "answer": "A", "comment": "y" * 2001}).encode()
    assert request(server.port, "POST", "/api/answer", body=too_long)[0] == 400
    assert request(server.port, "POST", "/api/answer", body=b"", headers={"Content-Length": None})[0] == 411
    assert request(server.port, "POST", "/api/answer", body=b"", headers={"Content-Length": "-5"})[0] == 411
    assert request(server.port, "POST", "/api/answer", body=b"", headers={"Content-Length": "\u00b2"})[0] == 411  # a superscript two: a digit to str.isdigit, not a length
    chunked = f"POST /api/answer HTTP/1.1\r\nHost: 127.0.0.1:{server.port}\r\nContent-Type: application/json\r\nTransfer-Encoding: chunked\r\n\r\n5\r\n{{...}}\r\n0\r\n\r\n"
    assert request(server.port, raw=chunked.encode())[0] == 411
    body = b'{"trial": 0, "answer": "A"}'
    assert request(server.port, "POST", "/api/answer", body=body, headers={"Content-Type": "text/plain"})[0] == 415
    # a body shorter than its Content-Length: the server waits, then gives up on that client
    short = f"POST /api/answer HTTP/1.1\r\nHost: 127.0.0.1:{server.port}\r\nContent-Type: application/json\r\nContent-Length: 50\r\n\r\n{{}}"
    with socket.create_connection(("127.0.0.1", server.port), timeout=5) as s:
        s.sendall(short.encode())
        s.shutdown(socket.SHUT_WR)
        reply = s.recv(4096)
    assert reply.startswith(b"HTTP/1.0 400")
    assert lines_of(paths) == []
    assert answer(server.port, 0, "A")[0] == 200  # and the server still answers


def test_oversized_request_lines_and_headers_are_refused(running):
    paths, server = running
    assert request(server.port, path="/" + "a" * 70000)[0] == 414  # http.server's 64 KiB request-line bound
    many = {f"X-Filler-{i}": "1" for i in range(150)}
    assert request(server.port, path="/api/state", headers=many)[0] == 431  # http.client's 100-header bound
    assert request(server.port, raw=b"NONSENSE\r\n\r\n")[0] == 400
    assert request(server.port, path="/api/state")[0] == 200


def test_too_many_connections_are_shed_and_the_server_recovers(running):
    from render.listening.server import MAX_CONNECTIONS

    paths, server = running
    idle = [socket.create_connection(("127.0.0.1", server.port), timeout=5) for _ in range(MAX_CONNECTIONS)]
    try:
        deadline = time.monotonic() + 10  # wait until the server has taken every slot (not a fixed sleep: the machine may be loaded)
        while server._connections._value > 0 and time.monotonic() < deadline:
            time.sleep(0.01)
        assert server._connections._value == 0
        with socket.create_connection(("127.0.0.1", server.port), timeout=5) as extra:
            extra.sendall(f"GET /api/state HTTP/1.1\r\nHost: 127.0.0.1:{server.port}\r\n\r\n".encode())
            try:
                assert extra.recv(100) == b""  # closed without an answer
            except ConnectionResetError:
                pass
    finally:
        for s in idle:
            s.close()
    deadline = time.monotonic() + 5
    while time.monotonic() < deadline:
        with contextlib.suppress(OSError):
            if request(server.port, path="/api/state")[0] == 200:
                break
        time.sleep(0.05)
    else:
        raise AssertionError("the server did not recover after the idle clients left")


def test_a_repeated_answer_is_idempotent_and_a_changed_one_refused(running):
    paths, server = running
    assert answer(server.port, 0, "B", "hm") == (200, {"recorded": True, "trial": 0, "answered": 1, "complete": False})
    assert answer(server.port, 0, "B", "hm") == (200, {"recorded": False, "trial": 0, "answered": 1, "complete": False})
    status, reply = answer(server.port, 0, "A")
    assert status == 409 and "cannot be changed" in reply["error"]
    assert status == 409 and answer(server.port, 2, "A")[0] == 409
    assert len(lines_of(paths)) == 1


def test_concurrent_resends_record_one_line(running):
    paths, server = running
    results = []

    def send():
        results.append(answer(server.port, 0, "A", "same"))

    threads = [threading.Thread(target=send) for _ in range(8)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(10)
    assert sorted(r[1]["recorded"] for r in results) == [False] * 7 + [True]
    assert len(lines_of(paths)) == 1


def test_the_result_opens_only_after_the_last_answer(running):
    paths, server = running
    for i in range(3):
        assert answer(server.port, i, "A")[0] == 200
        assert request(server.port, path="/api/result")[0] == 409
    status, reply = answer(server.port, 3, "B")
    assert status == 200 and reply["complete"]
    status, _, body = request(server.port, path="/api/result")
    result = json.loads(body)
    assert status == 200 and result["abx"]["total"] == 4 and len(result["table"]) == 4


# -- one writer; restarts; crashes ------------------------------------------


def test_a_second_writer_is_refused(running, serve):
    paths, server = running
    with pytest.raises(InputError, match="another `render listen` is already serving this session"):
        ListeningServer(paths.root)
    answer(server.port, 0, "A")
    server.stop()
    again = serve(paths.root)  # released on stop
    assert json.loads(request(again.port, path="/api/state")[2])["answered"][0]["answer"] == "A"


def test_a_restart_resumes_with_every_answer(make_session, serve):
    paths = make_session(method="preference", trials=5)
    server = serve(paths.root)
    for i, value in enumerate(["A", "none"]):
        assert answer(server.port, i, value)[0] == 200
    port = server.port
    server.stop()
    server = serve(paths.root, port=port)
    state = json.loads(request(server.port, path="/api/state")[2])
    assert [a["answer"] for a in state["answered"]] == ["A", "none"]
    assert answer(server.port, 1, "none")[1]["recorded"] is False  # a resend after the restart changes nothing
    assert answer(server.port, 2, "B")[1] == {"recorded": True, "trial": 2, "answered": 3, "complete": False}
    assert [json.loads(x)["trial"] for x in lines_of(paths)] == [0, 1, 2]


def _start_cli(session, *extra):
    code = "import sys; from render.cli.listen import listen_command; listen_command(sys.argv[1:], prog_name='render listen')"
    proc = subprocess.Popen(
        [sys.executable, "-c", code, str(session), "--no-browser", *extra],
        cwd=ROOT,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    line = proc.stdout.readline()
    if "serving" not in line:
        proc.kill()
        out, err = proc.communicate(timeout=10)
        raise AssertionError(f"render listen did not start: {line}{out}{err}")
    port = int(line.rsplit(":", 1)[1].strip().rstrip("/"))
    return proc, port


@contextlib.contextmanager
def cli_server(session, *extra):
    proc, port = _start_cli(session, *extra)
    try:
        yield proc, port
    finally:
        if proc.poll() is None:
            proc.kill()
        proc.communicate(timeout=10)


def test_a_killed_server_loses_nothing_and_leaves_no_lock(make_session):
    paths = make_session(method="abx", trials=4)
    with cli_server(paths.root) as (proc, port):
        assert answer(port, 0, "A")[0] == 200
        assert answer(port, 1, "B")[0] == 200
        os.kill(proc.pid, signal.SIGKILL)  # no clean-up of any kind
        proc.wait(10)
    # a line torn by a crash mid-write was never acknowledged: the next writer cuts it off
    with open(paths.answers, "ab") as fh:
        fh.write(b'{"trial": 2, "ans')
    with cli_server(paths.root) as (proc, port):
        state = json.loads(request(port, path="/api/state")[2])
        assert [a["answer"] for a in state["answered"]] == ["A", "B"]
        assert answer(port, 2, "A")[0] == 200
        # a second `render listen` on the same session is refused with one line, exit 1
        second = subprocess.run(
            [sys.executable, "-c", "import sys; from render.cli.listen import listen_command; listen_command(sys.argv[1:], prog_name='render listen')", str(paths.root), "--no-browser"],
            cwd=ROOT,
            capture_output=True,
            text=True,
            timeout=30,
        )
        assert second.returncode == 1
        assert second.stderr.strip().splitlines() == [f"Error: SESSION={paths.root}: another `render listen` is already serving this session (listen.lock is held); use that one or stop it first"]
        proc.send_signal(signal.SIGINT)  # Ctrl-C: a clean stop
        out, _ = proc.communicate(timeout=10)
        assert proc.returncode == 0 and "stopped; 3 of 4 trials answered" in out
    assert [json.loads(x)["trial"] for x in lines_of(paths)] == [0, 1, 2]


def test_listen_refuses_bad_input_with_one_line(tmp_path, make_session):
    from click.testing import CliRunner

    from render.cli.listen import listen_command

    result = CliRunner().invoke(listen_command, [str(tmp_path / "nowhere"), "--no-browser"])
    assert result.exit_code == 1
    assert result.output.strip() == f"Error: SESSION={tmp_path / 'nowhere'}: no such folder; make a session with `render blind MODEL_A MODEL_B`"
    result = CliRunner().invoke(listen_command, [str(tmp_path), "--no-browser"])
    assert result.exit_code == 1 and "not a listening session" in result.output
    paths = make_session(trials=2)
    result = CliRunner().invoke(listen_command, [str(paths.root), "--no-browser", "--port", "70000"])
    assert result.exit_code == 1
    assert result.output.strip() == "Error: --port=70000: must be from 0 to 65535; 0 picks a free port"
    with socket.socket() as busy:
        busy.bind(("127.0.0.1", 0))
        busy.listen(1)
        port = busy.getsockname()[1]
        result = CliRunner().invoke(listen_command, [str(paths.root), "--no-browser", "--port", str(port)])
    assert result.exit_code == 1 and result.output.startswith(f"Error: --port={port}: cannot listen on 127.0.0.1")
    assert not paths.answers.exists() or paths.answers.read_text() == ""


def test_a_dropped_connection_prints_no_traceback(running, capsys):
    # a browser that goes away mid-request (a closed tab: the socket reset, RFC 9293 §3.5.2) is not an error
    # of the server's: nothing is printed, and it goes on serving
    import struct

    _, server = running
    for head in (
        b'POST /api/answer HTTP/1.1\r\nHost: 127.0.0.1:%d\r\nContent-Type: application/json\r\nContent-Length: 900\r\n\r\n{"tri' % server.port,
        b"GET /api/state HTTP/1.1\r\nHost: 127.0.0.1:%d\r\n" % server.port,
    ):
        s = socket.create_connection(("127.0.0.1", server.port), timeout=5)
        s.setsockopt(socket.SOL_SOCKET, socket.SO_LINGER, struct.pack("ii", 1, 0))  # close with a reset, not a FIN
        s.sendall(head)
        time.sleep(0.2)
        s.close()
    time.sleep(0.3)
    assert request(server.port, path="/api/state")[0] == 200
    assert "Traceback" not in capsys.readouterr().err
