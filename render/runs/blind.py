"""``render blind`` as a run: two designs, one dry signal, one rig, written as a blind session.

Both designs play the same dry signal (synthesised at each design's own
sensing points, or one recording) into the same rig, each rendered by
:func:`render.clip.render_clip`; the two renders are matched in integrated
loudness (ITU-R BS.1770-4) to ``target_lufs`` under a ``true_peak_dbtp``
ceiling (:mod:`render.listening.loudness`), and the session folder is written
whole or not at all (:func:`render.listening.build.build_session`). The key
keeps each design's and the rig's TOML text with its SHA-256, the dry file's
hash, the loudness figures and the seed of the trial draws.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from ..arguments import as_whole
from ..design import Design, RigFile, apply_rig
from ..dry import MIN_BLIND_SECONDS
from ..errors import ArgumentError, InputError
from ..listening.layout import METHODS, SessionPaths
from ..listening.loudness import LoudnessMatch

MAX_SECONDS = 120.0  # per clip: longer clips make ABX slow and sessions large (common practice, no source)
MIN_SECONDS = MIN_BLIND_SECONDS  # per clip: holds at least one 400 ms gating block of ITU-R BS.1770-4, so its loudness can be measured
DRY_SEED = 0  # the phrase's small per-note variations: the same for both designs
TARGET_LUFS_RANGE = (-60.0, -5.0)  # LUFS accepted; EBU R 128's -23 is the default
TRUE_PEAK_RANGE = (-30.0, 0.0)  # dBTP accepted; -1 (EBU R 128) is the default
SEED_LIMIT = 2**63  # seeds are drawn from, and accepted in, 0 .. 2**63 - 1
RENDER_FUNCTION = "render.clip.render_clip"  # recorded in the key


@dataclass(frozen=True)
class BlindSettings:
    """Everything a blind session depends on besides the designs, the rig and the dry file.

    Checked when made: a bad value raises :class:`~render.errors.ArgumentError`
    (one line naming the field, such as ``trials=0``; the command line names its option instead).

    Attributes
    ----------
    trials : int
        1 to :data:`render.listening.build.MAX_TRIALS`.
    method : str
        "abx" (is X the same as A or B) or "preference" (A, B or no preference).
    seed : int or None
        Seed of the trial draws, 0 to 2**63 - 1; None draws a fresh one when the session is built.
    target_lufs : float, LUFS
        Integrated loudness both clips are matched to, -60 to -5.
    true_peak_dbtp : float, dBTP
        True-peak ceiling, -30 to 0; both clips are lowered together if either would pass it, held
        :data:`render.analysis.loudness.TRUE_PEAK_MARGIN_DB` under it as the 4x meter reads them.
    seconds : float or None, s
        Clip length, 0.5 to 120 s (a number, or text such as "8s"); None plays the dry signal's own.
    sample_rate : int, Hz
        8000 to 384000 (:func:`render.validate.sample_rate`).
    hum : bool
        Render the room's hum with the signal.
    velocity_scale : float, m/s
        The string velocity at a recorded dry file's full scale (a sample of 1.0), above 0 to 1000; 1 for a phrase.
    strength : float or None, m
        Pluck a phrase harder or softer: every pluck scaled alike so that its strongest is this initial
        displacement (above 0 to 50 mm, as ``render clips --strength``); None plays the phrase as written.
        A recording is refused with it.
    """

    trials: int = 16
    method: str = "abx"
    seed: int | None = None
    target_lufs: float = -23.0
    true_peak_dbtp: float = -1.0
    seconds: float | str | None = None
    sample_rate: int = 48000
    hum: bool = True
    velocity_scale: float = 1.0
    strength: float | None = None

    def __post_init__(self) -> None:
        from ..arguments import number
        from ..dry.strength import pluck_in_range
        from ..listening.build import MAX_TRIALS
        from ..units import TIME, QuantityError, parse_quantity
        from ..validate import sample_rate

        trials = as_whole(self.trials)
        if trials is None or not 1 <= trials <= MAX_TRIALS:
            raise ArgumentError("trials", f"{self.trials}", f"must be from 1 to {MAX_TRIALS}; 16 is usual")
        if self.method not in METHODS:
            raise ArgumentError("method", f"{self.method}", f"expected one of {', '.join(METHODS)}")
        lo, hi = TARGET_LUFS_RANGE
        if not (_finite(self.target_lufs) and lo <= self.target_lufs <= hi):
            raise ArgumentError("target_lufs", f"{_shown(self.target_lufs)}", f"must be from {lo:g} to {hi:g} LUFS; -23 is EBU R 128")
        lo, hi = TRUE_PEAK_RANGE
        if not (_finite(self.true_peak_dbtp) and lo <= self.true_peak_dbtp <= hi):
            raise ArgumentError("true_peak_dbtp", f"{_shown(self.true_peak_dbtp)}", f"must be from {lo:g} to {hi:g} dBTP; -1 is usual")
        rate = sample_rate(self.sample_rate)
        scale = number("velocity_scale", self.velocity_scale, lo=0.0, lo_open=True, hi=1e3, unit="m/s", hint=" (the string velocity at a recording's full scale)")
        seed = as_whole(self.seed) if self.seed is not None else None
        if self.seed is not None and (seed is None or not 0 <= seed < SEED_LIMIT):
            raise ArgumentError("seed", f"{self.seed}", "must be from 0 to 2**63-1")
        length = None
        if self.seconds is not None:
            try:
                length = parse_quantity(self.seconds, TIME)
            except QuantityError as exc:
                raise ArgumentError("seconds", f"{self.seconds}", f"{exc}") from None
            if not MIN_SECONDS <= length <= MAX_SECONDS:
                raise ArgumentError("seconds", f"{self.seconds}", f"must be from {MIN_SECONDS:g} s to {MAX_SECONDS:g} s")
        strength = None if self.strength is None else pluck_in_range(self.strength)  # in metres, shown in mm as render clips shows it
        # the checked values, as plain Python numbers
        for name, value in (
            ("trials", trials),
            ("seed", seed),
            ("seconds", length),
            ("sample_rate", rate),
            ("target_lufs", float(self.target_lufs)),
            ("true_peak_dbtp", float(self.true_peak_dbtp)),
            ("hum", bool(self.hum)),
            ("velocity_scale", scale),
            ("strength", strength),
        ):
            object.__setattr__(self, name, value)


def _finite(value: object) -> bool:
    import numbers

    return isinstance(value, numbers.Real) and not isinstance(value, bool) and math.isfinite(value)  # numpy's scalars are Real too


def _shown(value: object) -> str:
    import numbers

    return f"{value:g}" if isinstance(value, numbers.Real) and not isinstance(value, bool) else repr(value)


@dataclass(frozen=True)
class BlindSession:
    """What :func:`build_blind_session` wrote and measured.

    Attributes
    ----------
    paths : SessionPaths
        The finished session (``paths.root`` is the folder).
    names : (str, str)
        MODEL_A's and MODEL_B's names as the key and the score show them.
    method : str
    trials : int
    seed : int
        The seed of the trial draws (the one given, or the fresh one drawn).
    sample_rate : int, Hz
    seconds : float, s
        Length of every clip.
    loudness : LoudnessMatch
        Measured loudness and true peak before matching, the gains, how far
        both were lowered under the ceiling, and the figures after matching.
    clipped_fraction : (float, float), 0..1
        Share of each render's oversampled limiter input outside the identity region.
    warnings : tuple of str
        One line each: the dry signal's, then each design's prefixed with its name.
    headroom : tuple of PlayedHeadroom
        Each render's headroom (:class:`render.analysis.headroom.PlayedHeadroom`: the margin to the
        soft limit each side in dB, the share of the render limited), MODEL_A's then MODEL_B's.
    """

    paths: SessionPaths
    names: tuple[str, str]
    method: str
    trials: int
    seed: int
    sample_rate: int
    seconds: float
    loudness: LoudnessMatch
    clipped_fraction: tuple[float, float]
    warnings: tuple[str, ...] = ()
    headroom: tuple = ()


def session_folder(out: str | Path | None, *, overwrite: bool) -> Path:
    """The folder a session is written to, refused before any work if it cannot take one.

    Default: a new ``outputs/blind-<date>-<time>`` (``outputs/`` is created by the build, not here,
    so a refusal before the build leaves no empty folder). An existing folder is replaced only with ``overwrite`` and only if it
    is empty or a session (:func:`render.listening.build.check_session_folder`).
    """
    from ..io.folders import OUTPUTS, new_run_folder
    from ..listening.build import check_session_folder

    if out is None:
        out = new_run_folder(OUTPUTS, "blind")
    out = Path(out)
    check_session_folder(out, overwrite=overwrite)
    return out


def session_dry_file(dry_path: str | Path | None, *, velocity_scale: float = 1.0, strength: float | None = None) -> Path:
    """The dry file a session plays (default: the demo phrase), refused if it does not exist, if a recording
    is too short to level, if a phrase is given a ``velocity_scale`` (it scales a recording) or a recording a
    pluck ``strength`` (m; it scales a phrase's plucks)."""
    from ..dry import default_dry_path, refuse_strength_with_recording, refuse_velocity_scale_with_phrase

    dry_file = Path(dry_path) if dry_path else default_dry_path()
    if not dry_file.is_file():
        raise ArgumentError("dry_path", f"{dry_file}", "no such file; pass a phrase (.toml) or a recording", option="--dry")
    refuse_velocity_scale_with_phrase(dry_file, velocity_scale, settings="BlindSettings")
    if strength is not None:
        refuse_strength_with_recording(dry_file, f"{strength * 1e3:g}mm")
    if dry_file.suffix.lower() != ".toml":
        from ..dry import check_recording

        check_recording(dry_file, blind=True)
    return dry_file


def file_record(path: str | Path, *, expected_sha256: str = "", text: bool = False) -> dict:
    """``{"path", "sha256"}`` of a file as read now, plus its ``"toml"`` text when ``text``.

    expected_sha256 : the hash recorded when the file was loaded; a file that changed since is refused.
    """
    from ..io.hashing import sha256_bytes

    try:
        raw = Path(path).read_bytes()
    except OSError as exc:
        raise InputError(f"{path}: cannot read it again to keep it in the session ({exc.strerror or exc}); a session keeps each design's and rig's file: load them from files") from None
    sha = sha256_bytes(raw)
    if expected_sha256 and sha != expected_sha256:
        raise InputError(f"{path}: changed since it was read; run again")
    record = {"path": str(path), "sha256": sha}
    if text:
        record["toml"] = raw.decode("utf-8")
    return record


def session_names(designs: Sequence[Design]) -> tuple[str, str]:
    """The two designs' names; when they share one, marked ``(MODEL_A)`` and ``(MODEL_B)``."""
    a, b = designs[0].name, designs[1].name
    return (f"{a} (MODEL_A)", f"{b} (MODEL_B)") if a == b else (a, b)


def build_blind_session(
    designs: Sequence[Design],
    dry_path: str | Path | None,
    *,
    out: str | Path | None = None,
    rig: RigFile | None = None,
    settings: BlindSettings | None = None,
    from_di: dict | None = None,
    overwrite: bool = False,
) -> BlindSession:
    """Render two designs playing one dry signal and write a blind session of them at ``out``.

    Parameters
    ----------
    designs : two Design
        MODEL_A and MODEL_B, loaded from their files (:func:`render.design.load_designs`);
        the key keeps each file's text and hash.
    dry_path : str, Path or None
        A phrase (.toml) or a recording (default: the demo phrase).
    out : str, Path or None
        The session folder (default: a new ``outputs/blind-<date>-<time>``).
    rig : RigFile or None
        Play both designs into this rig instead of their own (kept in the key).
    settings : BlindSettings or None
        Trials, method, seed, loudness target and ceiling, length, sample rate, hum (default: the defaults).
    from_di : dict or None
        The record of the un-voicing that made ``dry_path`` from a DI
        (:attr:`render.runs.unvoice.FromDi.record`), kept in the key.
    overwrite : bool
        Replace an existing session at ``out``.

    Returns
    -------
    BlindSession
    """
    import secrets
    from dataclasses import replace

    from ..analysis.headroom import from_record
    from ..arguments import instance
    from ..clip import render_clip
    from ..design.construction import pickup_for
    from ..design.provenance import design_provenance
    from ..dry import load_dry
    from ..listening.build import build_session
    from ..listening.loudness import match_loudness
    from .bias import check_strength

    settings = instance("settings", settings, BlindSettings, "a render.BlindSettings(...) or None for the defaults") if settings is not None else BlindSettings()
    designs = [apply_rig(d, rig) for d in designs]  # as the designs were loaded with it (applying a rig twice changes nothing)
    if len(designs) != 2:
        raise InputError(f"{len(designs)} designs: a blind session compares exactly two (MODEL_A and MODEL_B)")
    dry_file = session_dry_file(dry_path, velocity_scale=settings.velocity_scale)
    strength_notes = check_strength(settings.strength, dry_file)  # a recording refused before the folder is made
    folder = session_folder(out, overwrite=overwrite)
    # the file as read now (unchanged since loading), and the text that was rendered: a changed design's (render.with_values)
    design_records = [{**file_record(d.source, expected_sha256=d.sha256, text=not d.text), **({"toml": d.text} if d.text else {})} for d in designs]
    rig_record = file_record(rig.source, expected_sha256=rig.sha256, text=True) if rig else None
    names = session_names(designs)
    fs = settings.sample_rate
    length = float(settings.seconds) if settings.seconds is not None else None  # seconds, as BlindSettings read it
    volts: list = []
    clipped: list[float] = []
    played: list = []
    warnings: list[str] = list(strength_notes)
    dry_description = None
    for design, name in zip(designs, names):
        dry = load_dry(
            dry_file,
            sample_rate=fs,
            positions=(design.coil_a.position, design.coil_b.position),
            apertures=(design.coil_a.aperture, design.coil_b.aperture),
            seed=DRY_SEED,
            seconds=length,
            velocity_scale=settings.velocity_scale,
            pickup=pickup_for(design),
            strength=settings.strength,
        )
        if dry_description is None:
            warnings.extend(dry.warnings)
            dry_description = dry.description
        n = dry.velocity.shape[1]
        if n > MAX_SECONDS * fs:
            raise ArgumentError(
                "dry_path",
                f"{dry_file}",
                f"plays {n / fs:.1f} s; a session clip is at most {MAX_SECONDS:g} s, pass --seconds",
                option="--dry",
                python_why=f"plays {n / fs:.1f} s; a session clip is at most {MAX_SECONDS:g} s, pass settings=BlindSettings(seconds=...)",
            )
        # the bare velocity: the clip's warnings are then the render's own (the dry signal's are kept once, above)
        clip = render_clip(design, dry.velocity, sample_rate=fs, hum=settings.hum)
        warnings.extend(f"{name}: {w}" for w in clip.warnings)
        volts.append(clip.volts)
        clipped.append(float(clip.clipped_fraction))
        h = from_record(clip.stats)
        if h is not None:
            # the bare velocity loses the Dry's record; a [construction]'s sensing is still not linear in the pluck
            played.append(replace(h, strongest_pluck_m=dry.description.get("strongest_pluck_m"), nonlinear=design.construction is not None))
    signals, match = match_loudness(volts, sample_rate=fs, target_lufs=settings.target_lufs, ceiling_dbtp=settings.true_peak_dbtp, names=names)
    seed = settings.seed if settings.seed is not None else secrets.randbits(63)
    record = {
        "rig": rig_record,
        "dry": {
            **file_record(dry_file),
            "seed": DRY_SEED,
            "seconds": length,
            "velocity_scale": settings.velocity_scale,
            "strength_m": settings.strength,
            "description": dry_description,
            "from_di": from_di,
        },
        "render": {
            "function": RENDER_FUNCTION,
            "hum": settings.hum,
            "clipped_fraction": clipped,
            "headroom": [h.record() for h in played],
            "wav_scale": "1.0 full scale = 1 V at the amp input, times the loudness gain",
        },
        "loudness": match.record(),
    }
    paths = build_session(
        folder,
        signals,
        sample_rate=fs,
        method=settings.method,
        trials=settings.trials,
        seed=seed,
        designs=[{"name": name, **rec, **design_provenance(d)} for name, rec, d in zip(names, design_records, designs)],
        record=record,
        overwrite=overwrite,
    )
    return BlindSession(
        paths=paths,
        names=names,
        method=settings.method,
        trials=settings.trials,
        seed=int(seed),
        sample_rate=fs,
        seconds=min(s.shape[-1] for s in signals) / fs,
        loudness=match,
        clipped_fraction=(clipped[0], clipped[1]),
        warnings=tuple(warnings),
        headroom=tuple(played),
    )
