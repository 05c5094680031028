"""Property-based fuzzing of the design, rig and phrase loaders.

Whatever they are given — arbitrary TOML-like structures, valid documents
with values and keys swapped for odd ones, arbitrary text, arbitrary bytes —
the only outcomes are a valid object or one :class:`render.errors.InputError`
whose message is a single line. Never another exception, never a traceback.
"""

from __future__ import annotations

import copy
import datetime as dt
import math
import os
import tempfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from render.design import Design, RigFile, design_to_dict, load_design, load_rig, parse_design, parse_rig
from render.dry.phrase import Phrase, load_phrase, parse_phrase
from render.errors import InputError
from render.io import toml as tomllib  # the standard library parser, or tomli on Python 3.10

from .conftest import PHRASE, REF

# RENDER_FUZZ_EXAMPLES=5000 for a deeper run by hand; CI keeps it short
FUZZ = settings(max_examples=int(os.environ.get("RENDER_FUZZ_EXAMPLES", "120")), deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])

REF_DOC = tomllib.loads(REF.read_text(encoding="utf-8"))
PHRASE_DOC = tomllib.loads(PHRASE.read_text(encoding="utf-8"))
RIG_DOC = {
    "rig": {"volume_pot": "25k", "volume": 1.0, "volume_taper": "audio", "tone_cap": "22n", "cable_length": "6m"},
    "hum": {"mains": "50Hz", "field": "1uT", "harmonics": [1.0, 0.05, 0.3]},
}

# Strings a hand-edited file might hold: quantities right and wrong, RKM codes,
# slips, odd Unicode (micro sign and mu, fullwidth digits, invisible marks, NUL).
TOKENS = [
    "22k",
    "4k7",
    "R47",
    "1M0",
    "2n2",
    "100nF",
    "350mH",
    "9V",
    "60Hz",
    "1uT",
    "30mm",
    "6m",
    "5cm2",
    "0.045",
    "1m",
    "1M",
    "1e3k",
    "1e400",
    "-1",
    "0",
    "+0.0",
    "nan",
    "inf",
    "",
    " ",
    "k",
    "R",
    "..1",
    "1.",
    "1e",
    "e3",
    "22kΩ",
    "22k\u2126",
    "1\u00b5F",
    "1\u03bcF",
    "\uff13\uff15\uff10mH",
    "22k\u200f",
    "\u200e9V",
    "22\u00a0k",
    "9\x00V",
    "9V\n",
    "\ufeff9V",
    "audio",
    "linear",
    "steel",
    "air",
    "x",
    "E2",
    "C#4",
    "Bb2",
    "H2",
    "98Hz",
    "down",
    "up",
]
scalars = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(min_value=-(2**70), max_value=2**70),
    st.integers(min_value=-3, max_value=70),
    st.just(10**400),
    st.floats(allow_nan=True, allow_infinity=True),
    st.floats(min_value=1e-16, max_value=1e12),
    st.text(max_size=16),
    st.sampled_from(TOKENS),
    st.dates(),
    st.times(),
    st.datetimes(timezones=st.just(dt.timezone.utc)),
)
values = st.recursive(scalars, lambda inner: st.one_of(st.lists(inner, max_size=5), st.dictionaries(st.text(max_size=8), inner, max_size=5)), max_leaves=12)
keys = st.one_of(st.text(max_size=12), st.sampled_from(["name", "notes", "rig", "hum", "winding", "note", "chord", "instrument", "playing", "coil_a", "bend"]))


def one_outcome(fn, *args, kind, **kwargs):
    """Call ``fn``: it must return a ``kind`` or raise an InputError with a one-line message."""
    try:
        out = fn(*args, **kwargs)
    except InputError as exc:
        text = str(exc)
        assert text and len(text.splitlines()) == 1 and text == text.strip(), repr(text)
        return None
    assert isinstance(out, kind), type(out)
    return out


def finite_numbers(obj) -> bool:
    if isinstance(obj, dict):
        return all(finite_numbers(v) for v in obj.values())
    if isinstance(obj, (list, tuple)):
        return all(finite_numbers(v) for v in obj)
    if isinstance(obj, float):
        return math.isfinite(obj)
    return True


@st.composite
def mutated(draw, base: dict):
    """``base`` with one to four edits: a value replaced, a key removed, a key added (at any depth)."""
    doc = copy.deepcopy(base)
    for _ in range(draw(st.integers(1, 4))):
        node = doc
        while True:
            if isinstance(node, list) and node:
                child = node[draw(st.integers(0, len(node) - 1))]
            elif isinstance(node, dict) and node:
                child = node[draw(st.sampled_from(sorted(node)))]
            else:
                break
            if not isinstance(child, (dict, list)) or draw(st.booleans()):
                break
            node = child
        if isinstance(node, dict):
            action = draw(st.sampled_from(["replace", "remove", "add"]))
            if action == "replace" and node:
                node[draw(st.sampled_from(sorted(node)))] = draw(values)
            elif action == "remove" and node:
                node.pop(draw(st.sampled_from(sorted(node))))
            else:
                node[draw(keys)] = draw(values)
        elif isinstance(node, list) and node:
            node[draw(st.integers(0, len(node) - 1))] = draw(values)
    return doc


