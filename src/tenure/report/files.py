"""Atomic file output: a failed run never leaves a half-written file.

Each writer renders its whole content in memory first, then writes it to a
temporary file in the destination folder and renames it into place
(``os.replace`` is atomic on one file system).
"""

from __future__ import annotations

import errno
import json
import math
import os
import tempfile
from pathlib import Path
from typing import Any


class OutputError(Exception):
    """An output that cannot be written; the message names the path and the reason (the CLI exits 2)."""


def describe_os_error(exc: OSError) -> str:
    """``path: reason`` of an OSError in words a user can act on (a folder is called a folder)."""
    reasons = {errno.EISDIR: "is a directory, not a file", errno.ENOTDIR: "a part of the path is a file, not a directory",
               errno.EACCES: "permission denied", errno.EPERM: "operation not permitted",
               errno.ENOSPC: "no space left on the device", errno.EROFS: "the file system is read-only",
               errno.ENOENT: "no such file or folder", errno.EDQUOT: "disk quota exceeded"}
    reason = reasons.get(exc.errno, exc.strerror or str(exc))
    where = exc.filename if exc.filename is not None else ""
    return f"{where}: {reason}" if where else reason


def _umask() -> int:
    old = os.umask(0)
    os.umask(old)
    return old


def write_bytes(path: Path | str, data: bytes) -> Path:
    """Write ``data`` to ``path`` atomically; returns the path.

    An OSError (disk full, permission, a folder in the way) becomes :class:`OutputError` naming the path.
    """
    try:
        return _write_bytes(Path(path), data)
    except OSError as exc:
        if exc.filename is None:
            exc.filename = str(path)
        raise OutputError(describe_os_error(exc)) from None


def _write_bytes(path: Path, data: bytes) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    try:
        # mkstemp makes the file private; give it the permissions an ordinary new file would get
        os.chmod(tmp, 0o666 & ~_umask())
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    return path


def write_text(path: Path | str, text: str) -> Path:
    """Write UTF-8 ``text`` to ``path`` atomically."""
    return write_bytes(path, text.encode("utf-8"))


def write_json(path: Path | str, obj: Any) -> Path:
    """Write ``obj`` as indented JSON atomically; NaN and infinities are written as null (JSON has neither)."""
    return write_text(path, dumps(obj) + "\n")


def finite(obj: Any) -> Any:
    """``obj`` with every NaN or infinite float replaced by None, for strict JSON."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: finite(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [finite(v) for v in obj]
    if hasattr(obj, "dtype") and getattr(obj, "shape", None) == ():  # numpy scalar
        return finite(obj.item())
    return obj


def _key(k: Any) -> str:
    """A mapping key as the standard encoder turns it into a JSON name."""
    return k if isinstance(k, str) else json.dumps(k)


def dumps(obj: Any, indent: int = 2, levels: int = 2) -> str:
    """Strict JSON text (``allow_nan=False``) of ``obj`` after :func:`finite`.

    Mappings and lists are laid out one item per line down to ``levels`` levels of nesting; below
    that each value is written on one line by the standard library's C encoder.  So plan.json holds
    one unit, one year and one class per line: readable, and several times faster to write than the
    fully indented form (whose encoder is pure Python: 1.1 s for 10,000 units).  The text parses to
    the same value either way."""
    def enc(o: Any) -> str:
        return json.dumps(o, ensure_ascii=False, allow_nan=False)

    def walk(o: Any, level: int, pad: str) -> str:
        if level >= levels or not isinstance(o, (dict, list, tuple)) or not o:
            return enc(o)
        inner = pad + " " * indent
        if isinstance(o, dict):
            body = ",\n".join(f"{inner}{enc(_key(k))}: {walk(v, level + 1, inner)}" for k, v in o.items())
            return "{\n" + body + "\n" + pad + "}"
        return "[\n" + ",\n".join(f"{inner}{walk(v, level + 1, inner)}" for v in o) + "\n" + pad + "]"

    try:
        # the C encoder finds a NaN or infinity in a fraction of the time finite() takes to look
        return walk(obj, 0, "")
    except (ValueError, TypeError):  # TypeError: numpy scalars, which finite() turns into Python numbers
        return walk(finite(obj), 0, "")
