"""The output folder as one transaction: every run's files appear together or not at all.

Layout of an output folder (docs/outputs.md states the guarantee)::

    OUT/plan.json   -> .tenure/current/plan.json      one relative link per output name
    OUT/manifest.json -> .tenure/current/manifest.json
    OUT/.tenure/lock                                   held with flock while a run uses the folder
    OUT/.tenure/current -> sets/<run id>               the one switch
    OUT/.tenure/sets/<run id>/                         a complete set, manifest.json included
    OUT/.tenure/sets/<run id>.part/                    a set being written (never current)

A run renders every file into ``sets/<run id>.part``, writes the manifest
(name, size and sha256 of each file) last, renames the folder to
``sets/<run id>`` and then makes ``current`` point at it with one atomic
``rename`` of a symbolic link.  Each output name in OUT is a link through
``current``, so every name switches to the new set at the same instant.  A
process killed at any point leaves ``current`` naming either the old
complete set or the new one; leftovers (``*.part``, sets that are not
current) are removed by the next run under the lock.  Names that are not
tenure's are never touched.
"""

from __future__ import annotations

import datetime as _dt
import fcntl
import hashlib
import json
import os
import secrets
import shutil
from pathlib import Path

from .files import OutputError, describe_os_error

STATE = ".tenure"
MANIFEST = "manifest.json"
#: every name any tenure command writes into an output folder (a real file of such a name from an older
#: version of tenure is adopted into the first set; any other name is left alone)
KNOWN_NAMES = ("plan.json", "units.csv", "years.csv", "buy-list.csv", "report.html", "plan.xlsx", "compare.json", "compare.csv",
               "sweep.json", "sweep.csv", "sensitivity.csv", "hedge.json", "hedge.csv", "fitted.toml", "fit.json",
               "fit.html", MANIFEST)
_SYSTEM_ROOTS = ("/proc", "/sys", "/dev")


def new_run_id(now: _dt.datetime | None = None) -> str:
    """A run id: UTC time of the run and 6 random hex digits, e.g. ``20261202T061500Z-3f9a1c``."""
    now = now or _dt.datetime.now(_dt.timezone.utc)
    return f"{now:%Y%m%dT%H%M%SZ}-{secrets.token_hex(3)}"


def check_out(out: Path, names: tuple[str, ...] = ()) -> None:
    """Refuse an output folder that cannot be used, before any work is done.

    ``out`` must be a folder or creatable as one, writable, outside /proc, /sys and /dev, and no output name
    in ``names`` may be taken by a folder or a non-tenure link.
    """
    p = Path(os.path.abspath(out))
    for root in _SYSTEM_ROOTS:
        if str(p) == root or str(p).startswith(root + "/"):
            raise OutputError(f"--out {out}: is under {root}, a system folder; give an ordinary folder")
    if p.exists() and not p.is_dir():
        kind = "a device or special file" if not p.is_file() else "a file"
        raise OutputError(f"--out {out}: is {kind}, not a folder; give a folder (it is created when missing)")
    anc = p
    while not anc.exists():
        anc = anc.parent
    if not anc.is_dir():
        raise OutputError(f"--out {out}: {anc} is a file, so the folder cannot be created there")
    if not os.access(anc, os.W_OK | os.X_OK):
        what = "folder" if anc == p else f"parent folder {anc}"
        raise OutputError(f"--out {out}: the {what} is not writable (permission denied)")
    for name in names:
        q = p / name
        if q.is_dir() and not q.is_symlink():
            raise OutputError(f"--out {out}: {q} is a directory; tenure writes a file of that name "
                              "(move the folder away or choose another --out)")


