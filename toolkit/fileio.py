"""Safe output files: atomic writes, no silent overwrite, file names that stay inside their folder.

Every file Counterpoise writes goes through :func:`write_atomic`: the content is written to a temporary file
in the target folder, flushed to disk and renamed into place, so an interrupted write leaves the old file or
none, never half a file. An existing file is replaced only with ``force=True``.
"""

from __future__ import annotations

import errno
import os
import re
import tempfile
import unicodedata
from pathlib import Path
from typing import Callable, BinaryIO

from toolkit.errors import BadInput, OutputError

__all__ = ["write_atomic", "check_writable", "safe_filename", "read_text", "parse_toml", "nesting_depth",
           "MAX_NESTING", "parse_json"]

_REASONS = {
    errno.ENOSPC: "the disk is full",
    errno.EDQUOT: "the disk quota is exceeded",
    errno.EROFS: "the file system is read-only",
    errno.EACCES: "permission denied",
    errno.EPERM: "permission denied",
    errno.ENOENT: "the folder does not exist",
    errno.ENOTDIR: "a part of the path is not a folder",
}


def _reason(exc: OSError) -> str:
    return _REASONS.get(exc.errno, exc.strerror or str(exc))


def check_writable(path: str | Path, force: bool = False) -> Path:
    """Raise :class:`OutputError` if ``path`` exists and ``force`` is false, or if its folder cannot take a
    new file. Returns the path."""
    path = Path(path)
    if path.exists() and not force:
        raise OutputError(f"{path} already exists; give --force to overwrite it")
    if path.is_dir():
        raise OutputError(f"{path} is a folder, not a file")
    return path


def write_atomic(path: str | Path, data: bytes | str | Callable[[BinaryIO], None], *,
                 force: bool = False) -> Path:
    """Write ``data`` (bytes, text, or a function that writes to a binary file object) to ``path``
    atomically.

    The folder is created if missing. With ``force=False`` an existing file is never replaced (checked
    again just before the rename). Any OS error becomes an :class:`OutputError` with a one-line reason, and
    the temporary file is removed.
    """
    path = check_writable(path, force)
    folder = path.parent if str(path.parent) else Path(".")
    tmp_name = None
    try:
        folder.mkdir(parents=True, exist_ok=True)
        fd, tmp_name = tempfile.mkstemp(dir=folder, prefix=f".{path.name}.", suffix=".tmp")
        with os.fdopen(fd, "wb") as handle:
            if callable(data):
                data(handle)
            else:
                handle.write(data.encode("utf-8") if isinstance(data, str) else data)
            handle.flush()
            os.fsync(handle.fileno())
        if force:
            os.replace(tmp_name, path)
        else:
            # link fails if the name appeared meanwhile: never overwrite without --force
            try:
                os.link(tmp_name, path)
            except FileExistsError:
                raise OutputError(f"{path} already exists; give --force to overwrite it") from None
            except OSError:
                if path.exists():
                    raise OutputError(f"{path} already exists; give --force to overwrite it") from None
                os.replace(tmp_name, path)
            else:
                os.unlink(tmp_name)
        tmp_name = None
        os.chmod(path, 0o644 & ~_umask())
    except OutputError:
        raise
    except OSError as exc:
        raise OutputError(f"cannot write {path}: {_reason(exc)}") from None
    finally:
        if tmp_name is not None:
            try:
                os.unlink(tmp_name)
            except OSError:
                pass
    return path


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


_UNSAFE = re.compile(r"[^A-Za-z0-9._-]+")


def safe_filename(text: str, default: str = "order", max_length: int = 80) -> str:
    """A file name made from user text (an order number) that cannot leave its folder.

    Letters are folded to ASCII, anything but letters, digits, ``.``, ``_`` and ``-`` becomes ``_``, leading
    dots are removed (no hidden files, no ``..``), and the result is cut to ``max_length``.

    >>> safe_filename("WO 2026/117"), safe_filename("../../etc/passwd"), safe_filename("..")
    ('WO_2026_117', 'etc_passwd', 'order')
    """
    folded = unicodedata.normalize("NFKD", str(text)).encode("ascii", "ignore").decode("ascii")
    name = _UNSAFE.sub("_", folded).strip("._-")
    name = re.sub(r"\.{2,}", ".", name)[:max_length].strip("._-")
    if not name or name.upper() in _RESERVED:
        return default
    return name


