"""Every clip file of a session differs in its bytes; the dither that does it stays below the 24-bit step.

Sources of the check values:
- one step of a 24-bit two's-complement quantiser at full scale ±1 is 2**-23 (2**23 steps per side);
- TPDF dither as the difference of two independent uniform draws on [0, 1) step: triangular on
  (−1, 1) step, variance 2 · 1/12 = 1/6 step², mean |d| = 1/3 step, P(|d| < 1/2 step) = 1 − (1/2)² = 3/4
  (Lipshitz, Wannamaker and Vanderkooy, "Quantization and Dither: A Theoretical Survey",
  J. Audio Eng. Soc. 40(5), 1992, the triangular PDF of section 3);
- two independent copies differ by variance 1/6 + 1/6 = 1/3 step² (variances of independent
  variables add), rms 0.577 step;
- float32 keeps 24 significant bits: its step on [2**k, 2**(k+1)) is 2**(k-23) (IEEE 754-2008, binary32).
"""

from __future__ import annotations

import hashlib
import itertools
import math

import numpy as np
import pytest
import soundfile as sf

from render.errors import InputError
from render.io.wav import float_wav_bytes
from render.listening.build import build_session, slot_design
from render.listening.dither import STEP_24_BIT, tpdf_dither
from render.listening.layout import SLOTS

from .conftest import MODELS, design_record

SR = 16000
STEP = 2.0**-23  # 24-bit step at full scale ±1


def _signals(seconds=1.0):
    t = np.arange(int(SR * seconds)) / SR
    rng = np.random.default_rng(3)
    return [0.3 * np.sin(2 * np.pi * 330 * t) + 0.01 * rng.standard_normal(t.size), 0.25 * np.sin(2 * np.pi * 1250 * t)]


def _build(out, signals, *, method="abx", trials=8, seed=4242):
    return build_session(out, signals, sample_rate=SR, method=method, trials=trials, seed=seed, designs=[design_record(p) for p in MODELS], record={})


def _by_slot(paths, key):
    """{(trial, slot): clip bytes} in the key's order."""
    return {(t["index"], s): (paths.public / name).read_bytes() for t in key["trials"] for s, name in t["clips"].items()}


def test_the_step_is_the_24_bit_step():
    assert STEP_24_BIT == STEP == 1.0 / 8388608  # 2**23 = 8388608


@pytest.mark.parametrize("method", ["abx", "preference"])
def test_no_two_clip_files_are_byte_identical(make_session, method):
    paths = make_session(method=method, trials=16, seed=31)
    clips = [p for p in paths.public.iterdir() if p.suffix == ".wav"]
    assert len(clips) == 16 * len(SLOTS[method])
    digests = [hashlib.sha256(p.read_bytes()).hexdigest() for p in clips]
    assert len(set(digests)) == len(digests)
    assert len({p.stat().st_size for p in clips}) == 1  # still one size: the dither changes bytes, not lengths


def test_two_copies_of_one_design_differ_by_less_than_a_24_bit_step(tmp_path):
    import json

    signals = _signals()
    paths = _build(tmp_path / "s", signals, trials=8)
    key = json.loads(paths.key.read_text())
    copies: dict[int, list[np.ndarray]] = {0: [], 1: []}
    for t in key["trials"]:
        for slot, name in t["clips"].items():
            copies[slot_design(t, slot)].append(sf.read(paths.public / name, dtype="float64")[0])
    for _design, found in copies.items():
        assert len(found) >= 2
        for one, two in itertools.combinations(found[:4], 2):
            diff = one - two
            rms = float(np.sqrt(np.mean(diff**2)))
            assert rms < STEP  # below the 24-bit step
            # two independent TPDF draws: rms sqrt(1/3) step; float32 rounding adds a variance of at most
            # 2 · ulp²/12 = step²/96 (ulp ≤ 2**-25 here, |x| < 0.5): at most 1.6 % more rms
            assert rms == pytest.approx(math.sqrt(1 / 3) * STEP, rel=0.03)
            assert np.max(np.abs(diff)) < 2 * STEP + 2 * 2.0**-25


