"""Writing a session folder from two rendered signals.

The trials are drawn from ``numpy.random.default_rng(seed)``: for each trial
an independent fair draw of which design plays as A (and, for ABX, another
of whether X repeats A or B). Independent fair draws make the number of
correct ABX answers exactly binomial(n, 1/2) under the null hypothesis,
whatever strategy the listener follows.

Clip names come from :func:`secrets.token_hex`, never from the seed, so
nothing served can be used to rebuild the key. Each clip slot of each trial
gets its own file; all are float32 WAVs of one length, written by
:func:`render.io.wav.float_wav_bytes` (no PEAK chunk, no timestamp, no
tags), so files differ only in their audio. Each file carries its own
dither below the 24-bit step (:mod:`render.listening.dither`, drawn from the
seed), so no two files are byte-identical, not even two of one design, and
comparing whole files (hashes, sizes) does not tell which clip X repeats; a
count of differing bytes still does (the dither moves only each sample's low
bytes), as does decoding and subtracting (README, "What a listener could
still use to cheat"). All get the same modification time.

The folder is built under a temporary name beside ``out`` and renamed into
place at the end, so an interrupted run leaves no half-made session.
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import json
import os
import secrets
import shutil
from pathlib import Path

import numpy as np

from ..errors import ArgumentError, InputError
from ..io.atomic import fsync_folder
from ..io.hashing import sha256_bytes
from .dither import RECIPE as DITHER_RECIPE
from .dither import STEP_24_BIT, tpdf_dither
from .layout import KEY_FORMAT, METHODS, PLAN_FORMAT, SLOTS, VERSION, SessionPaths

MAX_TRIALS = 500


def check_session_folder(out: str | Path, *, overwrite: bool) -> None:
    """Refuse up front (before any work) an ``--out`` that cannot take a new session."""
    out = Path(out)
    if out.exists():
        if not overwrite:
            raise ArgumentError(
                "out", f"{out}", "exists; pass --overwrite to replace that session or choose another folder", python_why="exists; pass overwrite=True to replace that session or choose another folder"
            )
        if not out.is_dir():
            raise ArgumentError("out", f"{out}", "exists and is not a folder; choose another folder")
        if any(out.iterdir()) and not (SessionPaths(out).key.is_file() and SessionPaths(out).plan.is_file()):
            raise ArgumentError(
                "out",
                f"{out}",
                "a folder that is neither empty nor a listening session; --overwrite replaces only a session, choose another folder",
                python_why="a folder that is neither empty nor a listening session; overwrite=True replaces only a session, choose another folder",
            )
    parent = out.parent if str(out.parent) else Path(".")
    # missing parents are made, as for every run folder (render clips, bias, fit): the nearest existing one must take them
    existing = next((p for p in (parent, *parent.parents) if p.exists()), Path("."))
    if not existing.is_dir():
        raise ArgumentError("out", f"{out}", f"{existing} is a file, not a folder; choose another folder")
    if not os.access(existing, os.W_OK):
        raise ArgumentError("out", f"{out}", f"cannot write in {existing}; choose another folder")


def draw_trials(method: str, trials: int, seed: int) -> list[dict]:
    """Per trial: ``a`` (design playing as A: 0 or 1) and ``x`` (ABX: "A" or "B"; else None)."""
    if method not in METHODS:
        raise ArgumentError("method", f"{method}", f"expected one of {', '.join(METHODS)}")
    if not 1 <= trials <= MAX_TRIALS:
        raise ArgumentError("trials", f"{trials}", f"must be from 1 to {MAX_TRIALS}; 16 is usual")
    rng = np.random.default_rng(seed)
    a = rng.integers(0, 2, size=trials)
    x = rng.integers(0, 2, size=trials) if method == "abx" else None
    return [{"index": i, "a": int(a[i]), "x": None if x is None else ("A", "B")[int(x[i])]} for i in range(trials)]


def slot_design(trial: dict, slot: str) -> int:
    """Which design (0 or 1) plays in ``slot`` ("A", "B" or "X") of ``trial``."""
    a = trial["a"]
    if slot == "A":
        return a
    if slot == "B":
        return 1 - a
    return a if trial["x"] == "A" else 1 - a


def _write_new_file(path: Path, data: bytes) -> None:
    with open(path, "xb") as fh:
        fh.write(data)
        fh.flush()
        os.fsync(fh.fileno())


def _json_bytes(obj) -> bytes:
    return (json.dumps(obj, indent=2, allow_nan=False) + "\n").encode("utf-8")


def build_session(
    out: str | Path,
    signals,
    *,
    sample_rate: int,
    method: str,
    trials: int,
    seed: int,
    designs: list[dict],
    record: dict,
    overwrite: bool = False,
) -> SessionPaths:
    """Write a session at ``out`` from two loudness-matched signals.

    Parameters
    ----------
    signals : two np.ndarray of shape (n,), full scale ±1, already matched
    designs : two JSON-ready dicts describing MODEL_A and MODEL_B (name, path, sha256, toml, ...)
    record : anything else the key should keep (rig, dry signal, loudness, render options)

    Returns
    -------
    SessionPaths of the finished session.
    """
    from ..io.wav import float_wav_bytes

    out = Path(out)
    check_session_folder(out, overwrite=overwrite)
    if len(signals) != 2 or len(designs) != 2:
        raise InputError("a session compares exactly two designs")
    n = min(np.asarray(s).shape[-1] for s in signals)
    matched = [np.asarray(s, float)[:n] for s in signals]
    renders = [float_wav_bytes(x, sample_rate) for x in matched]  # before dither: kept in the key as hashes only
    if len(renders[0]) != len(renders[1]):  # same n, same format: cannot happen, but the promise is checked
        raise InputError("the two clips differ in byte size; this is a bug, please report it")
    draws = draw_trials(method, trials, seed)
    session_id = secrets.token_hex(16)
    names: set[str] = set()

    def new_clip_name() -> str:
        while True:
            name = secrets.token_hex(16) + ".wav"
            if name not in names:
                names.add(name)
                return name

    for t in draws:
        t["clips"] = {slot: new_clip_name() for slot in SLOTS[method]}
    created = _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0)
    plan = {
        "format": PLAN_FORMAT,
        "version": VERSION,
        "session": session_id,
        "method": method,
        "sample_rate": int(sample_rate),
        "seconds": n / sample_rate,
        "trials": [{"index": t["index"], "clips": t["clips"]} for t in draws],
    }
    key = {
        "format": KEY_FORMAT,
        "version": VERSION,
        "session": session_id,
        "created_utc": created.isoformat(),
        "method": method,
        "seed": int(seed),
        "draws": "numpy.random.default_rng(seed): integers(0, 2, trials) for a, then (abx) integers(0, 2, trials) for x",
        "designs": designs,
        "render_sha256": [sha256_bytes(w) for w in renders],
        "dither": {"kind": "TPDF", "peak": STEP_24_BIT, "full_scale": 1.0, "draws": DITHER_RECIPE},
        "clip_sha256": {},  # filled as the clips are written: name -> SHA-256 of that file
        "clip_bytes": len(renders[0]),
        "sample_rate": int(sample_rate),
        "frames": int(n),
        **record,
        "trials": draws,
    }
    parent = out.parent if str(out.parent) else Path(".")
    tmp = parent / f".tmp-{out.name}-{secrets.token_hex(4)}"
    old = None
    made = [a for a in (parent, *parent.parents) if not a.exists()][::-1]  # the parents this build creates, outermost first
    try:
        parent.mkdir(parents=True, exist_ok=True)
        tmp.mkdir()
        paths = SessionPaths(tmp)
        paths.public.mkdir()
        paths.private.mkdir(mode=0o700)
        stamp = created.timestamp()
        where = {c: (t, s) for t in draws for s, c in t["clips"].items()}
        clip_sha256 = key["clip_sha256"]
        for name in sorted(names):  # sorted random names: an order unrelated to the designs
            t, s = where[name]
            data = float_wav_bytes(matched[slot_design(t, s)] + tpdf_dither(n, seed=seed, trial=t["index"], slot=s), sample_rate)
            clip_sha256[name] = sha256_bytes(data)
            _write_new_file(paths.public / name, data)
        if len(set(clip_sha256.values())) != len(clip_sha256):  # the dither vanished in float32 rounding
            raise InputError(
                "two clip files came out byte-identical: the renders must stay within full scale ±1 for the dither to show; lower the true-peak ceiling (--true-peak-dbtp, or BlindSettings.true_peak_dbtp)"
            )
        _write_new_file(paths.plan, _json_bytes(plan))
        _write_new_file(paths.key, _json_bytes(key))
        for p in list(paths.public.iterdir()):
            os.utime(p, (stamp, stamp))
        for d in (paths.public, paths.private, tmp):
            fsync_folder(d)
        if out.exists():
            old = parent / f".old-{out.name}-{secrets.token_hex(4)}"
            os.rename(out, old)
        os.rename(tmp, out)
        fsync_folder(parent)
    except OSError as exc:
        if old is not None and not out.exists():
            os.rename(old, out)
            old = None
        raise ArgumentError("out", f"{out}", f"could not write the session ({exc.strerror or exc}); check free space and permissions") from None
    finally:
        with contextlib.suppress(FileNotFoundError):
            shutil.rmtree(tmp)
        if old is not None:
            shutil.rmtree(old, ignore_errors=True)
        if not out.exists():  # a build that failed leaves no empty folders it made
            for folder in reversed(made):
                with contextlib.suppress(OSError):
                    folder.rmdir()
    return SessionPaths(out)
