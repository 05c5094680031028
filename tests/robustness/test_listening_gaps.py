"""The listening server: what its own tests leave out. Two listeners answering one
trial differently at once, two servers started at the same moment, a kill while
an answer is half sent, a full disk when an answer arrives, a clip swapped for a
link to the key, Ctrl-C while a client stalls: no answer lost or duplicated.

Status codes are those of RFC 9110 (200, 409) and RFC 4918 (507).
"""

from __future__ import annotations

import errno
import json
import os
import signal
import socket
import subprocess
import sys
import threading
import time

from render.listening import answers as answers_module
from tests.listening.test_server_http import answer, cli_server, lines_of, request

from .conftest import ROOT

LISTEN = "import sys; from render.cli.listen import listen_command; listen_command(sys.argv[1:], prog_name='render listen')"


def trials_in_log(paths):
    return [json.loads(line)["trial"] for line in lines_of(paths)]


def test_two_listeners_answering_one_trial_differently_record_one_answer(make_session, serve):
    paths = make_session(method="abx", trials=3)
    server = serve(paths.root)
    start = threading.Barrier(8)
    results = []

    def send(value):
        start.wait(5)
        results.append((value, *answer(server.port, 0, value)))

    threads = [threading.Thread(target=send, args=("AB"[i % 2],)) for i in range(8)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(10)
    recorded = [(v, reply) for v, status, reply in results if status == 200 and reply["recorded"]]
    assert len(recorded) == 1
    winner = recorded[0][0]
    for value, status, reply in results:
        if value == winner:
            assert status == 200  # the same answer again changes nothing
        else:
            assert status == 409 and "cannot be changed" in reply["error"]
    (line,) = lines_of(paths)
    assert json.loads(line)["answer"] == winner


def test_two_servers_started_at_once_one_serves_and_the_other_says_why(make_session):
    paths = make_session(method="abx", trials=2)
    procs = [subprocess.Popen([sys.executable, "-c", LISTEN, str(paths.root), "--no-browser"], cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True) for _ in range(2)]
    try:
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline and all(p.poll() is None for p in procs):
            time.sleep(0.02)
        losers = [p for p in procs if p.poll() is not None]
        assert len(losers) == 1, "exactly one of the two must give up"
        (winner,) = [p for p in procs if p.poll() is None]
        out, err = losers[0].communicate(timeout=10)
        assert losers[0].returncode == 1
        assert err.strip().splitlines() == [f"Error: SESSION={paths.root}: another `render listen` is already serving this session (listen.lock is held); use that one or stop it first"]
        line = winner.stdout.readline()
        port = int(line.rsplit(":", 1)[1].strip().rstrip("/"))
        assert answer(port, 0, "A")[0] == 200
        winner.send_signal(signal.SIGINT)
        out, _ = winner.communicate(timeout=20)
        assert winner.returncode == 0 and "stopped; 1 of 2 trials answered" in out
    finally:
        for p in procs:
            if p.poll() is None:
                p.kill()
            p.communicate(timeout=10)
    assert trials_in_log(paths) == [0]


def _half_sent(port, trial, value):
    """A socket that has sent the headers of an answer and half of its body, then waits."""
    body = json.dumps({"trial": trial, "answer": value}).encode()
    head = f"POST /api/answer HTTP/1.1\r\nHost: 127.0.0.1:{port}\r\nContent-Type: application/json\r\nContent-Length: {len(body)}\r\n\r\n"
    s = socket.create_connection(("127.0.0.1", port), timeout=5)
    s.sendall(head.encode() + body[: len(body) // 2])
    return s


def test_a_kill_while_an_answer_is_half_sent_loses_nothing_and_adds_nothing(make_session):
    paths = make_session(method="abx", trials=3)
    with cli_server(paths.root) as (proc, port):
        assert answer(port, 0, "A")[0] == 200
        stalled = _half_sent(port, 1, "B")
        time.sleep(0.2)  # the server is now reading that body
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait(10)
        stalled.close()
    assert trials_in_log(paths) == [0]  # the half-sent answer was never taken
    with cli_server(paths.root) as (proc, port):
        state = json.loads(request(port, path="/api/state")[2])
        assert [a["answer"] for a in state["answered"]] == ["A"]
        assert answer(port, 1, "B")[1]["recorded"] is True  # the page sends it again
        assert answer(port, 1, "B")[1]["recorded"] is False
    assert trials_in_log(paths) == [0, 1]


def test_a_full_disk_when_an_answer_arrives_is_507_and_the_resend_records_once(make_session, serve, monkeypatch):
    paths = make_session(method="preference", trials=3)
    server = serve(paths.root)
    assert answer(server.port, 0, "A")[0] == 200
    real_write = os.write

    def full(fd, data):
        if fd == server.log._fd:
            real_write(fd, bytes(data[:7]))  # part of the line reaches the disk, then it is full
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        return real_write(fd, data)

    monkeypatch.setattr(answers_module.os, "write", full)
    status, reply = answer(server.port, 1, "none", "close call")
    assert status == 507 and "No space left on device" in reply["error"] and "the page will send it again" in reply["error"]
    assert trials_in_log(paths) == [0] and paths.answers.read_bytes().endswith(b"\n")  # no torn line
    monkeypatch.undo()
    assert answer(server.port, 1, "none", "close call")[1] == {"recorded": True, "trial": 1, "answered": 2, "complete": False}
    assert answer(server.port, 1, "none", "close call")[1]["recorded"] is False
    assert trials_in_log(paths) == [0, 1]


def test_a_clip_swapped_for_a_link_to_the_key_is_not_served(make_session, serve):
    paths = make_session(method="abx", trials=2)
    server = serve(paths.root)
    plan = json.loads(paths.plan.read_text())
    name = plan["trials"][0]["clips"]["A"]
    clip = paths.public / name
    clip.unlink()
    clip.symlink_to(paths.key)  # after the server checked the folder at start
    status, _, body = request(server.port, path=f"/clip/{name}")
    assert status == 500 and b"designs" not in body and json.loads(body) == {"error": "clip unreadable"}
    assert request(server.port, path="/api/state")[0] == 200  # and the server goes on


def test_ctrl_c_with_a_stalled_client_stops_at_once_and_keeps_every_answer(make_session):
    paths = make_session(method="abx", trials=3)
    with cli_server(paths.root) as (proc, port):
        assert answer(port, 0, "B")[0] == 200
        stalled = _half_sent(port, 1, "A")
        try:
            time.sleep(0.2)
            began = time.monotonic()
            proc.send_signal(signal.SIGINT)
            out, _ = proc.communicate(timeout=10)
            assert time.monotonic() - began < 5  # not held up by the client that never finishes
        finally:
            stalled.close()
        assert proc.returncode == 0 and "stopped; 1 of 3 trials answered" in out
    assert trials_in_log(paths) == [0]
