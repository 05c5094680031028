"""``render watch`` as a run: render the designs, then render again whatever a saved file changes.

:class:`WatchRun` holds the designs' latest good renders (and the one before
each, for A/B) and publishes them to a :class:`render.compare.server.Board`,
which the live comparison page follows. :func:`follow_changes` watches the
design, rig and phrase files with watchfiles (inotify on Linux, its own
polling elsewhere) and calls :meth:`WatchRun.refresh` with each burst of
changes:

- a design file changed: that design is rendered again;
- the rig or the dry signal changed: every design is;
- a file that does not load (or a render that fails) gives one line, on the
  page and in the terminal, and the last good clip stays.

Everything runs in this process and thread: the render of one design of an
8 s phrase takes a few tenths of a second, far less than starting a worker.
The phrase's notes are kept (:class:`render.dry.cached.NoteCache`), so an
edit of one note synthesises that note again, not the phrase; the limiter's
resampler, which depends only on the sample rate, is made once.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ..analysis.loudness import ceiling_record
from ..clip import RenderSettings
from ..errors import ArgumentError, InputError

if TYPE_CHECKING:
    from ..chain.stream import Resampler

WATCH_STEP_MS = 30  # a burst of file events is handed over once quiet this long (ms)
WATCH_DEBOUNCE_MS = 500  # ... or after this long at most (ms)
WATCH_QUIET_MS = 250  # with no event this long the watcher hands over an empty burst (ms): the first is when a save made before it was armed is looked for


@dataclass(frozen=True)
class Refresh:
    """What one round of re-rendering did.

    Attributes
    ----------
    rendered : tuple of str
        The designs rendered again (their names).
    problems : tuple of str
        One line per file that did not load or render; its last good clip stays.
    seconds : float, s
        Time from the call to the new state being published.
    lines : tuple of str
        What to print, one line each.
    """

    rendered: tuple[str, ...] = ()
    problems: tuple[str, ...] = ()
    seconds: float = 0.0
    lines: tuple[str, ...] = ()


@dataclass
class _Version:
    entry: dict  # the page entry (compare.page.finish_entry) of this render
    wav: bytes  # the page's copy
    number: int
    design: Any  # the Design rendered (rig applied)
    measurements: dict  # its record's measurements (report.records.measurements), without the brightness figures
    rendered_s: float


@dataclass
class _Slot:
    path: Path
    design: Any = None  # the last good Design (rig applied)
    now: _Version | None = None
    before: _Version | None = None
    error: str | None = None
    sha256: str = ""
    versions: int = 0
    changes: list = field(default_factory=list)


def _sha(path: Path) -> str:
    from ..io.hashing import sha256_file

    try:
        return sha256_file(path)
    except OSError:
        return ""


def _read_files(design) -> dict[Path, str]:
    """The files ``design`` read besides its own, with the SHA-256 of what it read (none for no design)."""
    from ..design.coil_impedance import read_files

    return read_files(design) if design is not None else {}


class WatchRun:
    """The designs of ``render watch`` and their latest renders (see the module docstring).

    Parameters
    ----------
    models : sequence of path
        Design files, each shown on the page in this order.
    dry : path or None
        A phrase (.toml) or a recorded velocity file (default: the demo phrase).
    rig : path or None
        A rig file applied to every design.
    settings : RenderSettings
    """

    def __init__(self, models: Sequence[str | Path], *, dry: str | Path | None = None, rig: str | Path | None = None, settings: RenderSettings | None = None):
        from ..compare.server import Board
        from ..dry import check_dry_file
        from ..dry.cached import NoteCache

        if not models:
            raise InputError("render watch needs at least one design file: render watch models/NAME.toml")
        self.slots = [_Slot(Path(m)) for m in models]
        for s in self.slots:
            if not s.path.is_file():
                raise InputError(f"{s.path}: no such design file")
        stems = [s.path.stem for s in self.slots]
        paths = [s.path.resolve() for s in self.slots]
        if len(set(paths)) != len(paths):
            raise InputError(f"{next(p for p in paths if paths.count(p) > 1)}: this design file is given twice; give each design once")
        if len(set(stems)) != len(stems):
            raise InputError("two design files share a name; rename one so the page can tell them apart")
        self.settings = settings or RenderSettings()
        self.dry_path = check_dry_file(dry, seconds=self.settings.seconds)
        self.rig_path = Path(rig) if rig else None
        if self.rig_path is not None and not self.rig_path.is_file():
            raise ArgumentError("rig", f"{self.rig_path}", "no such file")
        self.board = Board()
        self._notes = NoteCache()
        self._recorded: dict[tuple, object] = {}
        self._resampler: Resampler | None = None
        self._rig: Any = None  # the last good RigFile (None: each design's own rig)
        self._phrase: Any = None  # the last good Phrase (None: a recorded dry signal)
        self._input_sha: dict[Path, str] = {}
        self._problems: dict[str, str] = {}
        self.volts_full_scale = 0.0
        self._top_db = 0.0

    # -- what is watched ---------------------------------------------------------

    @property
    def files(self) -> list[Path]:
        """Every file whose saving re-renders something: the designs, the dry signal, the rig, and every file a design reads (a measured coil)."""
        out = [s.path for s in self.slots] + [self.dry_path] + ([self.rig_path] if self.rig_path is not None else [])
        return out + [p for p in self.read_files() if p not in out]

    def read_files(self) -> list[Path]:
        """The files the designs read besides their own (measured coils), each once."""
        return list(dict.fromkeys(p for s in self.slots for p in _read_files(s.design)))

    @property
    def is_phrase(self) -> bool:
        return self.dry_path.suffix.lower() == ".toml"

    # -- loading -------------------------------------------------------------------

    # Each loader records the SHA-256 of the bytes it parsed, not of the file as it is a moment
    # before or after: a save in between then differs from what was rendered, and is rendered.

    def _load_rig(self) -> None:
        from ..design import load_rig

        self._rig = load_rig(self.rig_path) if self.rig_path is not None else None
        if self._rig is not None and self.rig_path is not None:
            self._input_sha[self.rig_path] = self._rig.sha256

    def _load_dry(self) -> None:
        from ..dry.phrase import read_phrase

        if self.is_phrase:
            self._phrase, self._input_sha[self.dry_path] = read_phrase(self.dry_path)
        else:
            self._phrase = None
            self._input_sha[self.dry_path] = _sha(self.dry_path)  # a recording, hashed before it is read
        self._recorded.clear()

    def _load_design(self, slot: _Slot):
        from ..design import apply_rig, load_design

        design = load_design(slot.path)
        self._input_sha[slot.path] = design.sha256
        return apply_rig(design, self._rig)

    def _dry_for(self, design):
        from .dry_input import dry_for

        st = self.settings
        a, b = design.coil_a, design.coil_b
        if self._phrase is not None and design.construction is not None:
            return dry_for(design, self.dry_path, st)  # a constructed pickup senses the phrase its own way (render.dry.construction)
        if self._phrase is not None:
            return self._notes.synthesize(self._phrase, positions=(a.position, b.position), apertures=(a.aperture, b.aperture), sample_rate=st.sample_rate, seed=st.seed, seconds=st.seconds)
        key = (self._input_sha.get(self.dry_path, ""), st)
        if key not in self._recorded:
            self._recorded = {key: dry_for(design, self.dry_path, st)}  # a recording feeds both coils alike: one copy
        return self._recorded[key]

    # -- rendering -----------------------------------------------------------------

    def _render(self, design):
        """(volts, PageClip, measurements) of ``design`` playing the dry signal; its cells are completed by :meth:`state`."""
        from ..analysis.brightness import band_power_rows
        from ..chain.stream import default_oversample, design_resampler
        from ..compare.folders import clips_cells
        from ..compare.page import PageClip, design_numbers, design_values, response_curves
        from ..report.records import measurements
        from .clips import render_design

        st = self.settings
        if self._resampler is None:
            self._resampler = design_resampler(sample_rate=st.sample_rate, oversample=default_oversample(st.sample_rate))
        clip = render_design(design, self.dry_path, st, dry=self._dry_for(design), resampler=self._resampler)
        ((resp, passive),) = response_curves([design])
        vfs = self.volts_full_scale or 1.0
        m = measurements(design, clip.figures, clip.stats, volts_full_scale=vfs)
        page_clip = PageClip(
            key=design.stem,
            name=design.name,
            volts=clip.volts,
            sample_rate=st.sample_rate,
            loudness_lufs_1v_full_scale=clip.stats["loudness_lufs_1v_full_scale"],
            cells=clips_cells(m),
            values=design_values(design),
            numbers=design_numbers(design),
            file=design.source,
            warnings=tuple(clip.warnings),
            response=resp,
            passive=passive,
            band_power_db=band_power_rows([design])[0],  # as render clips gives its page
        )
        return clip.volts, page_clip, m

    def _version(self, slot: _Slot, design, m: dict, assets, seconds: float) -> _Version:
        from ..compare.page import finish_entry

        slot.versions += 1
        return _Version(entry=finish_entry(assets, top_db=self._top_db), wav=assets.copy.wav, number=slot.versions, design=design, measurements=m, rendered_s=seconds)

    def start(self) -> Refresh:
        """Load and render every design (a file that does not load is refused: InputError), then publish."""
        from threadpoolctl import threadpool_limits

        with threadpool_limits(1):  # one BLAS thread, as every render: the same sums, the same bits as render clips
            return self._start()

    def _start(self) -> Refresh:
        from ..compare.page import design_assets, strip_top_db
        from .clips import choose_full_scale

        t0 = time.perf_counter()
        self._load_rig()
        self._load_dry()
        made = []
        for slot in self.slots:
            slot.design = self._load_design(slot)
            slot.sha256 = self._input_sha[slot.path]
            self._input_sha.update(_read_files(slot.design))  # the bytes the design read, not those on disk now
            t = time.perf_counter()
            volts, page_clip, m = self._render(slot.design)
            made.append((slot, volts, page_clip, m, time.perf_counter() - t))
        self._notes.prune()
        peaks = [float(abs(v).max()) if v.size else 0.0 for _, v, _, _, _ in made]
        self.volts_full_scale = choose_full_scale(peaks)
        assets = [design_assets(pc) for _, _, pc, _, _ in made]
        self._top_db = strip_top_db([a.levels for a in assets])
        for (slot, _, _, m, seconds), a in zip(made, assets):
            slot.now = self._version(slot, slot.design, m, a, seconds)
        self.publish()
        names = tuple(s.design.name for s in self.slots)
        took = time.perf_counter() - t0
        warned = tuple(f"warning: {pc.name}: {w}" for _, _, pc, _, _ in made for w in pc.warnings)
        return Refresh(rendered=names, seconds=took, lines=(f"rendered {len(names)} design{'s' if len(names) != 1 else ''} in {took:.2f} s", *warned))

    def refresh(self, paths: Iterable[str | Path]) -> Refresh | None:
        """Render again what a change of ``paths`` touches; None when none of them is watched or none changed."""
        from threadpoolctl import threadpool_limits

        with threadpool_limits(1):
            return self._refresh(paths)

    def _refresh(self, paths: Iterable[str | Path]) -> Refresh | None:
        from ..compare.page import design_assets, value_changes

        t0 = time.perf_counter()
        watched = {p.resolve(): p for p in self.files}
        hit = {watched[q] for q in (Path(p).resolve() for p in paths) if q in watched}
        changed = set()
        for p in hit:
            sha = _sha(p)
            if sha != self._input_sha.get(p):
                self._input_sha[p] = sha
                changed.add(p)
        if not changed:
            return None
        lines: list[str] = []
        everything = False
        for path, load in ((self.rig_path, self._load_rig), (self.dry_path, self._load_dry)):
            if path is not None and path in changed:
                try:
                    load()
                except InputError as exc:
                    self._problems[str(path)] = str(exc)
                    lines.append(f"Error: {exc}; keeping the last good clips")
                    continue
                self._problems.pop(str(path), None)
                everything = True
        rendered = []  # a rig or phrase that did not load: its last good version plays on, with every design
        for slot in self.slots:
            if not (everything or slot.path in changed or changed.intersection(_read_files(slot.design))):
                continue
            try:
                design = self._load_design(slot)
                if not everything and replace(design, sha256="") == replace(slot.design, sha256=""):
                    # the last good design again (a broken save put back, or a comment): its render plays on and
                    # the one before it stays "before"; a new version here would push that out of the pair
                    mended = slot.error is not None
                    slot.error = None
                    self._input_sha.update(_read_files(design))
                    said = "loads again, as version" if mended else "saved; no value changed, version"
                    lines.append(f"{slot.path}: {said} {slot.now.number if slot.now else 0} plays on")
                    continue
                t = time.perf_counter()
                volts, page_clip, m = self._render(design)
                assets = design_assets(page_clip)
                version = self._version(slot, design, m, assets, time.perf_counter() - t)
            except InputError as exc:
                slot.error = str(exc)
                lines.append(f"Error: {exc}; keeping version {slot.now.number if slot.now else 0}")
                continue
            slot.changes = value_changes(slot.design, design) if slot.design is not None else []  # the exact values, not the four figures shown
            slot.design, slot.error = design, None
            self._input_sha.update(_read_files(design))
            slot.before, slot.now = slot.now, version
            rendered.append(design.name)
            what = ", ".join(f"{k} {a} → {b}" for k, a, b in slot.changes[:4]) or ("the dry signal changed" if self.dry_path in changed else "no value changed")
            lines.append(f"{slot.path}: version {version.number} rendered in {version.rendered_s:.2f} s ({what})")
            lines += [f"warning: {page_clip.name}: {w}" for w in page_clip.warnings]  # legal but unlikely values, as render clips says them
        if everything:  # every design played the phrase just now: the terms it did not use are the old phrase's
            self._notes.prune()
        self.publish()
        took = time.perf_counter() - t0
        return Refresh(rendered=tuple(rendered), problems=tuple(self.problems()), seconds=took, lines=tuple(lines))

    # -- the page ------------------------------------------------------------------

    def problems(self) -> list[str]:
        """One line per file that does not load or render now (its last good clip still plays)."""
        return list(self._problems.values()) + [s.error for s in self.slots if s.error]

    def state(self) -> tuple[dict, dict[str, bytes]]:
        """The page's state (JSON-ready, without its version) and the clips it names (name -> WAV bytes)."""
        from ..compare.assets import PAGE_SECONDS
        from ..compare.folders import CLIPS_COLUMNS, CLIPS_MATCHED_COLUMN, CLIPS_NOTES, clips_cells
        from ..compare.page import VALUE_RTOL, aligned_values
        from ..report.brightness import add_brightness

        slots = [(i, s, s.now) for i, s in enumerate(self.slots) if s.now is not None]
        # every version shown: the latest ones first (the first design's the reference, as render clips takes its first), then those before
        shown_versions = [now for _, _, now in slots] + [s.before for _, s, _ in slots if s.before is not None]
        records = [{"measurements": dict(v.measurements)} for v in shown_versions]
        if records:
            add_brightness(records, [v.design for v in shown_versions], reference=0)  # the figures render clips gives the same designs
        cells = {id(v): clips_cells(r["measurements"]) for v, r in zip(shown_versions, records)}
        values = {id(v): vals for v, vals in zip(shown_versions, aligned_values([v.entry["values"] for v in shown_versions]))}  # one key set
        numbers = {id(v): ns for v, ns in zip(shown_versions, aligned_values([v.entry["numbers"] for v in shown_versions], absent=None))}
        designs, clips = [], {}
        for i, slot, now in slots:

            def page_entry(v: _Version, i=i) -> dict:
                name = f"{i}-{v.number}.wav"
                clips[name] = v.wav
                extra = {"cells": list(cells[id(v)]), "values": [list(x) for x in values[id(v)]], "numbers": [list(x) for x in numbers[id(v)]]}
                return {**v.entry, **extra, "clip": f"/clip/{name}", "version": v.number, "rendered_s": round(v.rendered_s, 3)}

            entry = page_entry(now)
            entry["before"] = page_entry(slot.before) if slot.before is not None else None
            entry["error"] = slot.error
            entry["changes"] = [list(c) for c in slot.changes]
            designs.append(entry)
        st = self.settings
        rig = str(self.rig_path) if self.rig_path else "each design's own"
        extra = self.read_files()
        read = f", and the files the designs read ({', '.join(map(str, extra))})" if extra else ""
        n = len(self.slots)
        state = {
            "format": 1,
            "live": True,
            "title": f"render watch: {n} design{'s' if n != 1 else ''}",
            "lede": f"Watching {', '.join(str(s.path) for s in self.slots)}, the dry signal {self.dry_path} and the rig ({rig}){read}; save a file to hear its new version here. "
            f"{st.sample_rate} Hz; seed {st.seed}; hum {'on' if st.hum else 'off'}.",
            "columns": list(CLIPS_COLUMNS),
            "notes": list(CLIPS_NOTES),
            "matched_column": CLIPS_MATCHED_COLUMN,
            "sample_rate": st.sample_rate,
            "volts_full_scale": self.volts_full_scale,
            **ceiling_record(),
            "page_seconds": PAGE_SECONDS,
            "bits": 16,
            "strip_top_db": self._top_db,
            "values_rtol": VALUE_RTOL,
            "problems": self.problems(),
            "designs": designs,
        }
        return state, clips

    def publish(self) -> int:
        state, clips = self.state()
        return self.board.publish(state, clips)

    def page(self) -> bytes:
        """The live page's HTML (its data comes from the server's /api/state)."""
        from ..compare.page import page_html

        n = len(self.slots)
        return page_html({"format": 1, "live": True, "title": f"render watch: {n} design{'s' if n != 1 else ''}"}, clips_file=None)


