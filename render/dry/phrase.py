"""Phrase files: what is played on the guitar, as TOML.

A phrase names the instrument (scale length, tuning, string stiffness,
losses), optional playing defaults, and events: single ``[[note]]`` entries
and strummed ``[[chord]]`` entries. :func:`load_phrase` reads a file and
:func:`parse_phrase` checks an already-parsed mapping; both return a frozen
:class:`Phrase` whose chords are expanded into one :class:`Note` per string,
in time order.

Strings are numbered as guitarists do: 1 is the highest-pitched string.
Lists that go across the strings (``tuning``, ``inharmonicity``, a chord's
``frets``) are written lowest string first, the way chord shapes are read
(``[3, 2, 0, 0, 0, 3]`` is a G chord).

Every bad value is refused with one line: the file, the table, ``key=value``
as written, the constraint, and where possible the fix.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path
from types import MappingProxyType
from typing import Any

from ..errors import InputError
from ..units import FREQUENCY, LENGTH, RATIO, TIME, Kind, QuantityError, parse_quantity
from ..validate import Where, as_table, check_keys, quantity, show

# Six-string standard tuning, lowest string first (common practice, no source).
STANDARD_TUNING = ("E2", "A2", "D3", "G3", "B3", "E4")

# Inharmonicity B of each open string of a light 0.010-0.046 in set, lowest
# first: from memory. For comparison, B = pi^3 E d^4 / (64 T L^2) (H. Fletcher,
# JASA 36(1), 1964) with steel E = 200 GPa, core diameters 0.48/0.41/0.36 mm
# (wound) and 0.43/0.33/0.25 mm (plain), tensions 78/87/82/74/68/72 N (also
# from memory) and L = 648 mm gives 1.57e-4, 7.49e-5, 4.73e-5, 1.07e-4,
# 4.02e-5, 1.25e-5: within 7 % of these.
STANDARD_INHARMONICITY = (1.6e-4, 7.0e-5, 4.5e-5, 1.1e-4, 4.0e-5, 1.3e-5)
# For other string counts, one value for all strings (common practice, no source).
FALLBACK_INHARMONICITY = 6.0e-5

# Plain steel for strings given by core diameter alone (from memory).
STEEL_MODULUS = 200e9  # Pa
STEEL_DENSITY = 7850.0  # kg/m^3
# The strongest plain steel string: music wire (ASTM A228) of the thinnest common guitar gauge, 0.008 in
# (common practice, no source). Its minimum tensile strength Sut = A / d^m with A = 2211 MPa·mm^m and
# m = 0.145 (Shigley's Mechanical Engineering Design, the spring-wire table; from memory) is 2.79 GPa.
# A plain string breaks when T / mu = Sut / density, i.e. when its wave speed 2 f L passes
# sqrt(Sut / density), 596 m/s; a wound string, heavier for its core, breaks sooner.
THINNEST_STRING = 0.2032e-3  # m
MUSIC_WIRE_A, MUSIC_WIRE_M = 2211e6, 0.145  # Pa·mm^m, dimensionless

MAX_FRET = 36
MAX_EVENTS = 20_000
MAX_SECONDS = 600.0
# A phrase (or a recording) shorter than this holds no more than a pluck's first periods: no figure of
# its clip (headroom, spectrum, loudness) means anything (common practice, no source).
MIN_SECONDS = 0.05
# A phrase file of MAX_EVENTS events is about 2 MB of TOML; refuse anything much larger
# before reading it (common practice, no source).
MAX_PHRASE_BYTES = 4_000_000
# How long the phrase goes on after its last note starts (a chord's last strummed string), when ``seconds``
# is not given (common practice, no source).
DEFAULT_TAIL = 2.0
# Timing spread of strummed strings as a fraction of the gap between strings
# (common practice, no source).
STRUM_SPREAD = 0.25

# tables every design has (render.design.schema.REQUIRED_TABLES): they name a design given where a phrase belongs
DESIGN_MARKS = ("coil_a", "coil_b")
TOP_KEYS = ("title", "about", "seconds", "instrument", "playing", "note", "chord")
INSTRUMENT_KEYS = (
    "scale_length",
    "concert_a",
    "tuning",
    "inharmonicity",
    "core_diameter",
    "tension",
    "decay",
    "curvature_loss",
    "mute_decay",
    "release",
    "lateral_decay",
    "polarisation_split",
    "polarisation_angle",
)
PLAYING_KEYS = ("strength", "pluck_at", "mute", "strum", "direction", "angle")
NOTE_KEYS = ("time", "string", "fret", "pitch", "strength", "pluck_at", "mute", "duration", "bend", "vibrato", "angle")
CHORD_KEYS = ("time", "frets", "strum", "direction", "strength", "pluck_at", "mute", "duration", "angle")
BEND_KEYS = ("semitones", "over", "start")
VIBRATO_KEYS = ("depth_cents", "rate_hz", "start")

# The two polarisations (used with a design's [construction] only): the
# lateral T60 as a multiple of decay, the frequency split between them, the
# tilt of their axes from the top, and the pluck's angle from the top
# (common practice, no source, chosen by ear).
LATERAL_DECAY_FACTOR = 1.5
POLARISATION_SPLIT = 1.5  # cents
POLARISATION_ANGLE = 15.0  # degrees
PLUCK_ANGLE = 30.0  # degrees

# Defaults for the instrument and for playing (common practice, no source,
# chosen by ear): they describe a solid-body electric guitar.
DEFAULTS = MappingProxyType(
    {
        "scale_length": 0.648,  # m
        "concert_a": 440.0,  # Hz
        "decay": 6.0,  # s, T60 of the lowest modes
        "curvature_loss": 1.0e-3,  # m^2/s, the b3 term of the loss
        "mute_decay": 0.12,  # s, T60 added by a full palm mute at low frequencies
        "release": 0.08,  # s, T60 of the damping when a note ends
        "strength": 1.0e-3,  # m, initial displacement at the pluck point (from memory)
        "pluck_at": 0.12,  # m from the bridge saddle
        "mute": 0.0,
        "strum": 0.03,  # s, first to last string of a chord
        "direction": "down",
        "bend_over": 0.12,  # s
        "vibrato_rate": 5.5,  # Hz
        "polarisation_split": POLARISATION_SPLIT,
        "polarisation_angle": POLARISATION_ANGLE,
        "angle": PLUCK_ANGLE,
    }
)


@dataclass(frozen=True)
class Bend:
    """A bend: the pitch rises smoothly by ``semitones`` over ``over`` seconds.

    semitones : float, -12..12 (negative lowers, as a vibrato bar does)
    start : float, s after the note starts, >= 0
    over : float, s, >= 0 (0 is a step)
    """

    semitones: float
    start: float
    over: float


@dataclass(frozen=True)
class Vibrato:
    """A periodic pitch swing of ``depth_cents`` (peak) at ``rate_hz``.

    depth_cents : float, cents, 0..200
    rate_hz : float, Hz, 0.1..20
    start : float, s after the note starts, >= 0
    """

    depth_cents: float
    rate_hz: float
    start: float


@dataclass(frozen=True)
class Instrument:
    """The guitar: scale length, open strings and losses.

    scale_length : float, m, bridge saddle to nut
    concert_a : float, Hz, the pitch of A4
    open_pitches : tuple of float, Hz, first partial of each open string, lowest string first
    inharmonicity : tuple of float, dimensionless B of each open string, lowest first
    decay : float, s, T60 of the lowest modes (loss b1 = 6.908 / decay)
    curvature_loss : float, m^2/s, loss b3 in sigma_n = b1 + b3 (n pi / L)^2
    mute_decay : float, s, T60 a full mute imposes on low modes (faster for high ones)
    release : float, s, T60 of the damping applied when a note ends
    """

    scale_length: float
    concert_a: float
    open_pitches: tuple[float, ...]
    inharmonicity: tuple[float, ...]
    decay: float
    curvature_loss: float
    mute_decay: float
    release: float
    lateral_decay: float | None = None  # s, T60 of the polarisation along the top (None: decay × its default factor)
    polarisation_split: float = POLARISATION_SPLIT  # cents between the two polarisations
    polarisation_angle: float = POLARISATION_ANGLE  # degrees from the top to the slower polarisation's axis, rising towards the treble side (+y)

    @property
    def strings(self) -> int:
        """Number of strings."""
        return len(self.open_pitches)

    def open_pitch(self, string: int) -> float:
        """Open-string first partial in Hz of ``string`` (1 = highest)."""
        return self.open_pitches[self.strings - string]

    def string_inharmonicity(self, string: int) -> float:
        """Open-string B of ``string`` (1 = highest)."""
        return self.inharmonicity[self.strings - string]


@dataclass(frozen=True)
class Note:
    """One plucked string.

    time : float, s from the start of the phrase
    string : int, 1..strings (1 = highest-pitched)
    fret : float, semitones above the open string (fractional when given by pitch)
    frequency : float, Hz, first partial before any bend or vibrato
    length : float, m, vibrating length (bridge saddle to the stopping fret)
    strength : float, m, initial displacement at the pluck point
    pluck_at : float, m from the bridge saddle, 0 < pluck_at < length
    mute : float, 0..1 (palm muting)
    duration : float or None, s until the string is damped (None: rings on)
    bend, vibrato : optional pitch movements
    spread : float, s, largest random shift of the start (strummed strings), >= 0
    origin : str, where it came from, for messages ("[[note]] #3")
    """

    time: float
    string: int
    fret: float
    frequency: float
    length: float
    strength: float
    pluck_at: float
    mute: float
    duration: float | None
    bend: Bend | None
    vibrato: Vibrato | None
    spread: float
    origin: str
    angle: float = PLUCK_ANGLE  # degrees from the top's plane to the pluck's direction, rising towards the treble side (+y; 90: straight up)


@dataclass(frozen=True)
class Phrase:
    """A parsed phrase: the instrument and its notes in time order.

    Attributes
    ----------
    source : str
        The file it came from (used in messages).
    title, about : str
        Free text.
    instrument : Instrument
        The strings (tuning, scale length in m, …) the notes are played on.
    notes : tuple of Note
        Sorted by time (chords expanded, one note per string).
    seconds : float, s
        Length of the phrase.
    events : int
        Number of [[note]] and [[chord]] entries as written.
    warnings : tuple of str
        Legal but unlikely values, one line each: a tuning or bend no steel string reaches, a
        core_diameter without its tension.
    """

    source: str
    title: str
    about: str
    instrument: Instrument
    notes: tuple[Note, ...]
    seconds: float
    events: int
    warnings: tuple[str, ...] = ()


# ---------------------------------------------------------------------------
# Pitch


_NOTE_NAME = re.compile(r"^([A-Ga-g])([#♯b♭]?)(-?\d+)$")
_LETTER = MappingProxyType({"c": 0, "d": 2, "e": 4, "f": 5, "g": 7, "a": 9, "b": 11})
_ACCIDENTAL = MappingProxyType({"": 0, "#": 1, "♯": 1, "b": -1, "♭": -1})


def midi_frequency(midi: float, *, concert_a: float = 440.0) -> float:
    """Equal-tempered frequency in Hz of MIDI note ``midi`` (69 = A4 = ``concert_a``)."""
    return concert_a * 2.0 ** ((midi - 69.0) / 12.0)


def pitch_frequency(value: object, *, concert_a: float = 440.0) -> float:
    """Frequency in Hz of a pitch: a note name, a MIDI number or a frequency.

    Parameters
    ----------
    value : str or int
        ``"A3"``, ``"C#4"``, ``"Bb2"`` (scientific pitch notation, C4 is
        middle C), a whole MIDI number 0..127, or a frequency string such as
        ``"110Hz"``.
    concert_a : float, Hz
        The pitch of A4.

    Raises
    ------
    ValueError
        With the reason, if the value is none of those.
    """
    if isinstance(value, bool):
        raise ValueError('expected a note name such as "A3", a MIDI number or a frequency such as "110Hz"')
    if isinstance(value, int):
        if not 0 <= value <= 127:
            raise ValueError("a MIDI note number must be 0..127")
        return midi_frequency(value, concert_a=concert_a)
    if isinstance(value, float):
        raise ValueError(f'a number is read as a MIDI note and must be whole; write "{value:g}Hz" for a frequency')
    if not isinstance(value, str):
        raise ValueError('expected a note name such as "A3", a MIDI number or a frequency such as "110Hz"')
    m = _NOTE_NAME.match(value.strip())
    if m:
        letter, accidental, octave = m.groups()
        midi = 12 * (int(octave) + 1) + _LETTER[letter.lower()] + _ACCIDENTAL[accidental]
        if not 0 <= midi <= 127:
            raise ValueError("the note lies outside MIDI notes 0..127 (C-1 to G9)")
        return midi_frequency(midi, concert_a=concert_a)
    try:
        f = parse_quantity(value, FREQUENCY)
    except QuantityError:
        raise ValueError('expected a note name such as "A3", "C#4" or "Bb2", a MIDI number or a frequency such as "110Hz"') from None
    if not f > 0:
        raise ValueError('a frequency must be above 0 Hz; write a pitch such as "A3" or "110Hz"')
    return f


def highest_ratio(note: Note) -> float:
    """The largest ratio of ``note``'s instantaneous frequency to its pitch without bends (its bend and vibrato at their peak)."""
    cents = 0.0
    if note.bend is not None:
        cents = max(cents, 100.0 * note.bend.semitones)
    if note.vibrato is not None:
        cents += note.vibrato.depth_cents
    return 2.0 ** (cents / 1200.0)


