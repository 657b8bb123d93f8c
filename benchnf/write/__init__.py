"""The one writer: every file benchnf writes goes through a :class:`Writer`.

Rules it keeps, for every command and front end:

* never onto an input of the run (symlinks followed; a capture's sidecars count as inputs);
* never over an existing file unless the user said ``--overwrite`` (then replaced atomically);
* written to a temporary file beside the target, flushed, then linked or renamed into place, so a
  failure (a full disk, a read-only folder, an interrupt) leaves nothing behind;
* the new file's mode is what the umask gives (as for any program the user runs);
* names inside an output folder cannot climb out of it (``--unit ../x`` is refused);
* every operating-system failure becomes one :class:`OutputError` line saying what to do.

Appending (a history file) is the one exception to replace-or-create: rows are appended under an
advisory lock after checking that the file is the same kind of history (its header line matches).
"""

from __future__ import annotations

import errno
import json
import os
import secrets
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

from ..errors import OutputError

__all__ = ["Writer", "sidecar_paths"]

_SIGMF = (".sigmf-meta", ".sigmf-data")


def sidecar_paths(path: Path) -> list[Path]:
    """The files that belong to a capture besides itself: JSON sidecars, the other half of a SigMF pair."""
    path = Path(path)
    if path.suffix.lower() in (".json", ".toml"):  # our own formats carry no sidecar
        return []
    out = [path.with_suffix(".json"), path.with_name(path.name + ".json")]
    if path.suffix in _SIGMF:
        out += [path.with_suffix(s) for s in _SIGMF]
    return out


def _why(err: OSError) -> str:
    """What an operating-system error means for the user, and what to do."""
    if err.errno == errno.ENOSPC or err.errno == errno.EDQUOT:
        return "the disk is full: free some space or write elsewhere"
    if err.errno in (errno.EACCES, errno.EPERM):
        return "no permission to write there: choose a folder you can write to"
    if err.errno == errno.EROFS:
        return "the file system is read-only: write elsewhere"
    if err.errno == errno.ENAMETOOLONG:
        return "the name is too long: choose a shorter one"
    if err.errno == errno.ENOENT:
        return "the folder does not exist: create it first"
    if err.errno == errno.ENOTDIR:
        return "part of the path is a file, not a folder"
    return f"{err.strerror or err}"


def _lock(fd: int) -> None:
    """An exclusive advisory lock on `fd` until it is closed (POSIX); where the platform has none
    (Windows), appends from one station still land whole, each in one write call."""
    try:
        import fcntl
    except ImportError:
        return
    fcntl.flock(fd, fcntl.LOCK_EX)