def follow_changes(run: WatchRun, *, notify: Callable[[str], None], stop=None, step_ms: int = WATCH_STEP_MS, debounce_ms: int = WATCH_DEBOUNCE_MS) -> None:
    """Watch ``run``'s files and refresh it on every burst of changes, until ``stop`` is set or Ctrl-C.

    A save made before the watcher is armed (while the first render runs, or
    while the watcher starts again on a new folder) raises no event: once
    armed, every file is compared with the bytes last rendered (their SHA-256),
    and a difference renders again as a save would.

    ``stop``: anything with ``is_set()`` (a :class:`threading.Event`); the
    watcher checks it every ``step_ms``. Ctrl-C (and SIGTERM or SIGHUP, which
    the command turns into a KeyboardInterrupt) raises KeyboardInterrupt
    here, after the watcher has closed.
    """
    from watchfiles import watch

    def folders() -> list[str]:
        return sorted({str(p.resolve().parent) for p in run.files})

    def wanted(change, path: str) -> bool:
        return str(Path(path).resolve()) in {str(p.resolve()) for p in run.files}  # the files of now: a design may read another since

    while True:
        watching = folders()
        changes_seen = watch(
            *watching, watch_filter=wanted, step=step_ms, debounce=debounce_ms, stop_event=stop, recursive=False, raise_interrupt=True, rust_timeout=WATCH_QUIET_MS, yield_on_timeout=True
        )
        armed = False
        try:
            for changes in changes_seen:  # the first burst, or the empty one after WATCH_QUIET_MS: armed by now
                paths = [path for _, path in changes]
                if not armed:  # what was saved before: the SHA-256 comparison finds it (nothing to do when none changed)
                    paths += [str(p) for p in run.files]
                    armed = True
                result = run.refresh(paths) if paths else None
                if result is not None:
                    for line in result.lines:
                        notify(line)
                if folders() != watching:  # a design now reads a file in another folder: watch that folder too
                    break
            else:
                return  # stopped
        finally:
            changes_seen.close()
