"""Reading a measured coil: a CSV file of frequency, |Z| and phase.

Pure: text (or the file's bytes) in, a :class:`Measurement` out;
:func:`render.io.measurement.read_measurement` reads the file and hashes it.
The format is what LCR meters and impedance analysers export, loosely:

- text (UTF-8) separated by commas, semicolons or tabs, whichever the
  header uses (tab first, then ``;``, then ``,``); with ``;`` or tab a
  decimal comma is read as a point (``1,5`` is 1.5), as meters set to a
  European locale export. Lines starting with ``#`` are comments and blank
  lines are skipped;
- the first other line is a header naming the columns; the three needed are
  found by name, case-insensitively, with an optional unit after ``_`` or in
  brackets: frequency (``frequency``, ``freq``, ``f``; Hz, kHz or MHz),
  impedance magnitude (``|z|``, ``z``, ``impedance``, ``magnitude``, ``mag``;
  ohm, Ω, kohm, kΩ, MΩ; case-blind, except that an m or M prefix is read by its
  case as SI writes it: mΩ and mHz are milli, MΩ and MHz mega) and phase (``phase``, ``theta``, ``angle``, ``θ``; deg or
  rad; degrees when no unit is given). Other columns are ignored;
- one row per frequency, each with exactly the header's columns, frequency
  strictly increasing.

Anything else is refused with one line naming the file, the row and the fix.
The file's SHA-256 travels with the data, for a render's record.
"""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass

import numpy as np

from ..errors import InputError

MAX_BYTES = 16 * 1024 * 1024  # the largest measurement file read (render.io.measurement)
MIN_ROWS = 8
_NAMES = {
    "frequency": ("frequency", "freq", "f"),
    "magnitude": ("|z|", "z", "impedance", "magnitude", "mag", "zmag", "z_mag", "z mag", "|impedance|"),
    "phase": ("phase", "theta", "angle", "θ", "phase_angle", "phase angle", "z_phase", "zphase", "z phase"),
}
# the other way meters export Z: its real and imaginary parts (R and X, in ohms); read when no magnitude and phase are found
_PARTS = {
    "real": ("real", "re", "r", "rs", "z_real", "zreal", "z real", "re(z)", "z'"),
    "imaginary": ("imag", "imaginary", "im", "x", "xs", "z_imag", "zimag", "z imag", "im(z)", "z''"),
}
_OHMS = {"": 1.0, "ohm": 1.0, "ohms": 1.0, "ω": 1.0, "kohm": 1e3, "kω": 1e3}
_UNITS = {
    "frequency": {"": 1.0, "hz": 1.0, "khz": 1e3},
    "magnitude": _OHMS,
    "phase": {"": 1.0, "deg": 1.0, "degree": 1.0, "degrees": 1.0, "°": 1.0, "rad": 180.0 / math.pi, "radian": 180.0 / math.pi, "radians": 180.0 / math.pi},
    "real": _OHMS,
    "imaginary": _OHMS,
}
_M_PREFIXED = {"frequency": ("hz",), "magnitude": ("ohm", "ohms", "ω"), "real": ("ohm", "ohms", "ω"), "imaginary": ("ohm", "ohms", "ω")}  # units whose m/M prefix is read by its case (SI: milli, mega)
MIN_TOP_HZ = 1.0  # a sweep whose top frequency is below this is refused: no coil is swept wholly below 1 Hz; a mHz header read for MHz puts it there (common practice, no source)
_HEADER_EXAMPLE = "frequency_hz,z_ohm,phase_deg"
SEPARATORS = {"\t": "tab", ";": "';'", ",": "','"}  # in the order they are looked for in the header


def separator_of(header_line: str, source: str) -> str:
    """The header's separator: tab, ';' or ','; InputError when it has none of them.

    The separator is the one that splits the header into the most cells none
    of which holds another separator (whitespace around a cell is ignored, so
    a comma file aligned with tabs, or with a trailing tab, stays a comma
    file); ties go to tab, then ';'.
    """
    best, most = None, 1
    for sep in SEPARATORS:
        if sep not in header_line:
            continue
        cells = [c.strip() for c in header_line.split(sep)]
        clean = [c for c in cells if c]
        if any(other in c for c in clean for other in SEPARATORS if other != sep):
            continue
        if len(clean) > most:
            best, most = sep, len(clean)
    if best is not None:
        return best
    raise InputError(f"{source}: the header {header_line.strip()!r} is not split cleanly by one of ',', ';' or tab; export the columns separated by one of those (e.g. {_HEADER_EXAMPLE})")