# ---------------------------------------------------------------------------
# Stiffness


def plain_string_tension(*, diameter: float, frequency: float, length: float, density: float = STEEL_DENSITY) -> float:
    """Tension in N of a plain string of ``diameter`` m tuned to ``frequency`` Hz over ``length`` m.

    From f0 = (1 / 2L) sqrt(T / mu), mu = density * pi d^2 / 4 (Mersenne's law).
    """
    mu = density * math.pi * diameter**2 / 4.0
    return mu * (2.0 * length * frequency) ** 2


def stiffness_inharmonicity(*, diameter: float, tension: float, length: float, modulus: float = STEEL_MODULUS) -> float:
    """Inharmonicity B = pi^3 E d^4 / (64 T L^2) of a string with a solid core of ``diameter`` m.

    From H. Fletcher, JASA 36(1):203-209, 1964 (from memory). ``tension`` in N,
    ``length`` in m, ``modulus`` (Young's modulus E) in Pa.
    """
    return math.pi**3 * modulus * diameter**4 / (64.0 * tension * length**2)


def breaking_wave_speed(diameter: float = THINNEST_STRING, *, density: float = STEEL_DENSITY) -> float:
    """Wave speed in m/s at which a plain music-wire string of ``diameter`` m breaks: sqrt(Sut / density),
    Sut = A / d^m (see :data:`MUSIC_WIRE_A`); an estimate."""
    strength = MUSIC_WIRE_A / (diameter * 1e3) ** MUSIC_WIRE_M
    return math.sqrt(strength / density)


