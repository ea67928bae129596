"""Files trimlog reads and writes: regular files only, every write atomic.

One helper for every file trimlog writes (``--json`` results, the report,
export files, the demo): the content goes to a temporary file in the target's
folder, is flushed to disk, and is renamed over the target only when complete.
A full disk, a file-size limit or a kill leaves the previous file intact and
no partial file under the target's name.

The target must be a new name or a regular file.  A symbolic link is written
through (its target is replaced, the link stays); a device, named pipe,
socket or folder is refused, so ``-o /dev/full`` never replaces a device
node.  Inputs (logs, profiles, sheets, the history database) must be regular
files too: a named pipe would block forever.
"""

from __future__ import annotations

import errno
import os
import secrets
import stat
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import IO

from trimlog.errors import TrimlogError

__all__ = [
    "OutputFileError",
    "check_input_file",
    "check_output_target",
    "file_stem",
    "os_reason",
    "read_regular_file",
    "write_atomically",
    "write_files_atomically",
]

Content = bytes | str | Callable[[IO[bytes]], None]


class OutputFileError(TrimlogError):
    """A file trimlog was asked to write cannot be written; nothing was changed."""


_REASONS = {
    errno.ENOSPC: "the disk is full",
    errno.EDQUOT: "the disk quota is exceeded",
    errno.EFBIG: "the file-size limit was reached",
    errno.EACCES: "permission denied",
    errno.EPERM: "permission denied",
    errno.EROFS: "the file system is read-only",
    errno.ENOENT: "the folder does not exist",
    errno.ENOTDIR: "a part of the path is not a folder",
    errno.EISDIR: "it is a folder",
    errno.ELOOP: "too many levels of symbolic links",
    errno.ENAMETOOLONG: "the name is too long",
}


def file_stem(name: str | os.PathLike[str]) -> str:
    """A file's stem: its name without folders, up to the first dot (the one rule).

    The flight a log is named for, the loading sheet that goes with it
    (``STEM.loading.toml``) and the history's flight names all use it, so the
    command line, the history and the dashboard agree.

    Parameters
    ----------
    name : str or path-like
        A file name or path.

    Returns
    -------
    str
        ``flight3.csv`` and ``flight3.loading.toml`` give ``flight3``; a name
        with nothing before its first dot (``.csv``) gives the whole name.

    Examples
    --------
    >>> file_stem("logs/flight3.csv"), file_stem("flight3.loading.toml"), file_stem(".csv")
    ('flight3', 'flight3', '.csv')
    """
    base = Path(name).name
    return base.split(".")[0] or base


def os_reason(exc: OSError) -> str:
    """Plain words for an operating-system error.

    Examples
    --------
    >>> os_reason(OSError(errno.ENOSPC, "No space left on device"))
    'the disk is full'
    """
    return _REASONS.get(exc.errno, exc.strerror or str(exc))


def _kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a named pipe"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def check_input_file(path: str | os.PathLike[str], what: str, *,
                     missing_ok: bool = False) -> Path:
    """Refuse an input that is not a regular file (named pipe, device, folder).

    Parameters
    ----------
    path : str or path-like
    what : str
        What the file is for the message ("log", "history database").
    missing_ok : bool
        Return quietly when nothing exists at ``path`` (a database to create).

    Returns
    -------
    Path

    Raises
    ------
    TrimlogError
        Missing (unless ``missing_ok``), unreadable, or not a regular file.

    Examples
    --------
    >>> check_input_file("/dev/null", "log")
    Traceback (most recent call last):
    ...
    trimlog.errors.TrimlogError: /dev/null: is a device, expected a regular file (the log)
    """
    p = Path(path)
    try:
        mode = os.stat(p).st_mode  # follows links: a link to a regular file is fine
    except FileNotFoundError:
        if missing_ok:
            return p
        raise TrimlogError(f"{p}: no such file (the {what})") from None
    except OSError as exc:
        raise TrimlogError(f"{p}: cannot read the {what}: {os_reason(exc)}") from None
    if not stat.S_ISREG(mode):
        raise TrimlogError(f"{p}: is {_kind(mode)}, expected a regular file (the {what})")
    return p


def read_regular_file(path: str | os.PathLike[str], what: str) -> bytes:
    """The bytes of a regular file; a named pipe, device or folder is refused without blocking.

    The file is opened without waiting (``O_NONBLOCK``) and checked on the open
    descriptor, so a pipe swapped in after a check cannot block the read.

    Raises
    ------
    TrimlogError
        Missing, unreadable, or not a regular file.

    Examples
    --------
    >>> read_regular_file("/dev/zero", "log")
    Traceback (most recent call last):
    ...
    trimlog.errors.TrimlogError: /dev/zero: is a device, expected a regular file (the log)
    """
    p = Path(path)
    try:
        fd = os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except FileNotFoundError:
        raise TrimlogError(f"{p}: no such file (the {what})") from None
    except IsADirectoryError:
        raise TrimlogError(f"{p}: is a folder, expected a regular file (the {what})") from None
    except OSError as exc:
        raise TrimlogError(f"{p}: cannot read the {what}: {os_reason(exc)}") from None
    try:
        mode = os.fstat(fd).st_mode
        if not stat.S_ISREG(mode):
            raise TrimlogError(f"{p}: is {_kind(mode)}, expected a regular file (the {what})")
        with os.fdopen(fd, "rb") as fh:
            fd = -1
            return fh.read()
    except OSError as exc:
        raise TrimlogError(f"{p}: cannot read the {what}: {os_reason(exc)}") from None
    finally:
        if fd >= 0:
            os.close(fd)


