"""Atomic file output: a failed run never leaves a half-written file.

Each writer renders its whole content in memory first, then writes it to a
temporary file in the destination folder and renames it into place
(``os.replace`` is atomic on one file system).
"""

from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path
from typing import Any


def _umask() -> int:
    old = os.umask(0)
    os.umask(old)
    return old


def write_bytes(path: Path | str, data: bytes) -> Path:
    """Write ``data`` to ``path`` atomically; returns the path."""
    path = Path(path)
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
    """Write ``obj`` as indented JSON atomically."""
    return write_text(path, json.dumps(obj, indent=2, ensure_ascii=False) + "\n")