def _beyond_steel(what: str, frequency: float, length: float) -> str | None:
    """A warning when a string sounding ``frequency`` Hz over ``length`` m needs a wave speed no steel string survives, else None."""
    need, most = 2.0 * frequency * length, breaking_wave_speed()
    if need <= most:
        return None
    strength = MUSIC_WIRE_A / (THINNEST_STRING * 1e3) ** MUSIC_WIRE_M
    return (
        f"{what} at {frequency:.4g} Hz over {length * 1e3:.0f} mm needs a wave speed 2·f·L = {need:.0f} m/s, {need / most:.2g}× the {most:.0f} m/s"
        f" at which even the strongest plain steel string breaks (an estimate: 0.2 mm music wire, ASTM A228, tensile strength about {strength / 1e9:.1f} GPa"
        " by Shigley's Sut = A/d^m); no steel string reaches this pitch"
    )


# ---------------------------------------------------------------------------
# Messages


# ---------------------------------------------------------------------------
# Parsing


def load_phrase(path: str | Path) -> Phrase:
    """Read and check a phrase file (TOML).

    Parameters
    ----------
    path : str or Path
        The phrase file.

    Raises
    ------
    InputError
        One line naming the file, table, ``key=value`` and the constraint.
    """
    return read_phrase(path)[0]