class Writer:
    """Writes a run's outputs; knows the run's inputs so it never writes onto one.

    Parameters
    ----------
    inputs : iterable of path-like or None
        Files the run reads. Their sidecars are protected too.
    overwrite : bool
        Replace existing outputs (atomically) instead of refusing them.
    """

    def __init__(self, *, inputs: Iterable[str | os.PathLike[str] | None] = (), overwrite: bool = False) -> None:
        self.overwrite = overwrite
        self._inputs: set[Path] = set()
        self.written: list[Path] = []
        self.protect(*inputs)

    def protect(self, *paths: str | os.PathLike[str] | None) -> None:
        """Add `paths` (and their sidecars) to the files this writer must never write onto."""
        for p in paths:
            if p is None:
                continue
            p = Path(p)
            for q in (p, *sidecar_paths(p)):
                self._inputs.add(q.resolve())

    # -- paths ------------------------------------------------------------------------------------
    def target(self, path: str | os.PathLike[str]) -> Path:
        """Check that `path` may be written; return it as a Path. Raises OutputError."""
        p = Path(path)
        if p.resolve() in self._inputs:
            raise OutputError(f"{p} is an input of this run (or one's sidecar): choose another output "
                              f"name (nothing was written)")
        parent = p.parent
        if not parent.is_dir():
            what = "is not a folder" if parent.exists() else "does not exist: create it first"
            raise OutputError(f"cannot write {p}: the folder {parent} {what} (nothing was written)")
        if p.is_dir():
            raise OutputError(f"{p} is a folder: give a file name (nothing was written)")
        if (p.exists() or p.is_symlink()) and not self.overwrite:
            raise OutputError(f"{p} exists already: give another name, or --overwrite to replace it "
                              f"(nothing was written)")
        return p

    @staticmethod
    def child(folder: str | os.PathLike[str], name: str) -> Path:
        """`folder`/`name`, refusing a name that would leave the folder or is empty."""
        if not name or name in (".", "..") or "/" in name or "\\" in name or "\0" in name \
                or Path(name).is_absolute():
            raise OutputError(f"{name!r} cannot name a file inside {folder}: use letters, digits, '-', '_' "
                              f"and '.' without slashes")
        return Path(folder) / name

    def folder(self, path: str | os.PathLike[str]) -> Path:
        """Create the output folder `path` (and its parents) if needed; return it."""
        p = Path(path)
        resolved = p.resolve()
        if resolved in self._inputs or any(q.is_dir() and q in resolved.parents for q in self._inputs):
            raise OutputError(f"{p} is (inside) an input folder of this run: choose another output folder")
        if p.exists() and not p.is_dir():
            raise OutputError(f"{p} exists and is not a folder: choose another output folder")
        try:
            p.mkdir(parents=True, exist_ok=True)
        except OSError as err:
            raise OutputError(f"cannot create the folder {p}: {_why(err)}") from err
        if not os.access(p, os.W_OK | os.X_OK):
            raise OutputError(f"cannot write in the folder {p}: no permission; choose a folder you can "
                              f"write to")
        return p

    def fresh_folder(self, wanted: str | os.PathLike[str]) -> Path:
        """`wanted` if it does not exist, else ``wanted-2``, ``wanted-3``, ...: never reuse one."""
        base = Path(wanted)
        candidate, n = base, 1
        while True:
            try:
                candidate.mkdir(parents=True)
                return candidate
            except FileExistsError:
                n += 1
                candidate = base.with_name(f"{base.name}-{n}")
            except OSError as err:
                raise OutputError(f"cannot create the folder {candidate}: {_why(err)}") from err

    # -- whole files ------------------------------------------------------------------------------
    def bytes(self, path: str | os.PathLike[str], data: bytes) -> Path:
        """Write `data` to `path` atomically (see the module notes)."""
        p = self.target(path)
        tmp = p.with_name(f".{p.name}.{secrets.token_hex(4)}.part")
        try:
            fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)  # the umask applies
            try:
                view = memoryview(data)
                while view:
                    view = view[os.write(fd, view):]
                os.fsync(fd)
            finally:
                os.close(fd)
            self._place(tmp, p)
        except OSError as err:
            tmp.unlink(missing_ok=True)
            raise OutputError(f"cannot write {p}: {_why(err)} (nothing was written)") from err
        except BaseException:
            tmp.unlink(missing_ok=True)
            raise
        self.written.append(p)
        return p

    def _place(self, tmp: Path, p: Path) -> None:
        if self.overwrite:
            os.replace(tmp, p)
            return
        try:
            os.link(tmp, p)  # fails if p appeared meanwhile: never replaces
        except FileExistsError:
            tmp.unlink(missing_ok=True)
            raise OutputError(f"{p} exists already: give another name, or --overwrite to replace it "
                              f"(nothing was written)") from None
        except OSError as err:
            if err.errno not in (errno.EPERM, errno.EOPNOTSUPP, errno.EXDEV, errno.EMLINK):
                raise
            if p.exists():  # a file system without hard links
                raise OutputError(f"{p} exists already (nothing was written)") from None
            os.replace(tmp, p)
            return
        tmp.unlink()

    def place(self, tmp: str | os.PathLike[str], path: str | os.PathLike[str]) -> Path:
        """Move a finished temporary file `tmp` (made beside `path` by a library writer) into place."""
        p = self.target(path)
        try:
            self._place(Path(tmp), p)
        except OSError as err:
            raise OutputError(f"cannot write {p}: {_why(err)} (nothing was written)") from err
        self.written.append(p)
        return p

    def text(self, path: str | os.PathLike[str], text: str) -> Path:
        """Write `text` as UTF-8."""
        return self.bytes(path, text.encode("utf-8"))

    def json(self, path: str | os.PathLike[str], data: Any) -> Path:
        """Write `data` as indented JSON (NaN and infinities refused: make them null first)."""
        try:
            text = json.dumps(data, indent=2, allow_nan=False) + "\n"
        except ValueError as err:
            raise OutputError(f"cannot write {path}: {err}") from err
        return self.text(path, text)

    def figure(self, path: str | os.PathLike[str], fig: Any, *, dpi: int = 110) -> Path:
        """Render a matplotlib Figure as PNG and write it."""
        import io
        buf = io.BytesIO()
        fig.savefig(buf, format="png", dpi=dpi)
        return self.bytes(path, buf.getvalue())

    # -- appending --------------------------------------------------------------------------------
    def append_lines(self, path: str | os.PathLike[str], header: str, lines: Sequence[str]) -> Path:
        """Append `lines` to a log whose first line is `header`; create it (with the header) if new.

        Refuses an input of the run and a file that is not the same kind of log. Rows are written under
        an exclusive advisory lock in one call, so concurrent writers neither interleave nor repeat
        the header.
        """
        p = self.appendable(path, header)
        body = "".join(line + "\n" for line in lines)
        try:
            fd = os.open(p, os.O_RDWR | os.O_CREAT | os.O_APPEND, 0o666)
        except OSError as err:
            raise OutputError(f"cannot append to {p}: {_why(err)}") from err
        try:
            _lock(fd)
            os.lseek(fd, 0, os.SEEK_SET)
            first = os.read(fd, len(header.encode()) + 1).decode("utf-8", "replace")
            if not first:
                body = header + "\n" + body
            elif first.rstrip("\r\n") != header:
                raise OutputError(f"{p} is not a benchnf history file (its first line is not the expected "
                                  f"header): choose another file to append to (nothing was written)")
            os.write(fd, body.encode("utf-8"))
        except OSError as err:
            raise OutputError(f"cannot append to {p}: {_why(err)}") from err
        finally:
            os.close(fd)
        self.written.append(p)
        return p

    def appendable(self, path: str | os.PathLike[str], header: str) -> Path:
        """Check, before any work, that rows could be appended to `path`; return it as a Path."""
        p = Path(path)
        if p.resolve() in self._inputs:
            raise OutputError(f"{p} is an input of this run: choose another file to append to")
        if not p.parent.is_dir():
            raise OutputError(f"cannot write {p}: the folder {p.parent} does not exist: create it first")
        if p.is_file():
            with open(p, encoding="utf-8", errors="replace") as fh:
                if fh.readline().rstrip("\r\n") not in ("", header):
                    raise OutputError(f"{p} is not a benchnf history file (its first line is not the "
                                      f"expected header): choose another file to append to")
        elif p.exists():
            raise OutputError(f"{p} is not a file: choose another file to append to")
        return p

    # -- streams (recordings) ---------------------------------------------------------------------
    def claim(self, path: str | os.PathLike[str]) -> Path:
        """Create `path` empty and exclusively, for a writer that streams into it (a recording).

        The caller owns the file from then on and removes it if it fails before writing anything.
        """
        p = self.target(path)
        try:
            fd = os.open(p, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_NOFOLLOW", 0), 0o666)
        except FileExistsError:
            raise OutputError(f"{p} exists already: give another name (nothing was written)") from None
        except OSError as err:
            raise OutputError(f"cannot create {p}: {_why(err)}") from err
        os.close(fd)
        self.written.append(p)
        return p
