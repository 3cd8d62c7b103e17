"""Reading and writing files safely: bounded reads, strict JSON, atomic writes.

Reading
    Only regular files are read: a folder, a FIFO (named pipe), a device or
    a socket is refused with a message before it is opened, so ``/dev/zero``
    cannot exhaust memory and a FIFO cannot block forever.  The size is
    checked while reading (a file that grows is caught too).

Strict JSON
    Text is decoded as UTF-8 with or without a byte-order mark.  Integers
    longer than :data:`MAX_INT_DIGITS` digits are refused (no lake number
    needs them); ``NaN`` and ``Infinity`` (not JSON, but written by some
    programs) are read as floats so that the field's own check names the
    field that holds them.  Nesting deeper than :data:`MAX_DEPTH` is refused before Python's
    recursion limit is reached.

Writing (the rule)
    A file is written to a temporary file in the same folder and moved over
    the target in one step (:func:`os.replace`), so a reader never sees half
    a file and a failure leaves the old file as it was.  The target must be
    absent or a regular file: a symbolic link, a folder, a device, a FIFO or
    any other special file at the target is never replaced; the message
    says so.  A folder that does not exist or cannot be written gets a
    message naming it.
"""

from __future__ import annotations

import json
import os
import stat
import tempfile
from pathlib import Path
from typing import Any

__all__ = [
    "MAX_DEPTH",
    "MAX_INT_DIGITS",
    "FileTooLarge",
    "loads_strict",
    "read_bounded",
    "read_json_file",
    "write_atomic",
]

#: Deepest JSON nesting accepted.
MAX_DEPTH = 64
#: Longest integer accepted in JSON [digits].
MAX_INT_DIGITS = 30


class FileTooLarge(ValueError):
    """A file larger than the limit; ``size`` is how much was seen [bytes] (at least the limit plus one)."""

    def __init__(self, message: str, size: int) -> None:
        super().__init__(message)
        self.size = size


_KINDS = (
    (stat.S_ISDIR, "a folder"),
    (stat.S_ISFIFO, "a named pipe (FIFO)"),
    (stat.S_ISCHR, "a character device"),
    (stat.S_ISBLK, "a block device"),
    (stat.S_ISSOCK, "a socket"),
)


def _kind(mode: int) -> str | None:
    """Words for a special file, or None for a regular file."""
    for test, words in _KINDS:
        if test(mode):
            return words
    return None if stat.S_ISREG(mode) else "not a regular file"


def _mb(n: int) -> str:
    return f"{n / 1e6:g} MB" if n >= 1_000_000 else f"{n / 1e3:g} kB"


def read_bounded(path: str | os.PathLike[str], max_bytes: int, what: str) -> bytes:
    """The bytes of a regular file of at most ``max_bytes``, or ValueError saying what to give instead.

    Parameters
    ----------
    path : path-like
    max_bytes : int
        Largest size accepted [bytes].
    what : str
        What the file should be, for messages ("plan file", "lake file").
    """
    shown = str(path)
    try:
        st = os.stat(path)
    except OSError as exc:
        raise ValueError(f"cannot read {what} {shown!r}: {exc.strerror or type(exc).__name__}") from None
    kind = _kind(st.st_mode)
    if kind is not None:
        raise ValueError(f"{what} {shown!r} is {kind}; give a regular file")
    if st.st_size > max_bytes:
        raise FileTooLarge(
            f"{what} {shown!r} is larger than {_mb(max_bytes)}; check that this is the right file", st.st_size
        )
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
        try:
            if _kind(os.fstat(fd).st_mode) is not None:  # replaced between the two looks
                raise ValueError(f"{what} {shown!r} is not a regular file; give a regular file")
            chunks, total = [], 0
            while True:
                chunk = os.read(fd, min(1 << 20, max_bytes + 1 - total))
                if not chunk:
                    break
                chunks.append(chunk)
                total += len(chunk)
                if total > max_bytes:
                    raise FileTooLarge(
                        f"{what} {shown!r} is larger than {_mb(max_bytes)}; check that this is the right file", total
                    )
        finally:
            os.close(fd)
    except OSError as exc:
        raise ValueError(f"cannot read {what} {shown!r}: {exc.strerror or type(exc).__name__}") from None
    return b"".join(chunks)


