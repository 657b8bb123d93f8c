"""Starting a real desk (a ``benchnf desk`` process) and talking to it over HTTP, for the desk's tests."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import urllib.error
import urllib.request
from contextlib import contextmanager
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


@contextmanager
def running_desk(folder: Path, *extra: str, timeout: float = 30.0):
    """A desk on a free port for the duration of the block: yields (process, url)."""
    proc = subprocess.Popen([sys.executable, "-m", "benchnf", "desk", "--folder", str(folder), "--port", "0",
                             "--no-browser", *extra], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            env={**os.environ, "PYTHONUNBUFFERED": "1"})
    try:
        first = proc.stdout.readline()
        if not first.startswith("benchnf desk on "):
            proc.kill()
            raise AssertionError(f"the desk did not start: {first!r} {proc.stderr.read()!r}")
        yield proc, first.split(" on ", 1)[1].strip()
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=timeout)
        except subprocess.TimeoutExpired:
            proc.kill()


def call(url: str, path: str, body: dict | None = None, *, headers: dict | None = None,
         desk_header: bool = True) -> tuple[int, dict]:
    """(HTTP status, JSON answer) of one API call; POST when a body is given."""
    base = url.split("?")[0].rstrip("/")
    hdrs = dict(headers or {})
    data = None
    if body is not None:
        data = json.dumps(body).encode()
        hdrs["Content-Type"] = "application/json"
        if desk_header:
            hdrs["X-Benchnf-Desk"] = "1"
    req = urllib.request.Request(base + path, data=data, headers=hdrs, method="POST" if body is not None else "GET")
    try:
        with urllib.request.urlopen(req, timeout=60) as r:
            raw = r.read()
            return r.status, (json.loads(raw) if raw[:1] in (b"{", b"[") else {})
    except urllib.error.HTTPError as err:
        raw = err.read()
        try:
            return err.code, json.loads(raw)
        except ValueError:
            return err.code, {"error": raw.decode(errors="replace")}


def demo_folder(tmp_path: Path) -> Path:
    """A copy of the demo captures with the demo's results in ``results/`` (INVENTED DATA); the gain-method
    result is made again from the copied captures, so the captures it names lie inside the folder."""
    import shutil

    from benchnf.cli import main
    from benchnf.demo import demo_folder as shipped
    folder = tmp_path / "bench"
    shutil.copytree(shipped(), folder, ignore=shutil.ignore_patterns("*.py", "__pycache__"))
    assert main(["demo", "--quiet", "-o", str(folder / "results")]) == 0
    assert main(["analyze", *(x for role in ("terminated", "floor", "shorted", "tone", "response")
                              for x in (f"--{role}", str(folder / f"{role}.flac"))),
                 "--calibration", str(folder / "results" / "calibration.json"), "--json",
                 str(folder / "results" / "results.json"), "--overwrite", "--quiet"]) == 0
    return folder
