"""Shared fixtures.  Synthetic captures here are INVENTED DATA with seeded noise."""

from __future__ import annotations

import os

import matplotlib
import pytest

matplotlib.use("Agg")


def pytest_collection_modifyitems(config, items):
    if os.environ.get("BENCHNF_HARDWARE") == "1":
        return
    skip = pytest.mark.skip(reason="needs a physical sound card; set BENCHNF_HARDWARE=1")
    for item in items:
        if "hardware" in item.keywords:
            item.add_marker(skip)