def read_phrase(path: str | Path) -> tuple[Phrase, str]:
    """:func:`load_phrase`, and the SHA-256 (hex) of the very bytes the phrase was parsed from.

    Raises
    ------
    InputError
        As :func:`load_phrase`.
    """
    from ..arguments import path as path_arg
    from ..io.hashing import sha256_bytes
    from ..io.toml import read_toml

    path = path_arg("path", path, what="a phrase file's path (.toml)")
    data, raw = read_toml(path, limit=MAX_PHRASE_BYTES, what="a phrase file", missing="give the path of a phrase file (.toml)")
    return parse_phrase(data, source=str(path)), sha256_bytes(raw)


def parse_phrase(data: dict, *, source: str = "<phrase>") -> Phrase:
    """Check a phrase already parsed from TOML and build a :class:`Phrase`.

    Parameters
    ----------
    data : dict
        The TOML document.
    source : str
        The name used in messages (normally the file name).

    Raises
    ------
    InputError
        One line naming the source, table, ``key=value`` and the constraint.
    """
    top = Where(source, "")
    if not isinstance(data, dict):
        raise InputError(f"{source}: expected a TOML document with [instrument], [[note]] and [[chord]] tables")
    design_table = next((t for t in DESIGN_MARKS if t in data), None)
    if design_table is not None:
        raise InputError(
            f"{source}: this looks like a design file (it has a [{design_table}] table), not a phrase; give it as a design, and as the phrase a file with [instrument], [[note]] or [[chord]] tables"
        )
    check_keys(top, data, TOP_KEYS)
    title = data.get("title", Path(source).stem if source != "<phrase>" else "phrase")
    about = data.get("about", "")
    for key, value in (("title", title), ("about", about)):
        if not isinstance(value, str):
            raise top.fail(key, value, "expected a string", f'write it in quotes: {key} = "..."')

    instrument, warnings = _parse_instrument(source, data.get("instrument", {}))
    playing = _parse_playing(source, data.get("playing", {}), instrument)

    raw_notes = _event_list(top, data, "note")
    raw_chords = _event_list(top, data, "chord")
    if not raw_notes and not raw_chords:
        raise InputError(f"{source}: the phrase has no [[note]] or [[chord]] events; add one, for example [[note]] with time = 0, string = 6, fret = 0")
    events = len(raw_notes) + len(raw_chords)
    if events > MAX_EVENTS:
        raise InputError(f"{source}: events={events}: at most {MAX_EVENTS} [[note]] and [[chord]] entries; split the phrase")

    given = None
    if "seconds" in data:
        fix = f"a phrase shorter than {MIN_SECONDS:g} s holds no more than a pluck's first periods: give seconds = {MIN_SECONDS:g} or more"
        given = quantity(top, "seconds", data["seconds"], TIME, low=MIN_SECONDS, high=MAX_SECONDS, fix=fix if _below(data["seconds"], MIN_SECONDS) else None)
    notes: list[Note] = []
    for i, entry in enumerate(raw_notes, start=1):
        notes.append(_parse_note(Where(source, f"[[note]] #{i}"), entry, instrument, playing))
        _check_starts_in(Where(source, f"[[note]] #{i}"), notes[-1].time, given)
    for i, entry in enumerate(raw_chords, start=1):
        chord = _parse_chord(Where(source, f"[[chord]] #{i}"), entry, instrument, playing)
        _check_starts_in(Where(source, f"[[chord]] #{i}"), min((n.time for n in chord), default=0.0), given)
        notes.extend(chord)
    ordered = tuple(sorted(notes, key=lambda n: n.time))  # stable: ties keep the file's order

    _check_same_start(source, ordered)

    if given is not None:
        seconds = given
    else:
        seconds = 0.0
        for note in ordered:
            seconds = max(seconds, note.time + DEFAULT_TAIL)
            if note.duration is not None:
                seconds = max(seconds, note.time + note.duration + 3.0 * instrument.release)
        if seconds > MAX_SECONDS:
            last = max(ordered, key=lambda n: n.time)
            raise InputError(
                f"{source}: with no seconds given the phrase would last {seconds:g} s (its last note starts at {last.time:g} s; the tail after it is {DEFAULT_TAIL:g} s),"
                f" longer than {MAX_SECONDS:g} s; give seconds = {MAX_SECONDS:g} or less at the top to cut it, or move the notes earlier"
            )
    for note in ordered:  # a bend tightens the string: f·L grows with it (fretting alone keeps f·L)
        ratio = highest_ratio(note)
        if ratio > 1.0 and 2.0 * instrument.open_pitch(note.string) * instrument.scale_length <= breaking_wave_speed():
            beyond = _beyond_steel(f"{note.origin}: string {note.string} bent", note.frequency * ratio, note.length)
            if beyond:
                warnings.append(f"{source}: {beyond}")
    return Phrase(
        source=source,
        title=title,
        about=about,
        instrument=instrument,
        notes=ordered,
        seconds=seconds,
        events=events,
        warnings=tuple(dict.fromkeys(warnings)),
    )