@dataclass(frozen=True)
class Measurement:
    """A measured coil impedance.

    Attributes
    ----------
    frequency_hz : np.ndarray [shape=(F,)], Hz, increasing
    magnitude_ohm : np.ndarray [shape=(F,)], Ω
    phase_deg : np.ndarray [shape=(F,)], degrees
    source : str
        The file it came from.
    sha256 : str
        Hex digest of the file's bytes.
    """

    frequency_hz: np.ndarray
    magnitude_ohm: np.ndarray
    phase_deg: np.ndarray
    source: str
    sha256: str

    def __post_init__(self) -> None:
        from ..readonly import lock_arrays

        lock_arrays(self)

    @property
    def impedance(self) -> np.ndarray:
        """|Z|·e^(j·phase), complex Ω, shape (F,)."""
        return self.magnitude_ohm * np.exp(1j * np.radians(self.phase_deg))


def _candidates(cell: str) -> list[tuple[str, str, bool]]:
    """Readings of a header cell as (name, unit, unit given in brackets).

    '|Z| (kOhm)' -> [('|z|', 'kOhm', True)]; 'frequency_hz' -> [('frequency_hz', '', False),
    ('frequency', 'hz', False)]; 'Frequency/Hz' -> [..., ('frequency', 'Hz', False)]. The name is lower-cased,
    the unit keeps its case (an SI prefix's: mΩ is not MΩ).
    """
    text = cell.strip().strip('"').strip()
    m = re.fullmatch(r"(.+?)\s*[\(\[]\s*([^\)\]]*)\s*[\)\]]", text)
    if m and not m.group(1).strip().lower().endswith(("re", "im")):  # Re(Z), Im(Z) are names, not a unit in brackets
        return [(m.group(1).strip().lower(), m.group(2).strip(), True)]
    out = [(text.lower(), "", False)]
    for sep in ("_", " ", "/"):
        head, _, tail = text.rpartition(sep)
        if head:
            out.append((head.strip().lower(), tail.strip(), False))
    return out


def _unit_scale(kind: str, unit: str) -> float | None:
    """The factor to SI of a column's unit: case-blind, except an m/M prefix, which SI reads by its case."""
    low = unit.lower()
    if len(unit) > 1 and unit[0] in "mM" and low[1:] in _M_PREFIXED.get(kind, ()):
        return (1e6 if unit[0] == "M" else 1e-3) * _UNITS[kind][low[1:]]
    return _UNITS[kind].get(low)


_SHOWN_UNITS = {"frequency": "Hz, kHz or MHz (mHz is millihertz)", "magnitude": "ohm, Ω, kΩ or MΩ (mΩ is milliohm)", "phase": "deg or rad"}
_SHOWN_UNITS |= {"real": _SHOWN_UNITS["magnitude"], "imaginary": _SHOWN_UNITS["magnitude"]}


def _columns(header: list[str], where: str, sep: str = ",") -> dict[str, tuple[int, float]]:
    """Column index and scale to SI of frequency, magnitude and phase, or else of frequency, real and imaginary."""
    found = _find(header, where, _NAMES)
    if "magnitude" not in found and "phase" not in found:
        parts = _find(header, where, _PARTS)
        if "real" in parts and "imaginary" in parts and "frequency" in found:
            return parts
    for kind in _NAMES:
        if kind not in found:
            raise InputError(
                f"{where}: no {kind} column in the header {sep.join(c.strip() for c in header)!r} (looked for {', '.join(_NAMES[kind])}; or real and imaginary parts, such as R and X);"
                f" add a header row like {_HEADER_EXAMPLE}"
            )
    return found


def _find(header: list[str], where: str, names: dict[str, tuple[str, ...]]) -> dict[str, tuple[int, float]]:
    found: dict[str, tuple[int, float]] = {}
    names = {"frequency": _NAMES["frequency"], **names}
    for i, cell in enumerate(header):
        for name, unit, explicit in _candidates(cell):
            kind = next((k for k, ns in names.items() if name in ns), None)
            if kind is None or kind in found:
                continue
            scale = _unit_scale(kind, unit)
            if scale is None:
                if explicit:
                    raise InputError(f"{where}: column {cell.strip()!r} has unit {unit!r}, which is not one of {_SHOWN_UNITS[kind]}; give the column in one of those")
                continue  # 'z_real' and the like: not this column
            found[kind] = (i, scale)
            break
    return found


