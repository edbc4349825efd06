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

__all__ = ["write_atomic", "write_together", "check_writable", "describe", "sweep", "output_error",
           "safe_filename", "read_text", "parse_toml", "nesting_depth", "MAX_NESTING", "parse_json"]

_REASONS = {
    errno.ENOSPC: "the disk is full",
    errno.EDQUOT: "the disk quota is exceeded",
    errno.EROFS: "the file system is read-only",
    errno.EACCES: "permission denied",
    errno.EPERM: "permission denied",
    errno.ENOENT: "the folder does not exist",
    errno.ENOTDIR: "a part of the path is not a folder",
    errno.EFBIG: "the file is larger than this process may write (file size limit, ulimit -f)",
    errno.ENAMETOOLONG: "the path is too long (at most 255 bytes per name and about 4,096 for the whole path)",
    errno.ELOOP: "the path holds a link that loops",
    errno.EIO: "an input/output error of the device",
    errno.EMFILE: "too many open files",
}


def _reason(exc: OSError) -> str:
    return _REASONS.get(exc.errno, exc.strerror or str(exc))


def output_error(path, exc: OSError) -> OutputError:
    """The one-line :class:`OutputError` for an OS error met while writing ``path``."""
    return OutputError(f"cannot write {path}: {_reason(exc)}")


def _exists(path: Path) -> bool:
    """Whether a name is taken (a dangling link counts: writing through it would create its target)."""
    try:
        os.lstat(path)
    except FileNotFoundError:
        return False
    except NotADirectoryError:
        return False
    return True


def describe(path: str | Path) -> str | None:
    """What ``path`` is when it cannot serve as an output folder ("a file", "a device", "a link to a missing
    target", "a link that loops"), or None when it is a folder or does not exist yet (it is then created).
    Other OS errors (a name that is too long) raise :class:`OutputError`."""
    import stat

    path = Path(path)
    try:
        info = os.stat(path)
    except FileNotFoundError:
        try:
            os.lstat(path)
        except FileNotFoundError:
            return None
        except OSError as exc:
            raise output_error(path, exc) from None
        return "a link to a missing target"
    except NotADirectoryError:
        return "below a file (a part of the path is not a folder)"
    except OSError as exc:
        if exc.errno == errno.ELOOP:
            return "a link that loops"
        raise output_error(path, exc) from None
    if stat.S_ISDIR(info.st_mode):
        return None
    if stat.S_ISREG(info.st_mode):
        return "a file"
    if stat.S_ISCHR(info.st_mode) or stat.S_ISBLK(info.st_mode):
        return "a device"
    return "not a folder"


def check_writable(path: str | Path, force: bool = False) -> Path:
    """Raise :class:`OutputError` if ``path`` exists and ``force`` is false, or if its folder cannot take a
    new file. Returns the path."""
    path = Path(path)
    try:
        exists = _exists(path)
        if exists and not force:
            raise OutputError(f"{path} already exists; give {{force}} to overwrite it", mentions=("force",))
        if exists and path.is_dir():
            raise OutputError(f"{path} is a folder, not a file")
    except OutputError:
        raise
    except OSError as exc:
        raise output_error(path, exc) from None
    return path


# -- temporary names: short, ours, and removable by the next run once their writer is gone ------------------

#: Our temporary files: hidden, short (a 255-byte target name still fits beside it), with the writer's
#: process id so that a later run can tell a dead writer's file from a live one's.
_TMP_PREFIX = ".cp"
_TMP_RE = re.compile(r"^\.cp(\d{1,10})-[A-Za-z0-9_]{6,12}\.tmp$")
_swept: set[str] = set()


def _alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError, OSError):
        return True  # someone else's live process (or an odd number): keep its file
    return True


def sweep(folder: str | Path) -> list[str]:
    """Remove the temporary files that killed Counterpoise runs left in ``folder``: only names of our own
    pattern (``.cp<pid>-<random>.tmp``) whose writing process no longer runs on this machine. Returns the
    names removed; errors are ignored (a leftover is harmless and hidden)."""
    removed = []
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for entry in entries:
        match = _TMP_RE.match(entry.name)
        if not match or _alive(int(match.group(1))):
            continue
        try:
            if entry.is_file(follow_symlinks=False):
                os.unlink(entry.path)
                removed.append(entry.name)
        except OSError:
            pass
    return removed


def _sweep_once(folder: Path) -> None:
    key = os.path.abspath(folder)
    if key not in _swept:
        _swept.add(key)
        sweep(folder)


_FS_IOC_GETFLAGS = 0x80086601
_FS_APPEND_FL = 0x20


def _folder_flags(folder: Path) -> int:
    """The folder's inode flags (Linux ``FS_IOC_GETFLAGS``), 0 where they cannot be read."""
    try:
        import array
        import fcntl

        fd = os.open(folder, os.O_RDONLY)
    except (ImportError, OSError):
        return 0
    try:
        buf = array.array("l", [0])
        fcntl.ioctl(fd, _FS_IOC_GETFLAGS, buf, True)
        return int(buf[0])
    except (OSError, ValueError, OverflowError):
        return 0
    finally:
        os.close(fd)


def _check_folder_kind(folder: Path) -> None:
    if _folder_flags(folder) & _FS_APPEND_FL:
        raise OutputError(f"cannot write into {folder}: the folder allows appending only (no file in it can be "
                          "renamed or removed), so no file can be written whole there; choose another folder")