def _below(value: object, low: float) -> bool:
    """``value`` reads as a time below ``low`` s (unreadable values fall to :func:`quantity`'s own refusal)."""
    try:
        return parse_quantity(value, TIME) < low
    except QuantityError:
        return False


def _event_list(top: Where, data: dict, key: str) -> list[dict]:
    value = data.get(key, [])
    if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
        raise top.fail(key, value, "expected an array of tables", f"write each event under its own [[{key}]] header")
    return value


def _per_string(where: Where, key: str, value: object, strings: int, kind: Kind, *, low: float, high: float, low_open: bool) -> tuple[float, ...]:
    """One value for every string, or a list with one per string (lowest first)."""
    if isinstance(value, list):
        if len(value) != strings:
            raise where.fail(key, value, f"expected {strings} values (one per string, lowest first), got {len(value)}", "match the tuning's length")
        out = []
        for j, item in enumerate(value):
            try:
                out.append(quantity(where, key, item, kind, low=low, high=high, low_open=low_open))
            except InputError:
                raise where.fail(key, value, _range_text(kind, low, high, low_open) + f" (entry {j + 1} is {show(item)})") from None
        return tuple(out)
    x = quantity(where, key, value, kind, low=low, high=high, low_open=low_open)
    return (x,) * strings


def _range_text(kind: Kind, low: float, high: float, low_open: bool) -> str:
    unit = f" {kind.unit}" if kind.unit else ""
    return f"each must be a {kind.name} {'>' if low_open else '>='} {low:g}{unit} and <= {high:g}{unit}"


def _parse_instrument(source: str, table: Any) -> tuple[Instrument, list[str]]:
    """The instrument, and warnings for legal but unlikely values (a tuning no steel string reaches, a core without its tension)."""
    top = Where(source, "")
    table = as_table(top, "instrument", table)
    where = Where(source, "[instrument]")
    check_keys(where, table, INSTRUMENT_KEYS)
    get = table.get
    scale = quantity(where, "scale_length", get("scale_length", DEFAULTS["scale_length"]), LENGTH, low=0.2, high=1.5)
    concert_a = quantity(where, "concert_a", get("concert_a", DEFAULTS["concert_a"]), FREQUENCY, low=380.0, high=480.0)

    tuning = get("tuning", list(STANDARD_TUNING))
    if not isinstance(tuning, list) or not 1 <= len(tuning) <= 12:
        raise where.fail("tuning", tuning, "expected a list of 1 to 12 pitches, lowest string first", 'for example ["E2", "A2", "D3", "G3", "B3", "E4"]')
    pitches = []
    for item in tuning:
        try:
            f = pitch_frequency(item, concert_a=concert_a)
        except ValueError as e:
            raise where.fail("tuning", tuning, f"entry {show(item)}: {e}") from None
        if not 20.0 <= f <= 2000.0:
            raise where.fail("tuning", tuning, f"entry {show(item)} is {f:.4g} Hz; open strings must lie between 20 Hz and 2 kHz")
        pitches.append(f)
    strings = len(pitches)
    warnings = []
    for j, f in enumerate(pitches):
        beyond = _beyond_steel(f"[instrument] tuning: string {strings - j}", f, scale)
        if beyond:
            warnings.append(f"{source}: {beyond}; check the tuning and scale_length")

    if "inharmonicity" in table and "core_diameter" in table:
        raise where.fail("core_diameter", table["core_diameter"], "give inharmonicity or core_diameter, not both", "remove one of them")
    if "tension" in table and "core_diameter" not in table:
        raise where.fail("tension", table["tension"], "tension needs core_diameter beside it", "add core_diameter, or give inharmonicity instead")
    if "inharmonicity" in table:
        inharm = _per_string(where, "inharmonicity", table["inharmonicity"], strings, RATIO, low=0.0, high=0.01, low_open=False)
    elif "core_diameter" in table:
        diameters = _per_string(where, "core_diameter", table["core_diameter"], strings, LENGTH, low=5e-5, high=2e-3, low_open=False)
        if "tension" in table:
            tensions = _per_string(where, "tension", table["tension"], strings, RATIO, low=5.0, high=500.0, low_open=False)
        else:
            tensions = tuple(plain_string_tension(diameter=d, frequency=f, length=scale) for d, f in zip(diameters, pitches))
            shown_t = ", ".join(f"{t:.3g}" for t in tensions)
            warnings.append(
                f"{source}: [instrument] core_diameter without tension: each string is taken as plain steel of that diameter tuned to pitch ({shown_t} N, lowest first);"
                " a wound string is heavier, so at its pitch it is tauter and its inharmonicity lower (a light set's low E is about 78 N, from memory, where plain steel"
                " of its 0.48 mm core gives 16 N and B several times too high); give tension = [...] in N beside core_diameter for wound strings"
            )
        inharm = tuple(stiffness_inharmonicity(diameter=d, tension=t, length=scale) for d, t in zip(diameters, tensions))
        if max(inharm) > 0.01:
            raise where.fail("core_diameter", table["core_diameter"], f"gives inharmonicity B up to {max(inharm):.3g}, beyond 0.01", 'check the diameters (metres, or strings like "0.43mm")')
    elif strings == len(STANDARD_INHARMONICITY):
        inharm = STANDARD_INHARMONICITY
    else:
        inharm = (FALLBACK_INHARMONICITY,) * strings

    decay = quantity(where, "decay", get("decay", DEFAULTS["decay"]), TIME, low=0.05, high=60.0)
    curvature = quantity(where, "curvature_loss", get("curvature_loss", DEFAULTS["curvature_loss"]), RATIO, low=0.0, high=0.1, shown="m²/s")
    mute_decay = quantity(where, "mute_decay", get("mute_decay", DEFAULTS["mute_decay"]), TIME, low=0.005, high=10.0)
    release = quantity(where, "release", get("release", DEFAULTS["release"]), TIME, low=0.005, high=2.0)
    lateral = quantity(where, "lateral_decay", get("lateral_decay"), TIME, low=0.05, high=60.0) if "lateral_decay" in table else None
    split = quantity(where, "polarisation_split", get("polarisation_split", DEFAULTS["polarisation_split"]), RATIO, low=0.0, high=50.0, shown="cents")
    tilt = quantity(
        where, "polarisation_angle", get("polarisation_angle", DEFAULTS["polarisation_angle"]), RATIO, low=-45.0, high=45.0, shown="degrees"
    )  # the axis nearer the top: within ±45° by definition
    instrument = Instrument(
        scale_length=scale,
        concert_a=concert_a,
        open_pitches=tuple(pitches),
        inharmonicity=tuple(inharm),
        decay=decay,
        curvature_loss=curvature,
        mute_decay=mute_decay,
        release=release,
        lateral_decay=lateral,
        polarisation_split=split,
        polarisation_angle=tilt,
    )
    return instrument, warnings


