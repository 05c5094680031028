"""The answer log on its own: append and fsync, one writer, torn lines, edited logs."""

from __future__ import annotations

import json

import pytest

from render.errors import InputError
from render.listening.answers import AnswerLog, AnswerRefused, read_answers, validate_answer
from render.listening.layout import load_plan


def test_answers_are_on_disk_when_record_returns(make_session):
    paths = make_session(method="preference", trials=3)
    plan = load_plan(paths)
    with AnswerLog(paths, plan) as log:
        assert log.record({"trial": 0, "answer": "none", "comment": "same to me"})[0] is True
        on_disk = [json.loads(x) for x in paths.answers.read_text().splitlines()]
        assert [(a["trial"], a["answer"], a["comment"]) for a in on_disk] == [(0, "none", "same to me")]
        assert read_answers(paths, plan)[0]["answer"] == "none"  # a reader needs no lock
        assert log.record({"trial": 0, "answer": "none", "comment": "same to me"})[0] is False
        with pytest.raises(AnswerRefused, match=r"trial=0: already answered 'none'"):
            log.record({"trial": 0, "answer": "A"})
        with pytest.raises(AnswerRefused, match=r"trial=2: answer trial 1 first"):
            log.record({"trial": 2, "answer": "A"})
        log.record({"trial": 1, "answer": "B"})
        log.record({"trial": 2, "answer": "A"})
        assert log.complete
    assert [a["trial"] for a in read_answers(paths, plan)] == [0, 1, 2]


def test_one_writer_at_a_time(make_session):
    paths = make_session(trials=2)
    plan = load_plan(paths)
    first = AnswerLog(paths, plan)
    try:
        with pytest.raises(InputError, match=r"another `render listen` is already serving this session"):
            AnswerLog(paths, plan)
    finally:
        first.close()
    AnswerLog(paths, plan).close()  # free again once the first is closed


def test_a_torn_last_line_is_cut_off_by_the_next_writer(make_session):
    paths = make_session(trials=3)
    plan = load_plan(paths)
    with AnswerLog(paths, plan) as log:
        log.record({"trial": 0, "answer": "A"})
    good = paths.answers.read_bytes()
    paths.answers.write_bytes(good + b'{"trial":1,"answer":"B","comm')  # a crash in the middle of a write
    assert len(read_answers(paths, plan)) == 1  # a reader ignores it
    with AnswerLog(paths, plan) as log:
        assert paths.answers.read_bytes() == good
        log.record({"trial": 1, "answer": "B"})
    assert [a["answer"] for a in read_answers(paths, plan)] == ["A", "B"]


@pytest.mark.parametrize(
    "content, message",
    [
        (b'{"trial":0,"answer":"A"}\nnot json\n', r"line 2: .*the log was edited or damaged"),
        (b'{"trial":0,"answer":"A"}\n{"trial":0,"answer":"B"}\n', r"line 2: trial=0 answered twice with different answers"),
        (b'{"trial":1,"answer":"A"}\n', r"line 1: trial=1 comes before trial 0 is answered"),
        (b'{"trial":0,"answer":"Q"}\n', r'line 1: answer="Q": expected one of A, B'),
    ],
)
def test_an_edited_log_is_refused_with_its_line(make_session, content, message):
    paths = make_session(trials=2)
    paths.answers.write_bytes(content)
    with pytest.raises(InputError, match=message):
        read_answers(paths, load_plan(paths))


def test_a_repeated_identical_line_counts_once(make_session):
    paths = make_session(trials=2)
    paths.answers.write_bytes(b'{"trial":0,"answer":"A"}\n{"trial":0,"answer":"A"}\n')
    assert len(read_answers(paths, load_plan(paths))) == 1


def test_validation_names_the_field():
    # the values as the answer's JSON has them (RFC 8259: true, null, strings in double quotes), not Python's
    with pytest.raises(ValueError, match=r"^trial=true: expected a whole number from 0 to 3$"):
        validate_answer({"trial": True, "answer": "A"}, method="abx", trials=4)
    with pytest.raises(ValueError, match=r"^trial=null: expected a whole number from 0 to 3$"):
        validate_answer({"answer": "A"}, method="abx", trials=4)
    with pytest.raises(ValueError, match=r'^answer="none": expected one of A, B$'):
        validate_answer({"trial": 0, "answer": "none"}, method="abx", trials=4)
    assert validate_answer({"trial": 3, "answer": "none"}, method="preference", trials=4) == {"trial": 3, "answer": "none", "comment": ""}
    assert validate_answer({"trial": 0, "answer": "A", "comment": "two\nlines\tand ünïcode"}, method="abx", trials=1)["comment"].startswith("two")


def test_a_failed_write_leaves_no_torn_line(make_session, monkeypatch):
    import os

    from render.listening import answers as mod

    paths = make_session(trials=3)
    plan = load_plan(paths)
    with AnswerLog(paths, plan) as log:
        log.record({"trial": 0, "answer": "A"})
        real_write = os.write

        def half_then_full(fd, data):
            if fd == log._fd:
                real_write(fd, bytes(data[:5]))
                raise OSError(28, "No space left on device")
            return real_write(fd, data)

        monkeypatch.setattr(mod.os, "write", half_then_full)
        with pytest.raises(OSError):
            log.record({"trial": 1, "answer": "B"})
        monkeypatch.undo()
        assert len(paths.answers.read_text().splitlines()) == 1 and paths.answers.read_text().endswith("\n")
        log.record({"trial": 1, "answer": "B"})
    assert [a["trial"] for a in read_answers(paths, plan)] == [0, 1]


def test_a_log_copied_from_another_session_is_refused(make_session):
    # every line carries its session's id (the plan's "session"): another session's answers do not score this one
    one, other = make_session(trials=2, seed=1), make_session(trials=2, seed=2)
    with AnswerLog(one, load_plan(one)) as log:
        log.record({"trial": 0, "answer": "A"})
        log.record({"trial": 1, "answer": "B"})
    assert all(json.loads(x)["session"] == load_plan(one)["session"] for x in one.answers.read_text().splitlines())
    other.answers.write_bytes(one.answers.read_bytes())
    with pytest.raises(InputError, match=r"line 1: an answer of another session"):
        read_answers(other, load_plan(other))
    with pytest.raises(InputError, match=r"an answer of another session"):
        AnswerLog(other, load_plan(other))
