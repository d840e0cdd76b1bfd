"""File-reading guards: size limit, existence, readable text."""

from __future__ import annotations

import os
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
    try:
        return p.read_text(encoding="utf-8")
    except UnicodeDecodeError as exc:
        raise FileFormatError(f"{p}: not UTF-8 text (byte {exc.start}); is this the right format?") from None


def bad_line(p: Path, lineno: int, message: str) -> FileFormatError:
    return FileFormatError(f"{p}:{lineno}: {message}")