_RESERVED = {"CON", "PRN", "AUX", "NUL", *(f"COM{i}" for i in range(1, 10)), *(f"LPT{i}" for i in range(1, 10))}


def read_text(path: str | Path, what: str, max_bytes: int) -> str:
    """The UTF-8 text of an input file (a table, a job, a runs or coefficients file), read without
    changing it.

    Refused with :class:`BadInput` naming the file: missing, a folder, unreadable, larger than
    ``max_bytes`` (checked before reading, so a huge file cannot exhaust memory), or not UTF-8 (with the
    line of the first bad byte). A byte-order mark is allowed. ``what`` names the kind of file in messages.
    """
    path = Path(path)
    try:
        size = path.stat().st_size
    except FileNotFoundError:
        raise BadInput(f"{path}: no such {what}") from None
    except OSError as exc:
        raise BadInput(f"{path}: cannot read ({_reason(exc)})") from None
    if not path.is_file():
        raise BadInput(f"{path}: not a file; give a {what}")
    if size > max_bytes:
        raise BadInput(f"{path}: {size} bytes is too large for a {what} (at most {max_bytes})")
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise BadInput(f"{path}: cannot read ({_reason(exc)})") from None
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise BadInput(f"{path}, line {line}: not UTF-8 text; save the {what} as UTF-8") from None


#: Deepest nesting of arrays and tables (or JSON lists and objects) an input file may have. Our files nest
#: four deep at most; deeper is a typing error or an attempt to exhaust the reader's recursion.
MAX_NESTING = 12


def nesting_depth(value, limit: int = MAX_NESTING) -> int:
    """How deep lists and dicts nest in ``value`` (a scalar is 0), counted without recursion and stopping
    once ``limit`` is exceeded (the result is then ``limit + 1``).

    >>> nesting_depth({"a": [1, [2]]}), nesting_depth(3), nesting_depth([[[[]]]], limit=2)
    (3, 0, 3)
    """
    deepest = 0
    stack = [(value, 1)]
    while stack:
        item, depth = stack.pop()
        if isinstance(item, dict):
            children = item.values()
        elif isinstance(item, list):
            children = item
        else:
            continue
        deepest = max(deepest, depth)
        if deepest > limit:
            return limit + 1
        stack.extend((child, depth + 1) for child in children)
    return deepest


def _too_deep(origin: str) -> BadInput:
    return BadInput(f"{origin}: arrays or tables nested more than {MAX_NESTING} deep; this file's values nest "
                    "a few levels at most")


def _shallow(data, origin: str):
    """``data`` if it nests at most :data:`MAX_NESTING` deep, else BadInput."""
    if nesting_depth(data) > MAX_NESTING:
        raise _too_deep(origin)
    return data


def parse_toml(text: str, origin: str) -> dict:
    r"""Parse TOML text; a syntax error becomes :class:`BadInput` naming ``origin``, the line and column.

    Arrays and tables nested more than :data:`MAX_NESTING` deep are refused (the TOML reader would
    otherwise run out of recursion on a file nested a thousand deep).

    >>> parse_toml("a = 1\nb = = 2\n", "runs.toml")
    Traceback (most recent call last):
    ...
    toolkit.errors.BadInput: runs.toml: not valid TOML: Invalid value (at line 2, column 5)
    >>> parse_toml("a = " + "[" * 1000 + "]" * 1000, "runs.toml")
    Traceback (most recent call last):
    ...
    toolkit.errors.BadInput: runs.toml: arrays or tables nested more than 12 deep; ...
    """
    import tomllib

    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        message = str(exc)
        if "end of document" in message:  # name the line and column of the end of the file
            lines = text.split("\n")
            message = message.replace("end of document", f"line {len(lines)}, column {len(lines[-1]) + 1}, "
                                                         f"the end of the file")
        raise BadInput(f"{origin}: not valid TOML: {message}") from None
    except RecursionError:
        raise _too_deep(origin) from None
    return _shallow(data, origin)


def parse_json(text: str, origin: str):
    """Parse JSON text; a syntax error or nesting deeper than :data:`MAX_NESTING` becomes :class:`BadInput`
    naming ``origin`` (and the line and column of a syntax error)."""
    import json

    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise BadInput(f"{origin}: not valid JSON (line {exc.lineno}, column {exc.colno}): {exc.msg}") from None
    except RecursionError:
        raise _too_deep(origin) from None
    return _shallow(data, origin)
