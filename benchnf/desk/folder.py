"""The desk's one folder: every path the browser names is resolved inside it, or refused."""

from __future__ import annotations

import os
from pathlib import Path

from ..errors import BenchError
from ..io.opener import AUDIO_SUFFIXES

__all__ = ["DeskFolder", "OutsideFolder", "KINDS"]

# What the pages list, by the file names benchnf itself writes and reads.
KINDS = {
    "results": (".json",),
    "plans": (".toml",),
    "profiles": (".toml",),
    "captures": (*AUDIO_SUFFIXES, ".sigmf-meta"),
    "traces": (".csv",),
    "calibrations": (".json",),
    "analyses": (".json",),
}
_SKIP_JSON = ("calibration", "check", "ground_truth")
_MAX_FILES = 2000


class OutsideFolder(BenchError):
    """A path that resolves outside the desk's folder (or is otherwise not allowed)."""


class DeskFolder:
    """The folder the desk works in; ``resolve`` is the only way from a browser's name to a path."""

    def __init__(self, root: str | os.PathLike[str]) -> None:
        root = Path(root).expanduser()
        if not root.is_dir():
            raise BenchError(f"{root} is not a folder: give an existing folder with --folder")
        self.root = root.resolve()

    def resolve(self, name: str) -> Path:
        """The path a browser's relative name stands for; refused if it escapes the folder.

        Symbolic links are followed before the check, so a link that points out is refused too.
        """
        if not name or "\x00" in name:
            raise BenchError("no file named: choose one from the lists on the page")
        candidate = (self.root / name).resolve()
        if candidate != self.root and self.root not in candidate.parents:
            raise OutsideFolder(f"{name!r} is outside the desk's folder {self.root}; only files inside it are served")
        return candidate

    def resolve_named(self, name: str, *, base: Path) -> Path:
        """A file a results file names: relative to `base` (the results file's folder) unless absolute, and
        refused (OutsideFolder) when it lies outside the desk's folder."""
        if not name or "\x00" in name:
            raise BenchError("the results name an empty file")
        candidate = (Path(base) / Path(name).expanduser()).resolve()
        if candidate != self.root and self.root not in candidate.parents:
            raise OutsideFolder(f"{name!r} (named in the results) is outside the desk's folder {self.root}: the desk "
                                f"reads only files inside it; copy the captures in beside the results")
        return candidate

    def relative(self, path: Path) -> str:
        return path.resolve().relative_to(self.root).as_posix()

    def listing(self, kind: str) -> list[str]:
        """Files of one kind, relative to the folder, sorted; hidden folders and files skipped."""
        suffixes = KINDS[kind]
        found: list[str] = []
        for dirpath, dirnames, filenames in os.walk(self.root):
            dirnames[:] = sorted(d for d in dirnames if not d.startswith("."))
            for f in sorted(filenames):
                if f.startswith(".") or not f.lower().endswith(suffixes):
                    continue
                if not self._of_kind(kind, Path(dirpath) / f):
                    continue
                found.append((Path(dirpath) / f).relative_to(self.root).as_posix())
                if len(found) >= _MAX_FILES:
                    return found
        return found

    @staticmethod
    def _of_kind(kind: str, path: Path) -> bool:
        if kind == "results":
            return not path.stem.startswith(_SKIP_JSON) and _looks_like_results(path)
        if kind == "analyses":
            return '"kind": "analysis"' in _head(path, 512)
        if kind == "calibrations":
            return '"benchnf.calibration/' in _head(path, 512)
        if kind == "plans":
            return "[[step]]" in _head(path)
        if kind == "profiles":
            head = _head(path)
            return any(t in head for t in ("[[limit]]", "[[mask]]", "[[hum]]"))
        return True


def _head(path: Path, size: int = 16384) -> str:
    try:
        with open(path, "rb") as f:
            return f.read(size).decode("utf-8", "replace")
    except OSError:
        return ""


def _looks_like_results(path: Path) -> bool:
    head = _head(path, 4096)
    return '"kind"' in head and '"schema_version"' in head
