"""Files on disk for the io writers and readers: a UTF-8 text file read with
an error that names the file, and safe writing through a temporary file
beside the target that is renamed over it only when complete, so a failure
never leaves a half-written output."""
from __future__ import annotations

import os
import tempfile
from pathlib import Path

from toolkit.errors import InputError

__all__ = ["read_text", "temp_beside", "atomic_write"]


def read_text(path: Path) -> str:
    """The text of ``path`` (UTF-8, a byte-order mark is dropped); a file that
    cannot be read or decoded raises a :class:`ValueError` naming it."""
    try:
        return path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError as e:
        raise InputError(f"{path}: not UTF-8 text (byte {e.start}: {e.reason})") from None
    except OSError as e:
        raise InputError(f"{path}: cannot be read ({e.strerror or e})") from None


def temp_beside(path: Path, suffix: str):
    """A temporary file in the folder of ``path`` with the permissions a
    normal new file gets (mkstemp alone makes it owner-only)."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=suffix, dir=path.parent)
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o666 & ~umask)
    return fd, tmp


def atomic_write(path: Path, writer, binary=False):
    """Write through a temporary file in the same folder, then rename, so
    that a failure never leaves a half-written file."""
    path = Path(path)
    fd, tmp = temp_beside(path, ".tmp")
    try:
        with os.fdopen(fd, "wb" if binary else "w", **({} if binary else {"encoding": "utf-8", "newline": "\n"})) as f:
            writer(f)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
