"""Writing reports: atomically (temp file + rename), or to standard output for ``-``."""

from __future__ import annotations

import errno
import os
import sys
from pathlib import Path

from ..errors import InputError


def write_output(target: str, text: str) -> None:
    if target == "-":
        sys.stdout.write(text)
        sys.stdout.flush()
        return
    write_atomic(Path(target), text)


def _new_temporary(folder: Path, name: str) -> tuple[int, str]:
    """A new file ``.NAME.<random>.tmp`` in ``folder``, created exclusively with mode 0600
    and opened for writing, as ``tempfile.mkstemp`` makes one (that module's import, with
    ``random`` and ``shutil``, cost a sixth of a small audit's time)."""
    flags = os.O_RDWR | os.O_CREAT | os.O_EXCL | getattr(os, "O_NOFOLLOW", 0) | getattr(os, "O_BINARY", 0)
    for _ in range(100):
        tmp = os.path.join(folder, f".{name}.{os.urandom(6).hex()}.tmp")
        try:
            return os.open(tmp, flags, 0o600), tmp
        except FileExistsError:
            continue
    raise FileExistsError(errno.EEXIST, "no free temporary name", str(folder))


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def write_atomic(path: Path, text: str) -> None:
    """Write ``text`` to ``path`` so readers see the old file or the whole new one."""
    folder = path.parent if str(path.parent) else Path(".")
    try:
        folder.mkdir(parents=True, exist_ok=True)
        fd, tmp = _new_temporary(folder, path.name)
    except OSError as exc:
        raise InputError(f"cannot write report: {exc.strerror or exc}", str(path)) from None
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
        os.chmod(tmp, 0o666 & ~_umask())   # mkstemp makes 0600; a report is an ordinary file
        os.replace(tmp, path)
    except BaseException as exc:  # also an interrupt: never leave the temporary file behind
        _remove(tmp)
        if isinstance(exc, OSError):
            raise InputError(f"cannot write report: {exc.strerror or exc}", str(path)) from None
        raise


def write_new(path: Path, text: str) -> None:
    """Write a file that must not exist yet; never overwrite.

    The file appears whole or not at all: the text goes to a temporary file beside it, which
    is then hard-linked to the name (a link fails if the name exists, atomically) and its
    temporary name removed. Where the file system has no hard links, the name is created
    exclusively and written in place.
    """
    folder = path.parent if str(path.parent) else Path(".")
    if os.path.lexists(path):
        raise InputError("already exists; not overwritten", str(path))
    try:
        fd, tmp = _new_temporary(folder, path.name)
    except OSError as exc:
        raise InputError(f"cannot write: {exc.strerror or exc}", str(path)) from None
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
        os.chmod(tmp, 0o666 & ~_umask())
        try:
            os.link(tmp, path)
        except FileExistsError:
            raise
        except OSError as exc:
            if exc.errno not in _NO_HARD_LINKS:
                raise
            with open(path, "x", encoding="utf-8", newline="\n") as fh:
                fh.write(text)
    except FileExistsError:
        raise InputError("already exists; not overwritten", str(path)) from None
    except OSError as exc:
        raise InputError(f"cannot write: {exc.strerror or exc}", str(path)) from None
    finally:
        _remove(tmp)


_NO_HARD_LINKS = {errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EXDEV, errno.EMLINK, errno.ENOSYS}


def _remove(path: str) -> None:
    try:
        os.unlink(path)
    except OSError:
        pass
