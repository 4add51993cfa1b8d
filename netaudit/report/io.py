"""Writing reports: atomically (temp file + rename), or to standard output for ``-``."""

from __future__ import annotations

import os
import sys
import tempfile
from pathlib import Path

from ..errors import InputError


def write_output(target: str, text: str) -> None:
    if target == "-":
        sys.stdout.write(text)
        sys.stdout.flush()
        return
    write_atomic(Path(target), text)


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def write_atomic(path: Path, text: str) -> None:
    """Write ``text`` to ``path`` so readers see the old file or the whole new one."""
    folder = path.parent if str(path.parent) else Path(".")
    try:
        folder.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    except OSError as exc:
        raise InputError(f"cannot write report: {exc.strerror or exc}", str(path)) from None
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
        os.chmod(tmp, 0o666 & ~_umask())   # mkstemp makes 0600; a report is an ordinary file
        os.replace(tmp, path)
    except OSError as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise InputError(f"cannot write report: {exc.strerror or exc}", str(path)) from None


def write_new(path: Path, text: str) -> None:
    """Write a file that must not exist yet; never overwrite."""
    try:
        with open(path, "x", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
    except FileExistsError:
        raise InputError("already exists; not overwritten", str(path)) from None
    except OSError as exc:
        raise InputError(f"cannot write: {exc.strerror or exc}", str(path)) from None