@FUZZ
@given(mutated(REF_DOC))
def test_parse_design_on_edited_documents(doc):
    design = one_outcome(parse_design, doc, source="fuzz.toml", kind=Design)
    if design is not None:
        assert finite_numbers(design_to_dict(design))
        assert design.limit_low_v < design.bias_v < design.limit_high_v  # the loader keeps the bias inside the window


@FUZZ
@given(st.one_of(values, st.dictionaries(keys, values, max_size=8)))
def test_parse_design_on_arbitrary_structures(doc):
    one_outcome(parse_design, doc, source="fuzz.toml", kind=Design)


@FUZZ
@given(st.one_of(mutated(RIG_DOC), values, st.dictionaries(keys, values, max_size=6)))
def test_parse_rig_on_arbitrary_structures(doc):
    rig = one_outcome(parse_rig, doc, source="fuzz-rig.toml", kind=RigFile)
    if rig is not None:
        assert finite_numbers(design_to_dict(rig.rig))


@FUZZ
@given(st.one_of(mutated(PHRASE_DOC), values, st.dictionaries(keys, values, max_size=6)))
def test_parse_phrase_on_arbitrary_structures(doc):
    phrase = one_outcome(parse_phrase, doc, source="fuzz-phrase.toml", kind=Phrase)
    if phrase is not None:
        assert 0 < phrase.seconds <= 600 and all(math.isfinite(n.frequency) and n.frequency > 0 for n in phrase.notes)


def _with_file(data: bytes, fn, kind):
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "fuzz.toml"
        path.write_bytes(data)
        return one_outcome(fn, path, kind=kind)


REF_BYTES = REF.read_bytes()
PHRASE_BYTES = PHRASE.read_bytes()


@st.composite
def damaged(draw, original: bytes):
    """``original`` with a few bytes overwritten, inserted or cut, or cut short."""
    data = bytearray(original)
    for _ in range(draw(st.integers(1, 6))):
        at = draw(st.integers(0, len(data)))
        what = draw(st.sampled_from(["overwrite", "insert", "cut", "truncate"]))
        junk = draw(st.one_of(st.binary(min_size=1, max_size=8), st.sampled_from([b"\x00", b"\xff", b"\xef\xbb\xbf", b'"', b"[", b"=", b"\n", "\u200f".encode(), "\uff13".encode()])))
        if what == "overwrite":
            data[at : at + len(junk)] = junk
        elif what == "insert":
            data[at:at] = junk
        elif what == "cut":
            del data[at : at + draw(st.integers(1, 40))]
        else:
            del data[at:]
    return bytes(data)


@FUZZ
@given(st.one_of(st.binary(max_size=400), damaged(REF_BYTES)))
def test_load_design_and_rig_on_arbitrary_bytes(data):
    _with_file(data, load_design, Design)
    _with_file(data, load_rig, RigFile)


@FUZZ
@given(st.one_of(st.binary(max_size=400), damaged(PHRASE_BYTES)))
def test_load_phrase_on_arbitrary_bytes(data):
    _with_file(data, load_phrase, Phrase)


@st.composite
def retyped(draw, original: str):
    """The text of a file with one value (the text after an '=' on a line) retyped."""
    lines = original.splitlines()
    at = [i for i, line in enumerate(lines) if "=" in line and not line.lstrip().startswith("#")]
    i = draw(st.sampled_from(at))
    key = lines[i].split("=", 1)[0]
    token = draw(
        st.one_of(
            st.sampled_from(TOKENS).map(lambda t: '"' + t.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n").replace("\x00", "\\u0000") + '"'),
            st.sampled_from(["1e400", "-0", "inf", "nan", "true", "[]", "{}", "[1, [2]]", "1979-05-27", '"""x"""', "0x1F", "1_000"]),
            st.text(max_size=10),
        )
    )
    lines[i] = f"{key}= {token}"
    return "\n".join(lines) + "\n"


@FUZZ
@given(st.one_of(retyped(REF.read_text(encoding="utf-8")), retyped(PHRASE.read_text(encoding="utf-8"))))
def test_loaders_on_hand_edited_text(text):
    data = text.encode("utf-8", errors="surrogatepass")
    _with_file(data, load_design, Design)
    _with_file(data, load_phrase, Phrase)
