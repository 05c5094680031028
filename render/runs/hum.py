"""``render hum`` as a run: each design's hum on one scale with its noise, the tolerance and random-source Monte Carlos, the map,
and (``--out``) hum-only WAVs of a design and of each coil alone, with the rejection measured from them."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from ..analysis.comparison import Comparison
    from ..analysis.hum import HumReport, HumTolerances
    from ..analysis.one_scale import OneScale
    from ..design import Design
    from ..magnetics.rejection import PositionMonteCarlo, RejectionMap


@dataclass(frozen=True)
class HumAudio:
    """What :func:`write_hum_audio` wrote and measured.

    Attributes
    ----------
    seconds : float, s
    volts_full_scale : float, V
    files : dict
        "both", "coil_a", "coil_b" to the WAV's path.
    harmonics : tuple of dict
        Per harmonic: frequency_hz, rejection_db (measured from the render; None with
        ``rejection_db_reason`` where infinite or undefined), output_v (peak).
    """

    seconds: float
    volts_full_scale: float
    files: dict
    harmonics: tuple[dict, ...]

    def as_dict(self) -> dict:
        return {"seconds": self.seconds, "volts_full_scale": self.volts_full_scale, "files": dict(self.files), "harmonics": list(self.harmonics)}


def _measured_row(frequency_hz, rejection_db, output_v, absent: str | None = None) -> dict:
    """One measured harmonic; an infinite or undefined rejection is None with its reason.

    absent : why the room has no hum at this harmonic (:func:`render.analysis.hum_harmonics.absent_harmonics`):
        then what the WAV holds there is rounding, and its ratio no figure.
    """
    from ..analysis import undefined as U
    from ..analysis.undefined import REJECTION_CAP_DB

    row = {"frequency_hz": float(frequency_hz)}
    if absent is not None:
        U.mark(row, "rejection_db", absent)
    elif np.isnan(rejection_db):  # 0/0: neither coil hums at this harmonic
        U.mark(row, "rejection_db", U.NO_FIELD)
    elif rejection_db >= REJECTION_CAP_DB:  # the pair's sum is rounding noise
        U.mark(row, "rejection_db", U.HUM_CANCELS)
    else:
        U.put(row, "rejection_db", rejection_db, U.HUM_CANCELS)
    row["output_v"] = float(output_v)
    return row


def write_hum_audio(out, design, *, seconds: float = 4.0, sample_rate: int = 48000) -> HumAudio:
    """Hum-only WAVs (``S-hum.wav``, ``S-hum-coil_a.wav``, ``S-hum-coil_b.wav``) at one full scale, measured after the first second."""
    from ..analysis.hum import measured_rejection
    from ..io.wav import write_float_wav
    from .clips import choose_full_scale

    m = measured_rejection(design, seconds=seconds, settle=1.0, sample_rate=sample_rate)
    vfs = choose_full_scale([np.abs(m[k]).max() for k in ("both", "coil_a", "coil_b")], floor=1e-6)
    stem = design.stem
    files = {}
    for k, suffix in (("both", "hum"), ("coil_a", "hum-coil_a"), ("coil_b", "hum-coil_b")):
        path = Path(out) / f"{stem}-{suffix}.wav"
        write_float_wav(path, m[k] / vfs, sample_rate, overwrite=True)
        files[k] = str(path)
    from ..analysis.hum import absent_harmonics

    rows = tuple(_measured_row(f, r, v, a) for f, r, v, a in zip(m["frequency_hz"], m["rejection_db"], m["output_v"], absent_harmonics(design)))
    return HumAudio(seconds=seconds, volts_full_scale=vfs, files=files, harmonics=rows)


def write_histogram(path, mc, *, name: str, overwrite: bool = False) -> None:
    """``render hum --histogram``: the Monte Carlo's rejection at the harmonic its sensitivities refer to.

    mc : :class:`render.HumTolerances`; that harmonic is the fundamental unless the room has no
    hum there (``mc.sensitivity_at``). A room with hum at no harmonic has no rejection to plot: refused.
    """
    from ..errors import InputError
    from ..report.plots import histogram_plot

    if mc.sensitivity_at is None:
        raise InputError(f"--histogram: {name} has no hum at any harmonic in this room, so there is no rejection to plot; give a field or a source that links a coil")
    h = mc.sensitivity_at
    histogram_plot(path, mc.rejection_db[:, h], xlabel=f"hum rejection at {mc.frequency_hz[h]:g} Hz (dB)", title=f"{name}: {mc.trials} trials", overwrite=overwrite)


@dataclass(frozen=True)
class HumDesignRun:
    """One design's part of :func:`hum_run`.

    Attributes
    ----------
    design : Design
        The design as measured (its rig applied).
    report : HumReport
        Its hum per mains harmonic (:func:`render.hum`).
    scales : tuple of OneScale
        Hum and noise on one scale, V rms at the amp input (:mod:`render.analysis.one_scale`): the design's, its
        passive reference's, and the comparison pickup's when there is one; their ``signal_to_hum_db`` are the
        signal-to-hum figures ``render hum`` prints.
    audio : HumAudio or None
        The hum-only WAVs and the rejection measured from them (with a folder).
    tolerances : HumTolerances or None
        The Monte Carlo over part tolerances (with ``tolerances``).
    rejection_map : RejectionMap or None
        The rejection against a dipole source's place (with ``rejection_map``).
    positions : PositionMonteCarlo or None
        The rejection over random dipole sources (with ``positions``).
    record : dict
        The design's JSON record: the report's figures, ``hum_and_noise``, and where they were asked for the
        measured rejection (``measured``), the tolerance Monte Carlo, the map (``map``) and the random
        sources (``positions``, or ``joint`` when drawn with the tolerances).
    """

    design: Design
    report: HumReport
    scales: tuple[OneScale, ...]
    audio: HumAudio | None
    tolerances: HumTolerances | None
    rejection_map: RejectionMap | None
    positions: PositionMonteCarlo | None
    record: dict


@dataclass(frozen=True)
class HumRun:
    """What :func:`hum_run` measured and wrote.

    Attributes
    ----------
    designs : tuple of HumDesignRun
        Each design's figures and record, in the designs' order.
    compare : Comparison or None
        The passive comparison pickup's figures, when one was given.
    record : dict
        What ``render hum --json`` writes: the one design's record, or ``{"designs": [...]}`` for several,
        with ``compare`` beside them when there is a comparison pickup.
    folder : Path or None
        Where the hum-only WAVs went.
    """

    designs: tuple[HumDesignRun, ...]
    compare: Comparison | None
    record: dict
    folder: Path | None


def _refuse_alone(argument: str, value, needs: str, python: str) -> None:
    from ..errors import ArgumentError

    raise ArgumentError(argument, f"{value}", f"needs {needs}", python_why=f"needs {python}")


def hum_run(
    designs,
    *,
    rig=None,
    out=None,
    tolerances=None,
    trials: int = 2000,
    seed: int = 0,
    jobs: int = 1,
    rejection_map: bool = False,
    plane: str = "xy",
    bearings_deg=None,
    positions: int | None = None,
    shell=None,
    joint: bool = False,
    compare=None,
    png=None,
    histogram=None,
    map_png=None,
    overwrite: bool = False,
) -> HumRun:
    """The whole of ``render hum``: each design's hum per harmonic, on one scale with its noise, and what else is asked for.

    Parameters
    ----------
    designs : sequence of Design
    rig : RigFile or None
        Play every design into this rig (its ``[hum]`` and controls) instead of its own.
    out : str or Path or None
        Also render hum-only WAVs into this folder (``S-hum.wav``, ``S-hum-coil_a.wav``, ``S-hum-coil_b.wav``)
        and measure the rejection from them; refused before any work if it holds files, unless ``overwrite``.
    tolerances : dict or None
        Part class ("resistor", "capacitor", "turns") to its tolerance as a fraction (0.01 for 1 %):
        a Monte Carlo over them (:func:`render.hum_tolerances`); None or empty: none.
    trials : int, ≥ 10
        The tolerance Monte Carlo's draws.
    seed : int
        Seed of both Monte Carlos' draws.
    jobs : int
        Monte Carlo in this many processes (results identical to one).
    rejection_map : bool
        The rejection against a dipole source's distance and bearing (:func:`render.hum_map`); implied by
        ``bearings_deg`` and ``map_png``.
    plane : str, "xy" or "xz"
        The map's plane.
    bearings_deg : sequence of float, degrees, or None
        The map's bearings (default: :func:`render.hum_map`'s).
    positions : int or None
        The rejection over this many random dipole sources (:func:`render.hum_positions`).
    shell : (float, float), m, or None
        The random sources' shell, inner and outer radius (default: :func:`render.hum_positions`'s).
    joint : bool
        Draw the part tolerances (``tolerances``, else their defaults) with each random source.
    compare : PassiveDesign or None
        A passive comparison pickup (``--compare``), played into ``rig``'s cable and amplifier when there is one.
    png : str or Path or None
        Plot every design's rejection against frequency here.
    histogram : str or Path or None
        Plot the first design's tolerance Monte Carlo here (needs ``tolerances``).
    map_png : str or Path or None
        Plot the first design's map at the fundamental here.
    overwrite : bool
        Replace files that exist (else refused before any work).

    Returns
    -------
    HumRun
    """
    import contextlib

    from .. import arguments as A
    from ..analysis import hum_room as hr
    from ..analysis.comparison import comparison
    from ..analysis.hum import hum, hum_tolerances
    from ..analysis.one_scale import design_one_scale
    from ..design import apply_rig, design_provenance
    from ..io.folders import output_folder, refuse_existing, run_folder

    rejection_map, joint, overwrite = (A.flag(n, v) for n, v in (("rejection_map", rejection_map), ("joint", joint), ("overwrite", overwrite)))
    if positions is not None:
        positions = A.whole("positions", positions, lo=10)
    for name, path in (("png", png), ("histogram", histogram), ("map_png", map_png)):
        refuse_existing([path], overwrite=overwrite, argument=name)
    tol = dict(tolerances or {})
    if histogram and not tol:
        _refuse_alone("histogram", histogram, "a Monte Carlo: add --tolerance (e.g. --tolerance 1%)", "a Monte Carlo: give tolerances (e.g. {'resistor': 0.01})")
    if (shell or joint) and not positions:
        _refuse_alone("shell" if shell else "joint", shell or joint, "random sources: add --positions N (e.g. --positions 2000)", "random sources: give positions (e.g. positions=2000)")
    map_on = bool(rejection_map or map_png or bearings_deg is not None)
    played = [apply_rig(d, rig) for d in designs]
    for d in played:  # a map's or a shell's dipole within 10 cm of a coil: refused before any work
        hr.check_room(d, map_on=map_on, plane=plane, bearings_deg=bearings_deg, positions=bool(positions), shell=shell)
    compared = None if compare is None else comparison(compare.with_rig(rig))
    folder = output_folder(out, overwrite=overwrite) if out else None
    runs = []
    with run_folder(folder) if folder is not None else contextlib.nullcontext(None) as into:
        for i, d in enumerate(played):
            r = hum(d)
            rec = {"file": d.source, "design": d.name, **design_provenance(d), **r.as_dict()}
            lines = list(rec.get("warnings", []))
            if map_on or positions:  # dipoles near the pickup: the point-coil approximation's warning
                lines += [w for w in hr.room_warnings(d) if w not in lines]
            if lines:
                rec["warnings"] = lines
            scales = (*design_one_scale(d), *([compared.scale] if compared else []))
            rec["hum_and_noise"] = [s.as_dict() for s in scales]
            audio = mc = m = where = None
            if into is not None:
                audio = write_hum_audio(into, d)
                rec["measured"] = audio.as_dict()
            if tol:
                mc = hum_tolerances(d, tolerances=tol, trials=trials, seed=seed, jobs=jobs)
                rec["monte_carlo"] = mc.as_dict()
                if histogram and i == 0:
                    write_histogram(histogram, mc, name=d.name, overwrite=overwrite)
            if map_on:
                m = hr.hum_map(d, plane=plane, **({"bearings_deg": bearings_deg} if bearings_deg else {}))
                rec["map"] = hr.map_record(m)
                if map_png and i == 0:
                    from ..report.plots import rejection_map_plot

                    rejection_map_plot(map_png, m, title=f"{d.name}: rejection of a dipole source (axis z) at {m.frequency_hz[0]:g} Hz", overwrite=overwrite)
            if positions:
                where = hr.hum_positions(d, trials=positions, seed=seed, joint=joint, tolerances=tol or None, jobs=jobs, **({"shell": shell} if shell else {}))
                rec["joint" if joint else "positions"] = hr.positions_record(where)
            runs.append(HumDesignRun(design=d, report=r, scales=scales, audio=audio, tolerances=mc, rejection_map=m, positions=where, record=rec))
    record = runs[0].record if len(runs) == 1 else {"designs": [x.record for x in runs]}
    if compared is not None:
        record = {**record, "compare": compared.as_dict()}
    if png:
        from ..report.plots import hum_rejection_plot

        hum_rejection_plot(png, played, overwrite=overwrite)
    return HumRun(designs=tuple(runs), compare=compared, record=record, folder=folder)
