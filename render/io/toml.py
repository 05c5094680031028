"""TOML documents read with size and encoding checks; every failure is one line.

Designs, rigs, phrases and fit files all come through :func:`read_toml`, so a
file saved with a byte-order mark, in UTF-16, cut short or nested too deeply
is refused the same way whichever kind of file it is.
"""

from __future__ import annotations

import codecs
import sys
from pathlib import Path
from typing import Any

from ..errors import InputError

if sys.version_info >= (3, 11):
    import tomllib
else:  # Python 3.10: the same parser, published as tomli
    import tomli as tomllib

TOMLDecodeError = tomllib.TOMLDecodeError
MAX_FILE_BYTES = 1_000_000  # a design, rig or fit file is a few kB; refuse anything huge


AUDIO_MAGIC = (b"RIFF", b"RIFX", b"RF64", b"fLaC", b"OggS", b"FORM")  # how WAV, FLAC, OGG and AIFF files begin


def _is_audio(path: str | Path) -> str:
    return f"{path}: is audio, not a TOML text file; this takes a phrase or design file (.toml); a recording plays through render clips --dry (render.load_dry from Python)"


def loads(text: str) -> dict[str, Any]:
    """Parse TOML text (the standard library's parser, or tomli on Python 3.10)."""
    return tomllib.loads(text)


def read_file_bytes(path: str | Path, *, limit: int, what: str, missing: str = "check the path") -> bytes:
    """The bytes of a regular file of at most ``limit`` bytes; every failure is one line.

    Parameters
    ----------
    path : str or Path
    limit : int, bytes
    what : str
        How the file is named in messages ("a design, rig or phrase file").
    missing : str
        The fix offered when there is no such file.
    """
    p = Path(path)
    try:
        st = p.stat()
    except FileNotFoundError:
        raise InputError(f"{path}: no such file; {missing}") from None
    except OSError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror}); check the path and its permissions") from None
    if p.is_dir():
        raise InputError(f"{path}: is a folder, expected a .toml file")
    if not p.is_file():
        raise InputError(f"{path}: is not a regular file (a device or a pipe?); give {what} saved on disk")
    if st.st_size > limit:
        try:
            with open(p, "rb") as fh:
                head = fh.read(len(max(AUDIO_MAGIC, key=len)))
        except OSError:
            head = b""
        if head.startswith(AUDIO_MAGIC):  # a long recording given for a text file: say what it is, not how big
            raise InputError(_is_audio(path))
        raise InputError(f"{path}: file is {st.st_size} bytes; {what} must be under {limit} bytes")
    try:
        with open(p, "rb") as fh:
            raw = fh.read(limit + 1)  # never trust the size alone: the file may grow while read
    except OSError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror}); check the path and its permissions") from None
    if len(raw) > limit:
        raise InputError(f"{path}: file is over {limit} bytes; {what} must be under {limit} bytes")
    return raw


def decode_toml_text(raw: bytes, path: str | Path) -> str:
    """The UTF-8 text of a TOML file; InputError (one line) for any other encoding.

    A UTF-8 byte-order mark is refused rather than dropped: the text is kept
    as written in session keys and read again later, where it must parse.
    """
    if raw.startswith(codecs.BOM_UTF8):
        raise InputError(f"{path}: starts with a byte-order mark (BOM); save it as UTF-8 without BOM")
    if raw.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        raise InputError(f"{path}: not a UTF-8 text file (it starts like UTF-16); save it as UTF-8 TOML")
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        if raw.startswith(AUDIO_MAGIC):
            raise InputError(_is_audio(path)) from None
        raise InputError(f"{path}: not a UTF-8 text file (byte {exc.start} is 0x{raw[exc.start]:02x}); save it as UTF-8 TOML") from None


def parse_toml_text(text: str, path: str | Path) -> dict[str, Any]:
    """Parse the text of a TOML file; syntax errors and absurd nesting are one line."""
    if "\x00" in text:
        raise InputError(f"{path}: contains NUL bytes; expected a TOML text file")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{path}: not valid TOML ({exc}); check quotes and brackets") from None
    except RecursionError:
        raise InputError(f"{path}: arrays or tables nested too deeply to read; no render file needs more than three levels") from None


def read_toml(path: str | Path, *, limit: int = MAX_FILE_BYTES, what: str = "a design, rig or phrase file", missing: str = "check the path") -> tuple[dict[str, Any], bytes]:
    """Read a TOML file with size and encoding checks: (the document, the file's bytes).

    Raises
    ------
    InputError
        One line naming the file, what is wrong with it and the fix.
    """
    raw = read_file_bytes(path, limit=limit, what=what, missing=missing)
    return parse_toml_text(decode_toml_text(raw, path), path), raw
