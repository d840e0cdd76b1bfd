"""File-reading guards: size limit, existence, readable text, printable labels."""

from __future__ import annotations

import os
import re
from pathlib import Path

from spinward.core.errors import FileFormatError, InputError

#: default cap on the size of a problem file (override with SPINWARD_MAX_FILE_BYTES)
DEFAULT_MAX_BYTES = 2 * 2**30


def max_file_bytes() -> int:
    raw = os.environ.get("SPINWARD_MAX_FILE_BYTES")
    if raw is None:
        return DEFAULT_MAX_BYTES
    try:
        return int(raw)
    except ValueError:
        raise InputError(f"SPINWARD_MAX_FILE_BYTES must be an integer number of bytes, got {raw!r}") from None


def checked_path(path: str | os.PathLike[str]) -> Path:
    """The path, after checking it exists, is a file and is under the size limit."""
    if not isinstance(path, (str, os.PathLike)):
        raise InputError(f"a file path is a string or a path-like object, got {path!r}")
    p = Path(path)
    if not p.exists():
        raise FileFormatError(f"{p}: no such file")
    if not p.is_file():
        raise FileFormatError(f"{p}: not a regular file")
    size = p.stat().st_size
    limit = max_file_bytes()
    if size > limit:
        raise FileFormatError(f"{p}: {size} bytes exceeds the limit of {limit} bytes; "
                              f"raise SPINWARD_MAX_FILE_BYTES if the file is trusted")
    return p


def read_text(p: Path) -> str:
    """The file as UTF-8 text, without a leading byte-order mark."""
    return decode_text(p, p.read_bytes())


def decode_text(p: Path, data: bytes) -> str:
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise FileFormatError(f"{p}: not UTF-8 text (byte {exc.start}); is this the right format?") from None
    return text[1:] if text.startswith("\ufeff") else text


def read_bytes(p: Path) -> bytes:
    """The file's bytes, without a leading UTF-8 byte-order mark."""
    data = p.read_bytes()
    return data[3:] if data.startswith(UTF8_BOM) else data


UTF8_BOM = b"\xef\xbb\xbf"
#: every byte but the ASCII controls other than tab, line feed and carriage return
_NOT_CONTROL = bytes(b for b in range(256) if (b >= 32 or b in (9, 10, 13)) and b != 127)


def has_control_bytes(data: bytes) -> bool:
    """Whether ``data`` holds an ASCII control byte other than tab, LF or CR (C speed: bytes.translate)."""
    return bool(data.translate(None, _NOT_CONTROL))


#: Unicode's control characters (category Cc): U+0000–U+001F and U+007F–U+009F
CONTROL_CHARACTERS = re.compile("[\x00-\x1f\x7f-\x9f]")


def control_character(text: str) -> str | None:
    """The first control character in ``text``, or None."""
    hit = CONTROL_CHARACTERS.search(text)
    return hit.group() if hit else None


def check_label(p: Path, lineno: int, label: str) -> None:
    """Refuse a label holding a control character (NUL, escape...), naming the line."""
    ch = control_character(label)
    if ch is not None:
        raise bad_line(p, lineno, f"the label {label!r} holds the control character U+{ord(ch):04X}; "
                                  f"labels must be printable text")


#: a decimal number as data files write it (no underscores, no hexadecimal, no other scripts' digits)
NUMBER = re.compile(r"\s*[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?\s*\Z")
NON_FINITE = re.compile(r"\s*[+-]?(?:inf|infinity|nan)\s*\Z", re.IGNORECASE)


def parse_number(token: str) -> float | None:
    """The token's value when it is written as a decimal number (inf and nan included), else None."""
    if NUMBER.match(token) or NON_FINITE.match(token):
        return float(token)
    return None


def bad_line(p: Path, lineno: int, message: str) -> FileFormatError:
    return FileFormatError(f"{p}:{lineno}: {message}")
