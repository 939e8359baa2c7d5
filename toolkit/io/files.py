"""Files on disk for the io writers and readers: a UTF-8 text file read with
an error that names the file, and safe writing through a temporary file
beside the target that is renamed over it only when complete, so a failure
never leaves a half-written output, and the check that an output is not one
of the command's inputs."""
from __future__ import annotations

import json
import os
import tempfile
from contextlib import contextmanager
from pathlib import Path

from toolkit.errors import InputError

__all__ = ["read_text", "read_json", "temp_beside", "replacing", "atomic_write", "same_file", "refuse_input_as_output"]


def read_text(path: Path) -> str:
    """The text of ``path`` (UTF-8, a byte-order mark is dropped); a file that
    cannot be read or decoded raises a :class:`ValueError` naming it."""
    try:
        return path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError as e:
        raise InputError(f"{path}: not UTF-8 text (byte {e.start}: {e.reason})") from None
    except OSError as e:
        raise InputError(f"{path}: cannot be read ({e.strerror or e})") from None


def read_json(path, what: str = "file"):
    """The JSON value in ``path``; a missing file, unreadable text, invalid
    JSON or nesting too deep raises one :class:`InputError` naming the file
    (``what`` says which file it is, e.g. ``"S-N curve data file"``)."""
    p = Path(path)
    if not p.is_file():
        raise InputError(f"{what} not found: {p}")
    try:
        return json.loads(read_text(p))
    except json.JSONDecodeError as e:
        raise InputError(f"{p}: not valid JSON (line {e.lineno}, column {e.colno}: {e.msg})") from None
    except RecursionError:
        raise InputError(f"{p}: nested too deeply") from None


def temp_beside(path: Path, suffix: str):
    """A temporary file in the folder of ``path`` with the permissions a
    normal new file gets (mkstemp alone makes it owner-only)."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=suffix, dir=path.parent)
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o666 & ~umask)
    return fd, tmp


@contextmanager
def replacing(path, suffix: str = ".tmp"):
    """Context for writing ``path`` whole or not at all: yields the name of a
    temporary file beside it (for writers that take a file name); when the
    block ends normally the temporary file is renamed over ``path``, on any
    error or interruption it is removed and ``path`` is left as it was."""
    path = Path(path)
    fd, tmp = temp_beside(path, suffix)
    os.close(fd)
    try:
        yield tmp
        os.replace(tmp, path)
    except BaseException as e:
        if os.path.exists(tmp):
            os.unlink(tmp)
        if isinstance(e, OSError) and e.filename is None and e.errno is not None:   # e.g. a full disk:
            raise OSError(e.errno, e.strerror, str(path)) from None                 # name the file
        raise


def atomic_write(path: Path, writer, binary=False):
    """Write through a temporary file in the same folder, then rename, so
    that a failure never leaves a half-written file (see :func:`replacing`);
    ``writer(f)`` writes to the open file (text: UTF-8, ``\\n`` line ends)."""
    with replacing(path) as tmp:
        with open(tmp, "wb" if binary else "w", **({} if binary else {"encoding": "utf-8", "newline": "\n"})) as f:
            writer(f)


def same_file(a, b) -> bool:
    """Whether paths ``a`` and ``b`` name one file (after resolving links; an
    existing pair is compared by device and inode, so hard links count)."""
    a, b = Path(a), Path(b)
    try:
        return os.path.samefile(a, b)
    except OSError:
        return a.resolve() == b.resolve()


def refuse_input_as_output(out, inputs, what="--out"):
    """InputError if the output ``out`` is one of the files in ``inputs`` (or
    an input folder itself): an output never overwrites what it is made from."""
    for p in inputs:
        if same_file(out, p):
            raise InputError(f"{what} {out} is an input of this command ({p}); choose another output")
