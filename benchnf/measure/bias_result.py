"""The typed result of ``benchnf bias``: the input device's predicted en, in and NF for a source, the
current of least NF, candidate parts ranked, and a built stage explained by its device.

The equations are in :mod:`benchnf.noise.devices`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, ClassVar, Literal

from ..codec import ResultFile, figure
from .provenance import Provenance

__all__ = ["DeviceStated", "Optimum", "Curve", "NoiseSpectrum", "PartRow", "Explained", "BiasResult"]


@dataclass(frozen=True)
class DeviceStated:
    """The device as the model took it (its parameters by their model names; None: not stated)."""

    kind: Literal["bjt", "jfet"]
    current_a: float
    count: int = 1
    beta: float | None = None
    beta_effective: float | None = None  # Ic/Ib at the operating point (the Early effect included)
    rbb_ohm: float | None = None
    re_ohm: float | None = None
    vaf_v: float | None = None
    vce_v: float | None = None
    is_a: float | None = None
    gm_s: float | None = None  # at current_a
    idss_a: float | None = None
    vp_v: float | None = None
    gamma: float | None = None
    ig_a: float | None = None
    rs_lead_ohm: float | None = None
    kf: float | None = None
    af: float | None = None
    corner_hz: float | None = None


@dataclass(frozen=True)
class Optimum:
    """The quiescent current (collector, or drain for a FET) of least spot NF for the source, that NF, and
    the currents within `within_db` of it; `at_edge`: the least NF or the range reaches the searched range's
    end (search wider)."""

    ic_a: float
    noise_figure_db: float
    ic_range_a: tuple[float, float]
    within_db: float
    at_edge: bool
    noise_figure_u95_db: float | None = figure(default=None, omit_if_none=True)


@dataclass(frozen=True)
class Curve:
    """One curve of a plot: NF (dB) against `x` (current in A, or source resistance in ohm)."""

    label: str
    x: tuple[float, ...]
    noise_figure_db: tuple[float, ...]


@dataclass(frozen=True)
class NoiseSpectrum:
    """en and in of the stage against frequency."""

    frequency_hz: tuple[float, ...]
    en_v_per_rthz: tuple[float, ...]
    in_a_per_rthz: tuple[float, ...]


@dataclass(frozen=True)
class PartRow:
    """A candidate part for the source: at its stated current (when stated) and at its best current."""

    name: str
    kind: Literal["bjt", "jfet"]
    rank: int
    best_ic_a: float
    best_noise_figure_db: float
    ic_range_a: tuple[float, float]
    en_v_per_rthz: float
    in_a_per_rthz: float
    stated_ic_a: float | None = None
    stated_noise_figure_db: float | None = None


@dataclass(frozen=True)
class Explained:
    """A built stage explained by its device: the device parameters that give the en and in measured at
    its stated current (with U, k = 2), and what that device would reach at its best current."""

    eni_file: str
    frequency_hz: float
    measured_en_v_per_rthz: float
    measured_en_u95_v_per_rthz: float
    measured_in_a_per_rthz: float
    measured_in_u95_a_per_rthz: float
    noise_figure_db: float
    best_ic_a: float
    best_noise_figure_db: float
    best_noise_figure_u95_db: float
    summary: str
    rbb_ohm: float | None = figure(default=None, omit_if_none=True)
    rbb_u95_ohm: float | None = figure(default=None, omit_if_none=True)
    beta: float | None = figure(default=None, omit_if_none=True)
    beta_u95: float | None = figure(default=None, omit_if_none=True)
    gm_s: float | None = figure(default=None, omit_if_none=True)
    gm_u95_s: float | None = figure(default=None, omit_if_none=True)
    ig_a: float | None = figure(default=None, omit_if_none=True)
    ig_u95_a: float | None = figure(default=None, omit_if_none=True)


@dataclass(frozen=True)
class BiasResult(ResultFile):
    """The input device's noise for a source: spot and band figures, the best current, candidate parts, and
    a measured stage held against its device. The device figures are None for a parts comparison."""

    KIND = "bias"
    RANGES: ClassVar[dict[str, dict[str, Any]]] = {
        "rs_ohm": dict(exclusiveMinimum=0), "temperature_k": dict(exclusiveMinimum=0),
        "frequency_hz": dict(exclusiveMinimum=0), "turns": dict(exclusiveMinimum=0), "winding_ohm": dict(minimum=0)}

    rs_ohm: float
    temperature_k: float
    frequency_hz: float
    band_hz: tuple[float, float]
    weighting: str
    turns: float
    winding_ohm: float
    device: DeviceStated | None
    en_v_per_rthz: float | None
    in_a_per_rthz: float | None
    correlation: float | None
    ropt_ohm: float | None
    nfmin_db: float | None
    noise_figure_db: float | None
    band_noise_figure_db: float | None
    ein_dbu: float | None
    optimum: Optimum | None = figure(default=None, omit_if_none=True)
    spectrum: NoiseSpectrum | None = figure(default=None, omit_if_none=True)
    nf_vs_current: tuple[Curve, ...] = ()
    nf_vs_rs: Curve | None = figure(default=None, omit_if_none=True)
    parts: tuple[PartRow, ...] = ()
    explained: Explained | None = figure(default=None, omit_if_none=True)
    notes: tuple[str, ...] = field(default=())
    warnings: tuple[str, ...] = ()  # one line each, also on stderr as "benchnf: warning: ..."
    provenance: Provenance | None = figure(default=None, omit_if_none=True)
