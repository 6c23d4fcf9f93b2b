"""Writing answers and plots to files: atomically, onto regular files only.

Rules (issue: never replace a device, never leave debris):

* the target is a **new file or an existing regular file**; a symbolic link
  (the link itself, not a link in a parent folder), a device such as
  ``/dev/null``, a named pipe, a socket or a folder is refused -- the
  content is not written *through* links, so a link can never redirect an
  output onto another file;
* paths under ``/proc`` and ``/sys`` are refused, and so are names longer than
  the system allows (255 bytes per name, 4095 per path);
* the data goes to a hidden temporary file in the target's folder, is flushed
  to disk and renamed over the target in one step; an existing target keeps
  its permission mode (and, when run as root, its owner); a new file gets the
  usual mode (0666 minus the umask);
* the temporary file is removed on every exit path: errors, KeyboardInterrupt
  and any other exception -- the command line turns SIGTERM into one.

Every refusal is an :class:`~powerspec.errors.InputError` with a one-line message.
"""

from __future__ import annotations

import os
import stat
import tempfile
from pathlib import Path

from powerspec.errors import InputError
from powerspec.factors.matrix import clip

MAX_NAME_BYTES = 255
"""Longest file name (one path component), as on common file systems."""

MAX_PATH_BYTES = 4095
"""Longest path."""

REFUSED_ROOTS = ("/proc", "/sys")
"""Kernel pseudo-file systems: never a place for output."""


def _shown(p: str) -> str:
    return clip(p, 80, tail=True)


def _kind_of(mode: int) -> str:
    for test, name in ((stat.S_ISLNK, "a symbolic link"), (stat.S_ISDIR, "a folder"),
                       (stat.S_ISFIFO, "a named pipe (FIFO)"), (stat.S_ISCHR, "a device"),
                       (stat.S_ISBLK, "a device"), (stat.S_ISSOCK, "a socket")):
        if test(mode):
            return name
    return "not a regular file"


def check_output_path(path: str | os.PathLike) -> tuple[Path, os.stat_result | None]:
    """The output path and its current ``lstat`` (None for a new file), after the checks above.

    Cheap (no file is created); the command line calls it before any work.

    >>> import tempfile, os
    >>> d = tempfile.mkdtemp()
    >>> check_output_path(os.path.join(d, "new.json"))[1] is None
    True
    >>> check_output_path("/dev/null")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    powerspec.errors.InputError: cannot write '/dev/null': it is a device, not a regular file ...
    """
    try:
        text = os.fsdecode(os.fspath(path))
    except TypeError:
        raise InputError(f"an output file name is text, got {type(path).__name__}") from None
    if not text:
        raise InputError("the output file name is empty")
    if "\0" in text:
        raise InputError("the output file name contains a NUL character")
    shown = _shown(text)
    raw = os.fsencode(text)
    if len(raw) > MAX_PATH_BYTES:
        raise InputError(f"cannot write {shown}: the path is longer than {MAX_PATH_BYTES} bytes")
    p = Path(text)
    if text.endswith(os.sep) or p.name in ("", ".", ".."):
        raise InputError(f"cannot write {shown}: give a file name, not a folder")
    if len(os.fsencode(p.name)) > MAX_NAME_BYTES:
        raise InputError(
            f"cannot write {shown}: the file name is longer than {MAX_NAME_BYTES} bytes")
    folder = p.parent
    real = os.path.realpath(folder)
    for root in REFUSED_ROOTS:
        if real == root or real.startswith(root + "/"):
            raise InputError(f"cannot write {shown}: {root} holds system files, not output")
    if not folder.is_dir():
        raise InputError(f"cannot write {shown}: folder {_shown(str(folder))} does not exist")
    try:
        st = os.lstat(p)
    except FileNotFoundError:
        return p, None
    except OSError as exc:
        raise InputError(f"cannot write {shown}: {exc.strerror}") from None
    if not stat.S_ISREG(st.st_mode):
        raise InputError(
            f"cannot write {shown}: it is {_kind_of(st.st_mode)}, not a regular file "
            "(give a new or regular file; links are not followed)")
    return p, st


def _umask() -> int:
    old = os.umask(0o022)
    os.umask(old)
    return old


def write_atomic(path: str | os.PathLike, data: str | bytes) -> None:
    """Write ``data`` to ``path`` atomically (see the module docstring); returns None.

    Text is written as UTF-8 (undecodable bytes kept as they came).  Raises
    InputError for a refused path or any operating-system error, after removing
    the temporary file.

    >>> import tempfile, os
    >>> d = tempfile.mkdtemp(); target = os.path.join(d, "a.txt")
    >>> write_atomic(target, "hello\\n"); open(target).read(), os.listdir(d)
    ('hello\\n', ['a.txt'])
    """
    p, st = check_output_path(path)
    shown = _shown(str(p))
    mode = stat.S_IMODE(st.st_mode) if st is not None else 0o666 & ~_umask()
    # surrogateescape: a file name read from undecodable bytes is written back as those bytes
    payload = data.encode("utf-8", "surrogateescape") if isinstance(data, str) else bytes(data)
    folder = p.parent
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{p.name[:40]}.", suffix=".tmp", dir=folder)
    except OSError as exc:
        raise InputError(f"cannot write {shown}: {exc.strerror}") from None
    try:
        try:
            view = memoryview(payload)
            while view:
                view = view[os.write(fd, view):]
            os.fchmod(fd, mode)
            if st is not None and os.geteuid() == 0:
                os.fchown(fd, st.st_uid, st.st_gid)
            os.fsync(fd)
        finally:
            os.close(fd)
        os.replace(tmp, p)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(exc, OSError):
            raise InputError(f"cannot write {shown}: {exc.strerror or exc}") from None
        raise


__all__ = ["MAX_NAME_BYTES", "MAX_PATH_BYTES", "REFUSED_ROOTS", "check_output_path", "write_atomic"]
