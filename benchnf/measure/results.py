"""The frozen result of a gain-method analysis and its parts."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from .._json import json_safe
from ..noise.uncertainty import Budget

__all__ = ["SCHEMA_VERSION", "DETECTORS", "SpotValue", "SpurValue", "RepeatSummary", "AnalysisSpectra",
           "AnalysisResult"]

SCHEMA_VERSION = "1"
DETECTORS = ("rms", "qp")


@dataclass(frozen=True)
class SpotValue:
    """Values over the one-third-octave band around a spot frequency."""

    freq_hz: float
    input_density_v_per_rthz: float | None
    noise_figure_db: float | None
    output_density_v_per_rthz: float | None
    floor_margin_db: float | None
    voltage_noise_v_per_rthz: float | None
    input_density_expanded_db: float | None = None  # k=2, from the Welch statistics of this band
    noise_figure_expanded_db: float | None = None  # k=2, the same statistics carried to the NF

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class SpurValue:
    """A hum or spur line at the output and referred to the input."""

    freq_hz: float
    output_vrms: float
    input_vrms: float
    family: str
    harmonic: int | None
    excess_db: float

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class RepeatSummary:
    """Scatter and drift of repeated captures of the terminated condition."""

    n: int
    ein_dbu: tuple[float, ...]
    noise_figure_db: tuple[float, ...]
    ein_std_db: float
    noise_figure_std_db: float
    noise_figure_drift_db_per_capture: float

    def to_dict(self) -> dict[str, Any]:
        return {k: (list(v) if isinstance(v, tuple) else v) for k, v in self.__dict__.items()}


@dataclass(frozen=True)
class AnalysisSpectra:
    """The arrays behind an analysis, on the spectrum's bins (for plots and export).

    Densities in V^2/Hz; NaN where a floor-corrected value came out at zero or below.
    """

    frequency_hz: NDArray[np.float64]
    output_v2_per_hz: NDArray[np.float64]
    floor_v2_per_hz: NDArray[np.float64] | None
    output_corrected_v2_per_hz: NDArray[np.float64]
    input_v2_per_hz: NDArray[np.float64]
    voltage_noise_v2_per_hz: NDArray[np.float64] | None
    noise_figure_db: NDArray[np.float64]
    power_gain: NDArray[np.float64]
    band_weights: NDArray[np.float64]
    lines: tuple[Any, ...]
    flicker: Any
    floor_dof: float | None = None


@dataclass(frozen=True)
class AnalysisResult:
    """Everything the gain-method analysis found, with its conditions.

    Scalars carry their unit in the name.  ``spectra`` holds the arrays for
    plots and ``budgets`` the full uncertainty budgets (the JSON carries
    their expanded values under ``uncertainty``).
    """

    gain_db: float
    gain_frequency_hz: float
    gain_std_db: float
    gain_reference: str
    rs_ohm: float
    temperature_k: float
    band_hz: tuple[float, float]
    weighting: str
    detector: str
    floor_corrected: bool
    floor_margin_db: float | None
    ein_vrms: float
    ein_dbu: float
    ein_dbv: float
    ein_rms_dbu: float
    ein_with_spurs_dbu: float
    thermal_ein_dbu: float
    noise_factor: float
    noise_figure_db: float
    nf_at_1khz_db: float | None
    input_density_at_1khz_v_per_rthz: float | None
    output_noise_vrms: float
    output_noise_dbu: float
    output_noise_with_spurs_vrms: float
    output_noise_uncorrected_vrms: float
    voltage_noise_at_1khz_v_per_rthz: float | None
    voltage_noise_band_vrms: float | None
    flicker_corner_hz: float | None
    flicker_corner_std_hz: float | None
    white_density_v_per_rthz: float | None
    flicker_slope: float | None
    flicker_fit_on: str | None
    snr_db: float | None
    reference_output_vrms: float | None
    mains_hz: float | None
    spurs: tuple[SpurValue, ...]
    hum_hints: tuple[str, ...]
    uncertainty: dict[str, Any]
    repeats: RepeatSummary | None
    sample_rate_hz: float
    segment_length: int
    spectrum_window: str
    rbw_hz: float
    n_averages: int
    dof: float
    volts_per_fs: float | None
    files: dict[str, Any]
    spot: tuple[SpotValue, ...]
    notes: tuple[str, ...]
    budgets: dict[str, Budget] = field(repr=False, compare=False)
    spectra: AnalysisSpectra = field(repr=False, compare=False)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dict (NaN becomes None), with ``schema_version``."""
        out: dict[str, Any] = {"schema_version": SCHEMA_VERSION, "kind": "analysis"}
        for key, value in self.__dict__.items():
            if key in ("spectra", "budgets"):
                continue
            if key in ("spot", "spurs"):
                value = [s.to_dict() for s in value]
            elif key == "repeats":
                value = value.to_dict() if value is not None else None
            elif isinstance(value, tuple):
                value = list(value)
            out[key] = value
        return json_safe(out)
