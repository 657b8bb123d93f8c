"""A toy measurement for the registry test: the thermal noise of a stated resistor (no capture read).

Everything a measurement needs is here and registered once (tests/test_registry.py): its request, run,
result type, presentation and command-line options. The figure is sqrt(4kTR) (Johnson 1928, Nyquist 1928),
the source's own noise that benchnf's NF is referred to.
"""

from __future__ import annotations

import argparse
import math
from dataclasses import dataclass
from typing import Any, ClassVar

from benchnf.codec import ResultFile, figure
from benchnf.measure.provenance import Provenance
from benchnf.quantity import Quantity
from benchnf.report.view import Headline, Plot, Trace, View
from benchnf.units import BOLTZMANN_J_PER_K


@dataclass(frozen=True)
class ToyRequest:
    rs_ohm: float
    temperature_k: float = 290.0


@dataclass(frozen=True)
class ToyResult(ResultFile):
    """The thermal noise density of a resistor."""

    KIND = "toy"
    RANGES: ClassVar[dict[str, dict[str, Any]]] = {"rs_ohm": {"exclusiveMinimum": 0}}

    rs_ohm: float
    temperature_k: float
    density_v_per_rthz: float
    provenance: Provenance | None = figure(default=None, omit_if_none=True)


def run(req: ToyRequest, *, progress: Any = None) -> ToyResult:
    return ToyResult(req.rs_ohm, req.temperature_k, math.sqrt(4 * BOLTZMANN_J_PER_K * req.temperature_k * req.rs_ohm))


def present(r: ToyResult) -> View:
    q = Quantity(r.density_v_per_rthz, "V/√Hz")
    plot = Plot("toy", "toy.png", "Thermal noise", "Frequency (Hz)", "density (nV/√Hz)",
                (Trace("√(4kTR)", (20.0, 20_000.0), (q.value * 1e9, q.value * 1e9), "line"),))
    return View("toy", "thermal noise of a resistor", (("resistor", f"{r.rs_ohm:g} ohm at {r.temperature_k:g} K"),),
                (Headline("thermal noise density", q, key="density_v_per_rthz"),), (), (plot,), (), (), (),
                f"{q.text()}")


def add_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--rs", type=float, required=True, metavar="OHM")
    p.add_argument("--temperature-k", type=float, default=290.0, metavar="K")


def request_from_args(args: argparse.Namespace) -> ToyRequest:
    return ToyRequest(args.rs, args.temperature_k)
