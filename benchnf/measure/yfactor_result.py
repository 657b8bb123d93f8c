"""The frozen result of a Y-factor measurement and its parts (written as JSON by :mod:`benchnf.codec`)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, ClassVar, Literal

from ..codec import ResultFile, figure
from ..noise.uncertainty import Budget, Uncertainty
from .provenance import Provenance

__all__ = ["YRow", "YExcluded", "YPassive", "YRepeats", "YFiles", "YSegment", "YPair", "YPowerTrace", "YFactorResult"]


@dataclass(frozen=True)
class YRow:
    """Figures over one sub-band (or spot)."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {"noise_figure_expanded_db": dict(minimum=0)}

    freq_hz: float
    y_factor_db: float | None
    noise_figure_db: float | None
    noise_temperature_k: float | None
    gain_db: float | None
    noise_figure_expanded_db: float | None


@dataclass(frozen=True)
class YExcluded:
    """What of an IQ recording's span was left out: the DC spike at the centre and the band edges."""

    dc_spike_hz: tuple[float, float] | None = figure(default=None, omit_if_none=True)
    edges_hz: tuple[tuple[float, float], ...] | None = figure(default=None, omit_if_none=True)


@dataclass(frozen=True)
class YPassive:
    """A passive stage de-embedded on one side of the DUT (source side: between the noise source and the
    DUT; receiver side: between the DUT and the receiver), in signal order."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {"loss_db": dict(minimum=0), "temperature_k": dict(exclusiveMinimum=0)}

    name: str
    side: Literal["source", "receiver"]
    loss_db: float
    temperature_k: float


@dataclass(frozen=True)
class YRepeats:
    """Scatter and drift of the noise figure over repeated hot/cold pairs."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {"n": dict(minimum=2)}

    n: int
    noise_figure_db: tuple[float, ...]
    noise_figure_std_db: float
    noise_figure_drift_db_per_pair: float


@dataclass(frozen=True)
class YFiles:
    """The recordings the measurement read, as they were named to it."""

    hot: tuple[str | None, ...]
    cold: tuple[str | None, ...]
    cal_hot: str | None = None
    cal_cold: str | None = None
    floor: str | None = None


@dataclass(frozen=True)
class YSegment:
    """One state of a switched recording, times from its first sample (the transitions already left out)."""

    state: Literal["hot", "cold"]
    start_s: float
    end_s: float
    level_dbfs: float | None
    spread_db: float | None
    pair: int | None
    dropped: str | None = figure(default=None, omit_if_none=True)  # why it was not used


@dataclass(frozen=True)
class YPair:
    """The figures of one hot/cold pair of a switched recording (or of a live run)."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {"noise_figure_u95_db": dict(minimum=0)}

    hot: int  # index into segments
    cold: int
    mid_s: float
    y_factor_db: float
    noise_figure_db: float | None
    noise_figure_u95_db: float | None
    noise_temperature_k: float | None
    gain_db: float | None


@dataclass(frozen=True)
class YPowerTrace:
    """The recording's power in blocks, as the states were found in it, and the threshold between them."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {"interval_s": dict(exclusiveMinimum=0)}

    interval_s: float
    level_dbfs: tuple[float, ...]
    threshold_dbfs: float


@dataclass(frozen=True)
class YFactorResult(ResultFile):
    """Everything the Y-factor measurement found, with its conditions."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {
        "t_hot_k": dict(exclusiveMinimum=0), "t_cold_k": dict(exclusiveMinimum=0), "rbw_hz": dict(exclusiveMinimum=0),
        "n_averages": dict(minimum=1)}

    KIND = "yfactor"

    method: Literal["enr", "two-temperature"]
    noise_figure_db: float
    noise_temperature_k: float
    gain_db: float | None
    y_factor_db: float
    second_stage_corrected: bool
    floor_subtracted: bool
    system_noise_figure_db: float
    receiver_noise_figure_db: float | None
    t_hot_k: float
    t_cold_k: float
    enr_db: float | None
    band_hz: tuple[float, float]
    centre_hz: float | None
    excluded: YExcluded
    passive_stages: tuple[YPassive, ...]
    rows: tuple[YRow, ...]
    spots: tuple[YRow, ...]
    uncertainty: Uncertainty
    repeats: YRepeats | None
    rbw_hz: float
    n_averages: int
    files: YFiles
    notes: tuple[str, ...]
    warnings: tuple[str, ...] = ()  # one line each, also on stderr as "benchnf: warning: ..."
    noise_temperature_u95_k: float | None = None  # U (k=2) of the noise temperature, from the NF's
    provenance: Provenance | None = figure(default=None, omit_if_none=True)
    segments: tuple[YSegment, ...] | None = figure(default=None, omit_if_none=True)  # a switched recording's states
    pairs: tuple[YPair, ...] | None = figure(default=None, omit_if_none=True)
    power_trace: YPowerTrace | None = figure(default=None, omit_if_none=True)

    @property
    def budgets(self) -> dict[str, Budget]:
        """The uncertainty budgets by figure (``noise_figure_db``, ``gain_db``)."""
        return self.uncertainty.budgets