@dataclass(frozen=True)
class _Playing:
    strength: float
    pluck_at: float
    mute: float
    strum: float
    direction: str
    angle: float = PLUCK_ANGLE
    pluck_at_written: object = None  # [playing] pluck_at as written; None: not given (the default)


def _strength(where: Where, value: object) -> float:
    return quantity(where, "strength", value, LENGTH, low=0.0, high=0.01, low_open=True, fix='a pick moves the string about "0.5mm" to "2mm"')


def _mute(where: Where, value: object) -> float:
    return quantity(where, "mute", value, RATIO, low=0.0, high=1.0)


def _strum(where: Where, value: object) -> float:
    return quantity(where, "strum", value, TIME, low=0.0, high=2.0)


def _angle(where: Where, value: object) -> float:
    return quantity(where, "angle", value, RATIO, low=-180.0, high=180.0, shown="degrees", fix="0 plucks along the top, 90 straight up from it")


def _direction(where: Where, value: object) -> str:
    if value not in ("down", "up"):
        raise where.fail("direction", value, 'expected "down" (lowest string first) or "up"')
    return value


def _pluck_at(where: Where, value: object) -> float:
    return quantity(where, "pluck_at", value, LENGTH, low=0.0, high=1.5, low_open=True)


def _parse_playing(source: str, table: Any, instrument: Instrument) -> _Playing:
    table = as_table(Where(source, ""), "playing", table)
    where = Where(source, "[playing]")
    check_keys(where, table, PLAYING_KEYS)
    pluck = _pluck_at(where, table.get("pluck_at", DEFAULTS["pluck_at"]))
    if pluck >= instrument.scale_length:
        raise where.fail("pluck_at", table.get("pluck_at"), f"must be shorter than the scale length {instrument.scale_length * 1e3:g} mm", "measure it from the bridge saddle")
    return _Playing(
        strength=_strength(where, table.get("strength", DEFAULTS["strength"])),
        pluck_at=pluck,
        mute=_mute(where, table.get("mute", DEFAULTS["mute"])),
        strum=_strum(where, table.get("strum", DEFAULTS["strum"])),
        direction=_direction(where, table.get("direction", DEFAULTS["direction"])),
        angle=_angle(where, table.get("angle", DEFAULTS["angle"])),
        pluck_at_written=table.get("pluck_at"),
    )


def _time(where: Where, table: dict) -> float:
    if "time" not in table:
        raise where.missing("time", 'give the start in seconds, e.g. time = 0.5 or time = "500ms"')
    return quantity(where, "time", table["time"], TIME, low=0.0, high=MAX_SECONDS)


def _duration(where: Where, table: dict) -> float | None:
    if "duration" not in table:
        return None
    return quantity(where, "duration", table["duration"], TIME, low=0.0, high=MAX_SECONDS, low_open=True)


def _string_number(where: Where, value: object, strings: int) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or not 1 <= value <= strings:
        raise where.fail("string", value, f"expected a whole number 1..{strings} (1 is the highest-pitched string)")
    return value


def _fret(where: Where, key: str, value: object) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or not 0 <= value <= MAX_FRET:
        raise where.fail(key, value, f"expected a whole fret number 0..{MAX_FRET} (0 is the open string)")
    return value