def _bounded_int(text: str) -> int:
    digits = text.lstrip("-")
    if len(digits) > MAX_INT_DIGITS:
        raise ValueError(f"an integer of {len(digits)} digits is too long; write at most {MAX_INT_DIGITS} digits")
    return int(text)


def _depth(text: str) -> int:
    """Deepest bracket nesting of JSON text, outside strings."""
    depth = deepest = 0
    in_str = escaped = False
    for ch in text:
        if in_str:
            if escaped:
                escaped = False
            elif ch == "\\":
                escaped = True
            elif ch == '"':
                in_str = False
        elif ch == '"':
            in_str = True
        elif ch in "[{":
            depth += 1
            deepest = max(deepest, depth)
        elif ch in "]}":
            depth -= 1
    return deepest


def loads_strict(text: str, what: str = "the JSON") -> Any:
    """Parse JSON text strictly (see the module docstring); ValueError with line and column when it is not."""
    if text.startswith("\ufeff"):
        text = text[1:]
    if _depth(text) > MAX_DEPTH:
        raise ValueError(f"{what} is nested more than {MAX_DEPTH} levels deep; that is not a file of this kind")
    try:
        return json.loads(text, parse_int=_bounded_int)
    except json.JSONDecodeError as exc:
        raise ValueError(f"{what} is not valid JSON: {exc.msg} at line {exc.lineno} column {exc.colno}") from None
    except ValueError as exc:
        raise ValueError(f"{what}: {exc}") from None
    except RecursionError:
        raise ValueError(f"{what} is nested too deeply") from None


def read_json_file(path: str | os.PathLike[str], max_bytes: int, what: str) -> Any:
    """A bounded, strict JSON file (UTF-8, byte-order mark allowed)."""
    raw = read_bounded(path, max_bytes, what)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise ValueError(f"{what} {str(path)!r} is not UTF-8 text; save it as UTF-8") from None
    return loads_strict(text, f"{what} {str(path)!r}")


def check_target(path: str | os.PathLike[str], what: str = "file") -> os.stat_result | None:
    """Check, before any work, that ``path`` may be written under the rule; its current status or None.

    Raises
    ------
    ValueError
        For a link or special file at the target, a missing folder, or a folder that cannot be written.
    """
    target = Path(path)
    shown = str(path)
    try:
        st = os.lstat(target)
    except FileNotFoundError:
        st = None
    except OSError as exc:
        raise ValueError(f"cannot write {what} {shown!r}: {exc.strerror or type(exc).__name__}") from None
    if st is not None:
        if stat.S_ISLNK(st.st_mode):
            raise ValueError(f"{shown!r} is a symbolic link; it is not replaced. Give the path of a regular file")
        kind = _kind(st.st_mode)
        if kind is not None:
            raise ValueError(f"{shown!r} is {kind}; it is not replaced. Give the path of a regular file")
    folder = target.parent
    if not folder.is_dir():
        raise ValueError(f"cannot write {what}: folder {str(folder)!r} does not exist; create it or choose another")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise ValueError(
            f"cannot write {what}: folder {str(folder)!r} is not writable; choose a folder you can write to"
        )
    return st


def write_atomic(path: str | os.PathLike[str], data: bytes | str, what: str = "file") -> Path:
    """Write ``data`` to ``path`` atomically under the rule of the module docstring; ValueError when refused."""
    target = Path(path)
    shown = str(path)
    st = check_target(target, what)
    folder = target.parent
    payload = data.encode("utf-8") if isinstance(data, str) else data
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=folder)
    except OSError as exc:
        raise ValueError(
            f"cannot write {what} in folder {str(folder)!r}: {exc.strerror or type(exc).__name__}; "
            "choose a folder you can write to"
        ) from None
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(payload)
            fh.flush()
            os.fsync(fh.fileno())
        if st is not None:
            os.chmod(tmp, stat.S_IMODE(st.st_mode))
        else:
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp, 0o666 & ~umask)
        os.replace(tmp, target)
    except OSError as exc:
        Path(tmp).unlink(missing_ok=True)
        raise ValueError(f"cannot write {what} {shown!r}: {exc.strerror or type(exc).__name__}") from None
    return target