def parse_measurement(text: str, *, source: str = "<measurement>", sha256: str = "") -> Measurement:
    """Parse a measurement's text (see the module doc); raises InputError on anything malformed."""
    rows: list[tuple[int, list[str]]] = []
    header = None
    sep = ","
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip(" \r\n")  # not tabs: an empty first cell of a tab-separated row stays a cell
        if not stripped.strip() or stripped.lstrip().startswith("#"):
            continue
        if header is None:
            sep = separator_of(stripped, source)
        cells = [c.strip() for c in next(csv.reader([stripped], delimiter=sep))]  # a quoted cell ("20") read as its text
        if header is None:
            header = cells
            continue
        if sep != ",":
            cells = [c.replace(",", ".") for c in cells]  # a decimal comma, where the comma separates nothing
        rows.append((number, cells))
    if header is None:
        raise InputError(f"{source}: no header and no data; the file should start with a header row like {_HEADER_EXAMPLE}")
    cols = _columns(header, source, sep)
    if len(rows) < MIN_ROWS:
        raise InputError(f"{source}: {len(rows)} data rows, need at least {MIN_ROWS} frequencies; measure across the band (20 Hz to above the resonance)")
    values = {kind: np.empty(len(rows)) for kind in cols}
    for r, (number, cells) in enumerate(rows):
        if len(cells) != len(header):
            extra = "; a decimal comma splits a number in two: write 1.5, not 1,5, or separate the columns with ';' or tab" if sep == "," and len(cells) > len(header) else ""
            raise InputError(f"{source}: line {number} has {len(cells)} columns, the header has {len(header)}; give every row exactly the header's columns{extra}")
        for kind, (i, scale) in cols.items():
            try:
                v = float(cells[i])
            except ValueError:
                raise InputError(f"{source}: line {number}: {kind} {cells[i]!r} is not a number; write plain numbers (units go in the header)") from None
            if not math.isfinite(v):
                raise InputError(f"{source}: line {number}: {kind} is {cells[i]!r}; remove the row or re-measure that point")
            values[kind][r] = v * scale
    if "magnitude" in values:
        f, mag, ph = values["frequency"], values["magnitude"], values["phase"]
    else:  # R + jX: exactly |Z| and its angle
        f, zc = values["frequency"], values["real"] + 1j * values["imaginary"]
        mag, ph = np.abs(zc), np.degrees(np.angle(zc))
    lines = [n for n, _ in rows]
    bad = np.flatnonzero(f <= 0)
    if bad.size:
        raise InputError(f"{source}: line {lines[bad[0]]}: frequency {float(f[bad[0]]):g} Hz must be > 0")
    bad = np.flatnonzero(mag <= 0)
    if bad.size:
        raise InputError(f"{source}: line {lines[bad[0]]}: |Z| {float(mag[bad[0]]):g} Ω must be > 0")
    if f.size > 1 and np.all(np.diff(f) < 0):  # a sweep from high to low, as many analysers run it: the same points
        f, mag, ph, lines = f[::-1], mag[::-1], ph[::-1], lines[::-1]
    bad = np.flatnonzero(np.diff(f) <= 0)
    if bad.size:
        i = bad[0] + 1
        raise InputError(
            f"{source}: line {lines[i]}: frequency {float(f[i]):g} Hz does not increase on line {lines[i - 1]} ({float(f[i - 1]):g} Hz); sort the rows by frequency (rising or falling throughout) and drop repeats"
        )
    if f.size and float(np.max(f)) < MIN_TOP_HZ:
        unit = header[cols["frequency"][0]].strip()
        raise InputError(
            f"{source}: the sweep lies wholly below {MIN_TOP_HZ:g} Hz ({float(f[0]):.3g} to {float(f[-1]):.3g} Hz as the header {unit!r} reads it); no coil is swept there: SI prefixes are case-sensitive,"
            " mHz is millihertz and MHz megahertz, so write the unit in the header as the meter means it (Hz, kHz or MHz)"
        )
    bad = np.flatnonzero(np.abs(ph) > 180.0)
    if bad.size:
        raise InputError(f"{source}: line {lines[bad[0]]}: phase {float(ph[bad[0]]):g}° outside ±180°; check the phase column's unit (deg or rad) in the header")
    return Measurement(f, mag, ph, source, sha256)


def decode_measurement(raw: bytes, *, source: str, sha256: str) -> Measurement:
    """Parse a measurement file's bytes (UTF-8, an optional BOM); ``sha256`` is their digest, kept with the data."""
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError(f"{source}: not a UTF-8 text file; export the measurement as CSV text") from None
    return parse_measurement(text, source=source, sha256=sha256)