def check_output_target(path: str | os.PathLike[str], what: str) -> Path:
    """The file to replace for ``path``: itself, or the target of a symbolic link.

    Parameters
    ----------
    path : str or path-like
    what : str
        What is written, for the message ("report", "JSON result").

    Returns
    -------
    Path
        Where the content will go (links resolved).

    Raises
    ------
    OutputFileError
        The target is a device, named pipe, socket or folder, or its folder
        does not exist.
    """
    p = Path(path)
    target = Path(os.path.realpath(p)) if p.is_symlink() else p
    try:
        mode = os.stat(target).st_mode
    except FileNotFoundError:
        mode = None
    except OSError as exc:
        raise OutputFileError(f"cannot write the {what} to {p}: {os_reason(exc)}") from None
    if mode is not None and not stat.S_ISREG(mode):
        raise OutputFileError(
            f"cannot write the {what} to {p}: it is {_kind(mode)}; give a file name such as "
            f"{_example(what)}")
    folder = target.parent
    if not folder.is_dir():
        raise OutputFileError(
            f"cannot write the {what} to {p}: the folder {folder} does not exist")
    return target


def _example(what: str) -> str:
    return {"report": "report.pdf"}.get(what, "result.json")


def write_atomically(path: str | os.PathLike[str], content: Content, *, what: str) -> Path:
    """Write ``content`` to ``path`` so that the file is either complete or unchanged.

    Parameters
    ----------
    path : str or path-like
        New name, regular file, or a symbolic link to one (written through).
    content : bytes, str or callable
        The bytes, text (UTF-8), or a function writing to a binary file object.
    what : str
        What is written, for messages ("report", "JSON result", "export").

    Returns
    -------
    Path
        The path as given.

    Raises
    ------
    OutputFileError
        Not a regular target, or the write failed (disk full, file-size limit,
        permission); the previous file, if any, is unchanged and no temporary
        file is left.

    Examples
    --------
    >>> import tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> write_atomically(folder / "a.json", '{"x": 1}', what="JSON result").read_text()
    '{"x": 1}'
    """
    write_files_atomically([(Path(path), content)], what=what)
    return Path(path)


def write_files_atomically(items: Sequence[tuple[Path, Content]], *, what: str) -> list[Path]:
    """Write several files, each atomic; none is renamed into place until all are complete.

    Parameters
    ----------
    items : sequence of (Path, content)
        In the order to rename them (put the file that marks completeness last).
    what : str
        For messages.

    Returns
    -------
    list of Path
        The paths as given.

    Raises
    ------
    OutputFileError
        As :func:`write_atomically`; when raised before the renames, no target
        was changed.
    """
    targets = [check_output_target(p, what) for p, _ in items]
    temps: list[Path] = []
    try:
        for target, (_, content) in zip(targets, items, strict=True):
            temps.append(target.with_name(
                f".{target.name}.{os.getpid()}.{secrets.token_hex(4)}.tmp"))
            _write_temp(temps[-1], target, content)
        for tmp, target in zip(temps, targets, strict=True):
            os.replace(tmp, target)
        _sync_folders({t.parent for t in targets})
    except OSError as exc:
        for tmp in temps:
            _remove(tmp)
        where = items[len(temps) - 1][0] if temps else items[0][0]
        raise OutputFileError(
            f"cannot write the {what} to {where}: {os_reason(exc)}; no {what} was written "
            "and any previous file is unchanged (free some space or choose another "
            "location)") from None
    except BaseException:
        for tmp in temps:
            _remove(tmp)
        raise
    return [p for p, _ in items]


def _write_temp(tmp: Path, target: Path, content: Content) -> None:
    try:
        mode = stat.S_IMODE(os.stat(target).st_mode)
    except OSError:
        mode = None
    with open(tmp, "xb") as fh:
        if callable(content):
            content(fh)
        else:
            fh.write(content.encode("utf-8") if isinstance(content, str) else content)
        fh.flush()
        os.fsync(fh.fileno())
    if mode is not None:
        os.chmod(tmp, mode)  # replacing a file keeps its permissions


def _sync_folders(folders: set[Path]) -> None:
    for folder in folders:
        try:
            fd = os.open(folder, os.O_RDONLY)
        except OSError:
            continue
        try:
            os.fsync(fd)
        except OSError:
            pass  # some file systems cannot sync a folder; the rename is done
        finally:
            os.close(fd)


def _remove(tmp: Path) -> None:
    try:
        tmp.unlink(missing_ok=True)
    except OSError:
        pass  # the original error is the one to report