def _check_pluck(where: Where, table: dict, playing: _Playing, pluck: float, length: float, what: str) -> None:
    """Refuse a pluck point at or beyond the note's vibrating length, naming where it was written: the event's own
    ``pluck_at``, or ``[playing]``'s (or its default) that the event uses."""
    if pluck < length:
        return
    constraint = f"must be shorter than the vibrating length {length * 1e3:.1f} mm ({what})"
    if "pluck_at" in table:
        raise where.fail("pluck_at", table["pluck_at"], constraint, "pluck nearer the bridge")
    event = where.table.split()[0]  # [[note]] or [[chord]]
    if playing.pluck_at_written is not None:
        given = f"[playing] pluck_at={show(playing.pluck_at_written)} (used by {where.table})"
        fix = f"give this {event} a pluck_at of its own, or change [playing]'s"
    else:
        given = f"{where.table} pluck_at (not given: the default {pluck * 1e3:g} mm)"
        fix = f"give this {event} or [playing] a pluck_at"
    raise InputError(f"{where.source}: {given}: {constraint}; pluck nearer the bridge: {fix}")


def _parse_note(where: Where, table: Any, instrument: Instrument, playing: _Playing) -> Note:
    check_keys(where, table, NOTE_KEYS)
    time = _time(where, table)
    strings = instrument.strings
    if "fret" in table and "pitch" in table:
        raise where.fail("pitch", table["pitch"], "give fret or pitch, not both", "remove one of them")
    if "fret" in table and "string" not in table:
        raise where.fail("fret", table["fret"], "a fret needs a string", f"add string = 1..{strings}")
    if "fret" not in table and "pitch" not in table:
        raise where.missing("pitch", 'give string and fret (string = 6, fret = 3) or a pitch (pitch = "A3")')
    if "fret" in table:
        string = _string_number(where, table["string"], strings)
        fret: float = _fret(where, "fret", table["fret"])
        open_f = instrument.open_pitch(string)
        frequency = open_f * 2.0 ** (fret / 12.0)
    else:
        try:
            frequency = pitch_frequency(table["pitch"], concert_a=instrument.concert_a)
        except ValueError as e:
            raise where.fail("pitch", table["pitch"], str(e)) from None
        if "string" in table:
            string = _string_number(where, table["string"], strings)
        else:
            string = _string_for(where, table["pitch"], frequency, instrument)
        open_f = instrument.open_pitch(string)
        fret = 12.0 * math.log2(frequency / open_f)
        if fret < -0.005 or fret > MAX_FRET:
            raise where.fail(
                "pitch",
                table["pitch"],
                f"{frequency:.2f} Hz cannot be played on string {string} (open {open_f:.2f} Hz, frets 0..{MAX_FRET})",
                "choose another string or leave string out",
            )
        fret = max(fret, 0.0)
    length = instrument.scale_length * open_f / frequency
    pluck = _pluck_at(where, table["pluck_at"]) if "pluck_at" in table else playing.pluck_at
    _check_pluck(where, table, playing, pluck, length, f"string {string}, fret {fret:g}")
    bend = _parse_bend(where, table["bend"]) if "bend" in table else None
    vibrato = _parse_vibrato(where, table["vibrato"]) if "vibrato" in table else None
    return Note(
        time=time,
        string=string,
        fret=fret,
        frequency=frequency,
        length=length,
        strength=_strength(where, table["strength"]) if "strength" in table else playing.strength,
        pluck_at=pluck,
        mute=_mute(where, table["mute"]) if "mute" in table else playing.mute,
        duration=_duration(where, table),
        bend=bend,
        vibrato=vibrato,
        spread=0.0,
        origin=where.table,
        angle=_angle(where, table["angle"]) if "angle" in table else playing.angle,
    )


def _string_for(where: Where, written: object, frequency: float, instrument: Instrument) -> int:
    """The string that plays ``frequency`` lowest on the neck (the highest open pitch at or below it)."""
    best = None
    for string in range(1, instrument.strings + 1):
        open_f = instrument.open_pitch(string)
        playable = open_f <= frequency * (1.0 + 3e-4) and 12.0 * math.log2(frequency / open_f) <= MAX_FRET
        if playable and (best is None or open_f > instrument.open_pitch(best)):
            best = string
    if best is None:
        low = min(instrument.open_pitches)
        raise where.fail(
            "pitch",
            written,
            f"{frequency:.2f} Hz is outside the instrument's range ({low:.2f} Hz up to {MAX_FRET} frets above the highest string)",
            "choose a pitch the tuning can play",
        )
    return best


def _parse_bend(where: Where, value: object) -> Bend:
    table = as_table(where, "bend", value)
    inner = Where(where.source, f"{where.table} bend")
    check_keys(inner, table, BEND_KEYS)
    if "semitones" not in table:
        raise inner.missing("semitones", 'write bend = { semitones = 1, over = "0.12s" }')
    semis = quantity(inner, "semitones", table["semitones"], RATIO, low=-12.0, high=12.0)
    over = quantity(inner, "over", table.get("over", DEFAULTS["bend_over"]), TIME, low=0.0, high=MAX_SECONDS)
    start = quantity(inner, "start", table.get("start", 0.0), TIME, low=0.0, high=MAX_SECONDS)
    return Bend(semitones=semis, start=start, over=over)


