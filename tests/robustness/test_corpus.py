"""The bad-file corpus: every hand-written bad file is refused through the command
line with one line (exit 1, no traceback) that holds its expected message.

The corpus lives in ``corpus/`` with the fragments in ``corpus/expected.toml``;
files too large to keep (over a megabyte, or nested thousands deep) are made here.
"""

from __future__ import annotations

import os

import pytest

from render.design import load_design
from render.dry.phrase import MAX_PHRASE_BYTES
from render.io import toml as tomllib  # the standard library parser, or tomli on Python 3.10
from render.io.toml import MAX_FILE_BYTES

from .conftest import CORPUS, REF, assert_refused, run

EXPECTED = tomllib.loads((CORPUS / "expected.toml").read_text(encoding="utf-8"))


def refuse(kind: str, path, tmp_path):
    if kind == "design":
        return run("check", path)
    if kind == "rig":
        return run("check", "--rig", path, REF)
    if kind == "phrase":
        return run("dry", path, "--out", tmp_path / "dry.wav", "--no-spectrogram")
    raise AssertionError(kind)


def test_the_corpus_and_its_expectations_agree():
    files = {p.name for p in CORPUS.iterdir()} - {"expected.toml"}
    assert files == set(EXPECTED)
    assert len(files) >= 30


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_each_bad_file_is_refused_with_its_message(name, tmp_path):
    entry = EXPECTED[name]
    path = CORPUS / name
    line = assert_refused(refuse(entry["as"], path, tmp_path), entry["expect"])
    assert line.startswith(f"Error: {path}: ")  # names the file first
    assert list(tmp_path.iterdir()) == []  # nothing written, not even a temporary file


def test_a_bad_design_leaves_no_json_behind(tmp_path):
    out = tmp_path / "check.json"
    assert_refused(run("check", REF, CORPUS / "typo-key.toml", "--json", out), "did you mean 'inductance'?")
    assert not out.exists() and list(tmp_path.iterdir()) == []


def test_a_very_large_design_file_is_refused_before_it_is_read(tmp_path):
    big = tmp_path / "huge.toml"
    text = REF.read_text(encoding="utf-8")
    with open(big, "w", encoding="utf-8") as fh:
        fh.write(text)
        line = "# " + "padding " * 12 + "\n"
        while fh.tell() <= MAX_FILE_BYTES:
            fh.write(line * 1000)
    size = big.stat().st_size
    assert_refused(run("check", big), f"huge.toml: file is {size} bytes; a design, rig or phrase file must be under {MAX_FILE_BYTES} bytes")
    assert_refused(run("check", "--rig", big, REF), "must be under")


def test_a_very_large_phrase_file_is_refused(tmp_path):
    big = tmp_path / "huge-phrase.toml"
    with open(big, "w", encoding="utf-8") as fh:
        fh.write("[[note]]\ntime = 0\nstring = 6\nfret = 0\n")
        while fh.tell() <= MAX_PHRASE_BYTES:
            fh.write(("# " + "x" * 70 + "\n") * 2000)
    assert_refused(run("dry", big, "--out", tmp_path / "d.wav"), f"a phrase file must be under {MAX_PHRASE_BYTES} bytes")
    assert not (tmp_path / "d.wav").exists()


@pytest.mark.parametrize("opening, closing", [("[", "]"), ("{a = ", "}")])
def test_deep_nesting_is_refused_not_a_crash(tmp_path, opening, closing):
    deep = tmp_path / "deep.toml"
    deep.write_text("x = " + opening * 4000 + "1" + closing * 4000 + "\n", encoding="utf-8")
    assert_refused(run("check", deep), "nested too deeply to read")
    assert_refused(run("dry", deep, "--out", tmp_path / "d.wav"), "nested too deeply to read")


def test_a_pipe_or_a_folder_is_refused_without_reading(tmp_path):
    fifo = tmp_path / "pipe.toml"
    os.mkfifo(fifo)  # opening it for reading would block forever
    assert_refused(run("check", fifo), "is not a regular file (a device or a pipe?)")
    assert_refused(run("dry", fifo, "--out", tmp_path / "d.wav"), "is not a regular file")
    assert_refused(run("clips", REF, "--dry", fifo, "--out", tmp_path / "o", "--seconds", 0.1), "is not a regular file")


def test_odd_but_meaningful_unicode_is_read_as_meant(tmp_path):
    """The micro sign and the Greek mu, the ohm sign and the Greek omega, a no-break
    space between number and unit: all read as the plain spelling (SI Brochure,
    9th ed., writes a space between number and unit; from memory)."""
    text = REF.read_text(encoding="utf-8")
    odd = (
        text.replace('series_c = "1u"', 'series_c = "1\u00b5F"', 1)  # MICRO SIGN
        .replace('series_c = "1u"', 'series_c = "1\u03bcF"', 1)  # GREEK SMALL LETTER MU
        .replace('series_r = "22k"', 'series_r = "22 k\u2126"', 1)  # OHM SIGN
        .replace('series_r = "22k"', 'series_r = "22\u00a0k\u03a9"', 1)  # NO-BREAK SPACE, GREEK CAPITAL OMEGA
        .replace('r = "110k"', 'r = "110\u202fk"', 1)  # NARROW NO-BREAK SPACE
    )
    for written in ('"1\u00b5F"', '"1\u03bcF"', '"22 k\u2126"', '"22\u00a0k\u03a9"', '"110\u202fk"'):
        assert written in odd
    path = tmp_path / "odd-unicode.toml"
    path.write_text(odd, encoding="utf-8")
    a, b = load_design(REF), load_design(path)
    assert (b.input_a.series_c, b.input_b.series_c) == (a.input_a.series_c, a.input_b.series_c) == (1e-6, 1e-6)
    assert (b.input_a.series_r, b.input_b.series_r, b.feedback.r) == (a.input_a.series_r, a.input_b.series_r, a.feedback.r)
    res = run("check", path)
    assert res.exit_code == 0, res.output