def test_each_clip_is_its_render_plus_tpdf_dither(tmp_path):
    import json

    signals = _signals()
    paths = _build(tmp_path / "s", signals, trials=4, seed=77)
    key = json.loads(paths.key.read_text())
    plain = [np.asarray(s, np.float32).astype(np.float64) for s in signals]
    # the key's render hashes are the undithered float32 WAVs
    assert key["render_sha256"] == [hashlib.sha256(float_wav_bytes(s, SR)).hexdigest() for s in signals]
    t = key["trials"][0]
    for slot, name in t["clips"].items():
        d = sf.read(paths.public / name, dtype="float64")[0] - plain[slot_design(t, slot)]
        assert float(np.sqrt(np.mean(d**2))) == pytest.approx(STEP / math.sqrt(6), rel=0.03)  # TPDF variance step²/6
        assert abs(float(np.mean(d))) < 0.02 * STEP  # mean 0: 16000 draws of sd 0.41 step give sd 0.003 step
        # and it is exactly the documented draw, rounded once to float32
        expected = (signals[slot_design(t, slot)] + tpdf_dither(SR, seed=77, trial=0, slot=slot)).astype(np.float32)
        assert np.array_equal(sf.read(paths.public / name, dtype="float32")[0], expected)


def test_the_dither_is_triangular_within_one_step():
    d = tpdf_dither(200_000, seed=5, trial=3, slot="X") / STEP
    assert np.max(np.abs(d)) < 1.0
    # 200 000 draws: the standard errors are about 0.0005 (variance), 0.0005 (mean |d|), 0.001 (share)
    assert np.var(d) == pytest.approx(1 / 6, abs=0.003)
    assert np.mean(np.abs(d)) == pytest.approx(1 / 3, abs=0.003)
    assert np.mean(np.abs(d) < 0.5) == pytest.approx(0.75, abs=0.005)  # a uniform dither of ±1 step would give 0.5


def test_the_dither_comes_from_the_seed(tmp_path):
    import json

    signals = _signals(0.5)
    one, two, other = (_build(tmp_path / n, signals, trials=5, seed=s) for n, s in (("one", 9), ("two", 9), ("other", 10)))
    k1, k2, k3 = (json.loads(p.key.read_text()) for p in (one, two, other))
    b1, b2 = _by_slot(one, k1), _by_slot(two, k2)
    assert b1 == b2  # same seed: the same bytes in every slot of every trial (under new random names)
    assert {n for t in k1["trials"] for n in t["clips"].values()}.isdisjoint(n for t in k2["trials"] for n in t["clips"].values())
    assert not set(b1.values()) & set(_by_slot(other, k3).values())  # another seed: no file alike
    # the trials' own draws are untouched by the dither's streams
    assert [(t["a"], t["x"]) for t in k1["trials"]] == [(t["a"], t["x"]) for t in k2["trials"]]


def test_renders_too_loud_for_the_dither_are_refused(tmp_path):
    # at |x| in [4, 8) float32's step is 2**-21: a dither under 2**-23 rounds away and every copy is alike
    loud = [np.full(SR // 2, 5.0), np.full(SR // 2, 6.0)]
    with pytest.raises(InputError, match=r"^two clip files came out byte-identical: .*full scale ±1"):
        _build(tmp_path / "s", loud, trials=2)
    assert list(tmp_path.iterdir()) == []


def test_a_count_of_differing_bytes_still_names_x_in_every_trial(make_session):
    # What README says the dither does not hide: it moves only each float32 sample's low bytes (it is under the
    # 24-bit step, and float32 keeps 24 significant bits), so X differs from its own design's copy in fewer bytes
    # than from the other design's, in every trial. A listener who compares files this way finds X without listening.
    import json

    paths = make_session(method="abx", trials=16, seed=5)
    key = json.loads(paths.key.read_text())
    named = 0
    for t in key["trials"]:
        raw = {s: (paths.public / name).read_bytes() for s, name in t["clips"].items()}
        clip = {s: np.frombuffer(b[b.index(b"data") + 8 :], np.uint8) for s, b in raw.items()}  # the audio, after the data chunk's header
        differ = {s: float(np.mean(clip["X"] != clip[s])) for s in ("A", "B")}
        named += min(differ, key=differ.get) == t["x"]
        assert differ[t["x"]] < 0.5 < differ["B" if t["x"] == "A" else "A"]  # under half against its copy, over half against the other
    assert named == 16