def _parse_vibrato(where: Where, value: object) -> Vibrato:
    table = as_table(where, "vibrato", value)
    inner = Where(where.source, f"{where.table} vibrato")
    check_keys(inner, table, VIBRATO_KEYS)
    if "depth_cents" not in table:
        raise inner.missing("depth_cents", "write vibrato = { depth_cents = 20, rate_hz = 5.5 }")
    depth = quantity(inner, "depth_cents", table["depth_cents"], RATIO, low=0.0, high=200.0, shown="cents")
    rate = quantity(inner, "rate_hz", table.get("rate_hz", DEFAULTS["vibrato_rate"]), FREQUENCY, low=0.1, high=20.0)
    start = quantity(inner, "start", table.get("start", 0.0), TIME, low=0.0, high=MAX_SECONDS)
    return Vibrato(depth_cents=depth, rate_hz=rate, start=start)


def _parse_chord(where: Where, table: Any, instrument: Instrument, playing: _Playing) -> list[Note]:
    if isinstance(table, dict) and ("string" in table or "fret" in table or "pitch" in table):
        key = next(k for k in ("string", "fret", "pitch") if k in table)
        raise InputError(
            f'{where.place}: {key} is a [[note]]\'s key; a [[chord]] gives its frets as a list, one per string, lowest string first, "x" for a string not played, e.g. frets = [3, 2, 0, 0, 0, 3]'
        )
    check_keys(where, table, CHORD_KEYS)
    time = _time(where, table)
    strings = instrument.strings
    if "frets" not in table:
        raise where.missing("frets", 'give one fret per string, lowest string first, "x" for a string not played, e.g. frets = [3, 2, 0, 0, 0, 3]')
    frets_raw = table["frets"]
    if not isinstance(frets_raw, list) or len(frets_raw) != strings:
        got = len(frets_raw) if isinstance(frets_raw, list) else "not a list"
        raise where.fail("frets", frets_raw, f"expected a list of {strings} frets, lowest string first (got {got})", 'use "x" for a string not played')
    played: list[tuple[int, int]] = []  # (string, fret)
    for j, item in enumerate(frets_raw):
        string = strings - j
        if isinstance(item, str) and item.strip().lower() == "x":
            continue
        if isinstance(item, bool) or not isinstance(item, int) or not 0 <= item <= MAX_FRET:
            raise where.fail("frets", frets_raw, f'entry {j + 1} ({show(item)}) must be a fret 0..{MAX_FRET} or "x" for a string not played')
        played.append((string, item))
    if not played:
        raise where.fail("frets", frets_raw, "no string is played", "give at least one fret number")
    strum = _strum(where, table["strum"]) if "strum" in table else playing.strum
    direction = _direction(where, table["direction"]) if "direction" in table else playing.direction
    strength = _strength(where, table["strength"]) if "strength" in table else playing.strength
    pluck = _pluck_at(where, table["pluck_at"]) if "pluck_at" in table else playing.pluck_at
    mute = _mute(where, table["mute"]) if "mute" in table else playing.mute
    angle = _angle(where, table["angle"]) if "angle" in table else playing.angle
    duration = _duration(where, table)
    # Down strokes reach the lowest string first.
    played.sort(key=lambda sf: -sf[0] if direction == "down" else sf[0])
    gap = strum / (len(played) - 1) if len(played) > 1 else 0.0
    notes = []
    for k, (string, fret) in enumerate(played):
        open_f = instrument.open_pitch(string)
        frequency = open_f * 2.0 ** (fret / 12.0)
        length = instrument.scale_length * open_f / frequency
        _check_pluck(where, table, playing, pluck, length, f"string {string}, fret {fret}")
        notes.append(
            Note(
                time=time + k * gap,
                string=string,
                fret=float(fret),
                frequency=frequency,
                length=length,
                strength=strength,
                pluck_at=pluck,
                mute=mute,
                duration=None if duration is None else max(duration - k * gap, 1e-3),
                bend=None,
                vibrato=None,
                spread=STRUM_SPREAD * gap,
                origin=where.table,
                angle=angle,
            )
        )
    return notes


def _check_starts_in(where: Where, time: float, seconds: float | None) -> None:
    """Refuse an event that starts at or after the phrase's end (it would never be heard)."""
    if seconds is not None and time >= seconds:
        raise where.fail("time", round(time, 6), f"starts at or after the phrase's end (seconds = {seconds:g}), so it is never heard", f"raise seconds above {time:g}, or move the event earlier")


def _check_same_start(source: str, notes: tuple[Note, ...]) -> None:
    """Refuse two notes that start on one string at the same moment."""
    seen: dict[tuple[int, float], Note] = {}
    for note in notes:
        key = (note.string, round(note.time, 9))
        if key in seen:
            other = seen[key]
            raise InputError(
                f"{source}: {note.origin} time={note.time:g}: string {note.string} already starts a note at that moment ({other.origin}); a string plays one note at a time, so move one of them"
            )
        seen[key] = note


def describe(phrase: Phrase) -> dict:
    """A short JSON-ready description of a phrase, for run records."""
    return {
        "kind": "phrase",
        "file": phrase.source,
        "title": phrase.title,
        "seconds": phrase.seconds,
        "events": phrase.events,
        "notes": len(phrase.notes),
        "scale_length_m": phrase.instrument.scale_length,
        "open_pitches_hz": list(phrase.instrument.open_pitches),
        "strongest_pluck_m": max((n.strength for n in phrase.notes), default=None),
    }
