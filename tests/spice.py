"""Run an ngspice deck in batch mode and read the values its control block prints (``name = value``)."""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest

needs_ngspice = pytest.mark.skipif(shutil.which("ngspice") is None, reason="ngspice (Debian package) not installed")


def run_deck(deck: str, folder: Path, name: str = "deck.cir") -> dict[str, float]:
    """The printed scalars of `deck`, run by ``ngspice -b`` in `folder`."""
    (folder / name).write_text(deck)
    out = subprocess.run(["ngspice", "-b", name], cwd=folder, capture_output=True, text=True, timeout=60)
    values = {k: float(v) for k, v in re.findall(r"^(\S+) = (\S+)$", out.stdout, re.M)}
    if not values:
        raise AssertionError(f"ngspice printed no values:\n{out.stdout[-2000:]}\n{out.stderr[-2000:]}")
    return values