class _FolderLock:
    """An exclusive lock on a folder (``flock`` on the folder itself, so no lock file is left behind), held
    while a set of files is checked and put in place. Where locks are not available it does nothing."""

    def __init__(self, folder: Path):
        self.folder = folder
        self.fd = None

    def __enter__(self):
        try:
            import fcntl

            self.fd = os.open(self.folder, os.O_RDONLY)
            fcntl.flock(self.fd, fcntl.LOCK_EX)
        except (ImportError, OSError):
            if self.fd is not None:
                os.close(self.fd)
            self.fd = None
        return self

    def __exit__(self, *exc):
        if self.fd is not None:
            os.close(self.fd)  # closing releases the lock
            self.fd = None
        return False


_STOPS = ("SIGINT", "SIGTERM", "SIGHUP")


def _hold_signals():
    """Block Ctrl-C, SIGTERM and SIGHUP for the moment the files of a set are put in place; returns the
    mask to restore (None where signals cannot be blocked)."""
    try:
        import signal

        stops = {getattr(signal, name) for name in _STOPS if hasattr(signal, name)}
        return signal.pthread_sigmask(signal.SIG_BLOCK, stops)
    except (ImportError, AttributeError, ValueError, OSError):
        return None


def _release_signals(mask) -> None:
    if mask is not None:
        import signal

        signal.pthread_sigmask(signal.SIG_SETMASK, mask)


def _prepare(folder: Path, target: Path) -> None:
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise output_error(target, exc) from None
    _check_folder_kind(folder)
    _sweep_once(folder)


def _temporary(folder: Path, target: Path, data) -> str:
    """Write ``data`` into a new temporary file in ``folder`` (flushed to disk); returns its name."""
    tmp_name = None
    try:
        fd, tmp_name = tempfile.mkstemp(dir=folder, prefix=f"{_TMP_PREFIX}{os.getpid()}-", suffix=".tmp")
        with os.fdopen(fd, "wb") as handle:
            if callable(data):
                data(handle)
            else:
                handle.write(data.encode("utf-8") if isinstance(data, str) else data)
            handle.flush()
            os.fsync(handle.fileno())
        done, tmp_name = tmp_name, None
        return done
    except OutputError:
        raise
    except OSError as exc:
        raise output_error(target, exc) from None
    finally:
        if tmp_name is not None:
            _remove(tmp_name)


def _remove(name) -> None:
    try:
        os.unlink(name)
    except OSError:
        pass


def _commit(tmp_name: str, path: Path, force: bool) -> None:
    """Put a finished temporary file in place under ``path`` (raises OSError or OutputError)."""
    if force:
        os.replace(tmp_name, path)
        return
    # link fails if the name appeared meanwhile: never overwrite without --force
    try:
        os.link(tmp_name, path)
    except FileExistsError:
        raise OutputError(f"{path} already exists; give {{force}} to overwrite it", mentions=("force",)) from None
    except OSError:
        if _exists(path):
            raise OutputError(f"{path} already exists; give {{force}} to overwrite it", mentions=("force",)) from None
        os.replace(tmp_name, path)
    else:
        try:
            os.unlink(tmp_name)
        except OSError:
            pass  # the file is in place, whole; a hidden name we may not remove is swept later


def write_atomic(path: str | Path, data: bytes | str | Callable[[BinaryIO], None], *,
                 force: bool = False) -> Path:
    """Write ``data`` (bytes, text, or a function that writes to a binary file object) to ``path``
    atomically.

    The folder is created if missing. With ``force=False`` an existing file is never replaced (checked
    again just before the rename). Any OS error becomes an :class:`OutputError` with a one-line reason, and
    the temporary file is removed.
    """
    return write_together([(path, data)], force=force)[0]


def write_together(items, *, force: bool = False) -> list[Path]:
    """Write several files that belong together (the files of one work order) so that they are all new or
    none is: ``items`` is a list of ``(path, data)`` as for :func:`write_atomic`.

    Every file is first written whole to a temporary name. Then, holding a lock on each folder (so that two
    runs writing the same names cannot interleave), every name is checked (without ``force`` an existing one
    stops them all) and the files are put in place one after the other. If putting one in place fails,
    the new files already placed are removed again (without ``force``). Returns the paths.
    """
    items = [(Path(p), d) for p, d in items]
    for path, _ in items:
        check_writable(path, force)
    temps: list[str | None] = []
    placed: list[Path] = []
    try:
        for path, data in items:
            folder = path.parent if str(path.parent) else Path(".")
            _prepare(folder, path)
            temps.append(_temporary(folder, path, data))
        folders = sorted({os.path.abspath(p.parent if str(p.parent) else ".") for p, _ in items})
        locks = [_FolderLock(Path(f)) for f in folders]
        held = _hold_signals()  # a stop signal waits until the set is in place (or rolled back)
        for lock in locks:
            lock.__enter__()
        try:
            for path, _ in items:
                check_writable(path, force)
            for n, (path, _) in enumerate(items):
                try:
                    _commit(temps[n], path, force)
                except OutputError:
                    raise
                except OSError as exc:
                    raise output_error(path, exc) from None
                temps[n] = None
                placed.append(path)
        except BaseException:
            if not force:
                for path in placed:
                    _remove(path)
            raise
        finally:
            for lock in reversed(locks):
                lock.__exit__()
            _release_signals(held)
        for path in placed:
            try:
                os.chmod(path, 0o644 & ~_umask())
            except OSError:
                pass
    finally:
        for name in temps:
            if name is not None:
                _remove(name)
    return placed


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