class OutputFolder:
    """A lock on an output folder and a set of files written as one transaction.

    Use as a context manager: ``with OutputFolder(out, "plan") as tx: write into tx.staging; tx.commit()``.
    Leaving without :meth:`commit` removes the staging folder and leaves the folder as it was.
    """

    def __init__(self, out: Path | str, command: str, names: tuple[str, ...] = (), *, wait: bool = False):
        self.out = Path(out)
        self.command = command
        self.names = names
        self.wait = wait
        self.run_id = new_run_id()
        self.state = self.out / STATE
        self.staging = self.state / "sets" / f"{self.run_id}.part"
        self.committed = False
        self._fd: int | None = None
        self._created: list[Path] = []

    # -- lock -------------------------------------------------------------------------------------------
    def __enter__(self) -> "OutputFolder":
        check_out(self.out, self.names)
        try:
            missing = []  # the folder and any parents not there yet, outermost first (--out out/fleet)
            d = self.out
            while not d.exists() and d != d.parent:
                missing.insert(0, d)
                d = d.parent
            for d in (*missing, self.state, self.state / "sets"):
                # mkdir, not exists() then mkdir(): two runs starting together may both find it missing
                try:
                    d.mkdir()
                    self._created.append(d)
                except FileExistsError:
                    if not d.is_dir():
                        raise
            self._lock()
            self._clean()
            self.staging.mkdir()
        except OSError as exc:
            self._release()
            self._remove_created()
            raise OutputError(f"--out {self.out}: {describe_os_error(exc)}") from None
        return self

    def _lock(self) -> None:
        path = self.state / "lock"
        fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o644)
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | (0 if self.wait else fcntl.LOCK_NB))
        except BlockingIOError:
            holder = os.read(fd, 300).decode("utf-8", "replace").strip() or "another tenure run"
            os.close(fd)
            raise OutputError(f"--out {self.out}: another tenure run is writing to this folder ({holder}); wait "
                              "for it to finish or choose another --out") from None
        os.ftruncate(fd, 0)
        started = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M:%S UTC")
        os.pwrite(fd, f"pid {os.getpid()}, tenure {self.command}, run {self.run_id}, started {started}\n".encode(), 0)
        self._fd = fd

    def __exit__(self, *exc) -> None:
        if not self.committed:
            shutil.rmtree(self.staging, ignore_errors=True)
        self._release()
        if not self.committed:
            self._remove_created()

    def _remove_created(self) -> None:
        """A folder this run created and left empty goes away again (parents of --out included)."""
        for d in reversed(self._created):
            if d == self.state:
                if self._lock_taken_by_another():
                    return  # a run that started beside this one uses the folder now: leave it all
                for leftover in ("lock", "sets"):
                    q = d / leftover
                    try:
                        q.rmdir() if q.is_dir() else q.unlink()
                    except OSError:
                        pass
            try:
                d.rmdir()
            except OSError:
                pass

    def _lock_taken_by_another(self) -> bool:
        try:
            fd = os.open(self.state / "lock", os.O_RDWR)
        except OSError:
            return False
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            return False
        except BlockingIOError:
            return True
        finally:
            os.close(fd)

    def _release(self) -> None:
        if self._fd is not None:
            os.close(self._fd)  # closing the descriptor releases the flock
            self._fd = None

    # -- housekeeping under the lock ----------------------------------------------------------------------
    def _current(self) -> str | None:
        link = self.state / "current"
        return os.readlink(link).split("/")[-1] if link.is_symlink() else None

    def _clean(self) -> None:
        """Remove what a killed run left: staging folders, sets that are not current, dangling tenure links."""
        keep = self._current()
        for d in (self.state / "sets").iterdir():
            if d.name != keep:
                shutil.rmtree(d, ignore_errors=True) if d.is_dir() and not d.is_symlink() else d.unlink()
        for q in self.state.glob("current.*"):
            q.unlink()
        for name in KNOWN_NAMES:
            q = self.out / name
            if _is_ours(q) and not q.exists():
                q.unlink()
        if keep is None:
            self._adopt_legacy()

    def _adopt_legacy(self) -> None:
        """Files of a tenure version without this layout become the current set, content unchanged."""
        legacy = [n for n in KNOWN_NAMES if (self.out / n).is_file() and not (self.out / n).is_symlink()]
        if not legacy:
            return
        sid = f"legacy-{self.run_id}"
        tmp = self.state / "sets" / f"{sid}.part"
        tmp.mkdir()
        for n in legacy:
            try:
                os.link(self.out / n, tmp / n)
            except OSError:
                shutil.copy2(self.out / n, tmp / n)
        files = [n for n in legacy if n != MANIFEST]
        if MANIFEST in legacy:
            (tmp / MANIFEST).unlink()
        _write_manifest(tmp, files, {"run_id": sid, "command": "adopted from an older tenure"})
        os.rename(tmp, self.state / "sets" / sid)
        self._switch(sid)
        for n in files + [MANIFEST]:  # each rename swaps a file for a link to the same content
            self._link(n)

    # -- commit ---------------------------------------------------------------------------------------------
    def commit(self, meta: dict | None = None) -> list[Path]:
        """Write the manifest, swap the new set in and return the paths of the files as the user sees them."""
        try:
            return self._commit(meta or {})
        except OSError as exc:
            raise OutputError(f"--out {self.out}: {describe_os_error(exc)}") from None

    def _commit(self, meta: dict) -> list[Path]:
        names = sorted(p.name for p in self.staging.iterdir() if p.is_file() and not p.name.startswith("."))
        for n in names + [MANIFEST]:
            q = self.out / n
            if q.is_dir() and not q.is_symlink():
                raise OutputError(f"--out {self.out}: {q} is a directory; tenure writes a file of that name "
                                  "(move the folder away or choose another --out)")
        _write_manifest(self.staging, names, {"run_id": self.run_id, "command": self.command, **meta})
        done = self.state / "sets" / self.run_id
        os.rename(self.staging, done)
        _fsync_dir(done.parent)
        old = self._current()
        for n in names + [MANIFEST]:
            if not _is_ours(self.out / n):
                self._link(n)
        self._switch(self.run_id)
        self.committed = True
        for n in KNOWN_NAMES:  # names the old set had and this one has not
            q = self.out / n
            if _is_ours(q) and not q.exists():
                q.unlink()
        if old and old != self.run_id:
            shutil.rmtree(self.state / "sets" / old, ignore_errors=True)
        return [self.out / n for n in names + [MANIFEST]]

    def _switch(self, set_id: str) -> None:
        tmp = self.state / f"current.{set_id}"
        os.symlink(f"sets/{set_id}", tmp)
        os.replace(tmp, self.state / "current")
        _fsync_dir(self.state)

    def _link(self, name: str) -> None:
        tmp = self.out / f".{name}.{self.run_id}.link"
        os.symlink(f"{STATE}/current/{name}", tmp)
        os.replace(tmp, self.out / name)


