"""Shared fixtures.  Synthetic captures here are INVENTED DATA with seeded noise."""

from __future__ import annotations

import os

import matplotlib
import pytest

matplotlib.use("Agg")


def pytest_configure(config):
    """FFTW's measured plans (benchnf.dsp.fftw_backend) are kept for this session only, in its own folder,
    never in the user's cache (subprocesses inherit the variable)."""
    if "BENCHNF_FFTW_WISDOM" not in os.environ:
        import tempfile
        folder = tempfile.mkdtemp(prefix="benchnf-wisdom-")
        os.environ["BENCHNF_FFTW_WISDOM"] = os.path.join(folder, "fftw-wisdom.json")
        config.add_cleanup(lambda: __import__("shutil").rmtree(folder, ignore_errors=True))


def pytest_collection_modifyitems(config, items):
    if os.environ.get("BENCHNF_HARDWARE") == "1":
        return
    skip = pytest.mark.skip(reason="needs a physical sound card; set BENCHNF_HARDWARE=1")
    for item in items:
        if "hardware" in item.keywords:
            item.add_marker(skip)


@pytest.fixture()
def mount_tmpfs(tmp_path):
    """Make a folder a small tmpfs of the given size (root only; skips otherwise); unmounted after the test."""
    import subprocess
    mounted = []

    def make(name: str, size: str):
        folder = tmp_path / name
        folder.mkdir()
        if os.geteuid() != 0 or subprocess.run(["mount", "-t", "tmpfs", "-o", f"size={size}", "tmpfs", str(folder)],
                                               capture_output=True).returncode != 0:
            pytest.skip("needs root and mount to make a small file system")
        mounted.append(folder)
        return folder

    yield make
    for folder in mounted:
        subprocess.run(["umount", str(folder)], check=False)