def _write_manifest(folder: Path, names: list[str], head: dict) -> None:
    """``folder/manifest.json``: ``head`` and each file's name, size and sha256; flushed with the folder."""
    entries = [{"name": n, "size": (folder / n).stat().st_size, "sha256": sha256_of(folder / n)} for n in names]
    data = (json.dumps({**head, "files": entries}, indent=2, ensure_ascii=False) + "\n").encode("utf-8")
    with open(folder / MANIFEST, "wb") as fh:
        fh.write(data)
        fh.flush()
        os.fsync(fh.fileno())
    _fsync_dir(folder)


def _is_ours(q: Path) -> bool:
    return q.is_symlink() and os.readlink(q).startswith(f"{STATE}/current/")


def _fsync_dir(d: Path) -> None:
    fd = os.open(d, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def sha256_of(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def verify(out: Path | str) -> list[str]:
    """Problems of an output folder's current set (empty when it is one complete, consistent set).

    Every file of the manifest must exist through its name in ``out`` with the listed size and sha256, and
    every tenure link in ``out`` must lead into the current set.
    """
    out = Path(out)
    try:
        manifest = json.loads((out / MANIFEST).read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        return [f"{out / MANIFEST}: {exc}"]
    problems = []
    for e in manifest["files"]:
        q = out / e["name"]
        if not q.is_file():
            problems.append(f"{q}: missing")
        elif q.stat().st_size != e["size"] or sha256_of(q) != e["sha256"]:
            problems.append(f"{q}: differs from the manifest of run {manifest['run_id']}")
    listed = {e["name"] for e in manifest["files"]} | {MANIFEST}
    for n in KNOWN_NAMES:
        if (out / n).exists() and n not in listed:
            problems.append(f"{out / n}: not in the manifest of run {manifest['run_id']}")
    return problems


__all__ = ["OutputFolder", "OutputError", "check_out", "new_run_id", "verify", "sha256_of", "KNOWN_NAMES"]
