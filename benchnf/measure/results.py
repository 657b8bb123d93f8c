"""The frozen result of a gain-method analysis and its parts.

Every field carries its unit in its name; :mod:`benchnf.codec` writes the result as JSON, reads it back
exactly (``AnalysisResult.from_dict``) and gives its JSON Schema (``benchnf/schemas/analysis-results-1.json``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, ClassVar, Literal

import numpy as np
from numpy.typing import NDArray

from ..codec import ResultFile, figure, memory_only
from ..noise.uncertainty import Budget, Uncertainty
from .attribution import Attribution, AttributionTotal
from .cross_estimate import CrossSummary
from .provenance import Provenance

__all__ = ["SCHEMA_VERSION", "DETECTORS", "SCALAR_FIGURES", "FIGURE_UNITS", "RELATIVE_UNITS", "SpotValue", "SpurValue",
           "RepeatSummary", "AnalysisSpectra", "AnalysisFiles", "AnalysisResult"]

SCHEMA_VERSION = "1"
DETECTORS = ("rms", "qp")
Weighting = Literal["none", "A", "C", "468", "468-2k"]
#: The scalar figures of a gain-method result a limit may name: (unit, the budget of its uncertainty).
FIGURE_UNITS: dict[str, tuple[str, str | None]] = {
    "gain_db": ("dB", "gain_db"), "ein_dbu": ("dBu", "ein_db"), "ein_dbv": ("dBV", "ein_db"),
    "ein_with_spurs_dbu": ("dBu", "ein_db"), "noise_figure_db": ("dB", "noise_figure_db"),
    "nf_at_1khz_db": ("dB", "nf_at_1khz_db"),
    "input_density_at_1khz_v_per_rthz": ("V/√Hz", "input_density_at_1khz_db"),
    "output_noise_vrms": ("V", "output_noise_db"), "output_noise_dbu": ("dBu", "output_noise_db"),
    "voltage_noise_at_1khz_v_per_rthz": ("V/√Hz", "voltage_noise_at_1khz_db"), "flicker_corner_hz": ("Hz", None),
    "white_density_v_per_rthz": ("V/√Hz", None), "snr_db": ("dB", None), "floor_margin_db": ("dB", None)}
SCALAR_FIGURES = tuple(FIGURE_UNITS)
#: Units whose limits are compared as levels in dB (20 lg of the ratio), as their uncertainties are stated.
RELATIVE_UNITS = ("V/√Hz", "V")
Detector = Literal["rms", "qp"]
OutputEstimator = Literal["auto-spectrum", "cross-spectrum"]


@dataclass(frozen=True)
class SpotValue:
    """Values over the one-third-octave band around a spot frequency."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {
        "freq_hz": dict(exclusiveMinimum=0), "input_density_v_per_rthz": dict(minimum=0),
        "output_density_v_per_rthz": dict(minimum=0), "voltage_noise_v_per_rthz": dict(minimum=0)}

    freq_hz: float
    input_density_v_per_rthz: float | None
    noise_figure_db: float | None
    output_density_v_per_rthz: float | None
    floor_margin_db: float | None
    voltage_noise_v_per_rthz: float | None
    input_density_expanded_db: float | None = figure(default=None, minimum=0)  # k=2, Welch statistics of the band
    noise_figure_expanded_db: float | None = figure(default=None, minimum=0)  # k=2, the same carried to the NF


@dataclass(frozen=True)
class SpurValue:
    """A hum or spur line at the output and referred to the input."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {
        "freq_hz": dict(exclusiveMinimum=0), "output_vrms": dict(minimum=0), "input_vrms": dict(minimum=0)}

    freq_hz: float
    output_vrms: float
    input_vrms: float
    family: str
    harmonic: int | None
    excess_db: float


@dataclass(frozen=True)
class RepeatSummary:
    """Scatter and drift of repeated captures of the terminated condition."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {
        "n": dict(minimum=2), "ein_std_db": dict(minimum=0), "noise_figure_std_db": dict(minimum=0)}

    n: int
    ein_dbu: tuple[float, ...]
    noise_figure_db: tuple[float, ...]
    ein_std_db: float
    noise_figure_std_db: float
    noise_figure_drift_db_per_capture: float


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
    output_variance_v4_per_hz2: NDArray[np.float64] | None = None  # each bin's, for a cross-spectrum estimate
    unconditioned_output_v2_per_hz: NDArray[np.float64] | None = None  # before the references were removed
    coherence: tuple[tuple[str, NDArray[np.float64]], ...] = ()  # each reference's coherence with the output
    first_input_v2_per_hz: NDArray[np.float64] | None = None  # cross-spectrum: the first input alone
    resolution_v2_per_hz: NDArray[np.float64] | None = None  # cross-spectrum: the density one bin resolves


@dataclass(frozen=True)
class AnalysisFiles:
    """The captures an analysis read, as they were named to it (a relative name is relative to where the
    analysis ran; the provenance names them relative to the results file)."""

    terminated: str | tuple[str, ...]
    floor: str | None = None
    shorted: str | None = None
    tone: str | None = None
    response: str | None = None
    background: str | None = figure(default=None, omit_if_none=True)  # the cross-spectrum's correlated background

    def paths(self) -> dict[str, tuple[str, ...]]:
        """Each role's file names (several for repeated terminated captures)."""
        out = {}
        for role in ("terminated", "floor", "shorted", "tone", "response", "background"):
            value = getattr(self, role)
            if value:
                out[role] = (value,) if isinstance(value, str) else tuple(value)
        return out


@dataclass(frozen=True)
class AnalysisResult(ResultFile):
    """Everything the gain-method analysis found, with its conditions.

    Scalars carry their unit in the name.  ``spectra`` holds the arrays for
    plots (in memory only) and ``uncertainty`` the full uncertainty budgets
    (``uncertainty["ein_db"]`` is the expanded uncertainty of the EIN).
    """

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {
        "gain_frequency_hz": dict(exclusiveMinimum=0), "gain_std_db": dict(minimum=0),
        "rs_ohm": dict(exclusiveMinimum=0), "temperature_k": dict(exclusiveMinimum=0), "ein_vrms": dict(minimum=0),
        "input_density_at_1khz_v_per_rthz": dict(minimum=0), "output_noise_vrms": dict(minimum=0),
        "output_noise_with_spurs_vrms": dict(minimum=0), "output_noise_uncorrected_vrms": dict(minimum=0),
        "flicker_corner_hz": dict(exclusiveMinimum=0), "flicker_corner_std_hz": dict(minimum=0),
        "mains_hz": dict(exclusiveMinimum=0), "sample_rate_hz": dict(exclusiveMinimum=0),
        "segment_length": dict(minimum=1), "rbw_hz": dict(exclusiveMinimum=0), "n_averages": dict(minimum=1),
        "dof": dict(exclusiveMinimum=0), "volts_per_fs": dict(exclusiveMinimum=0)}

    KIND = "analysis"

    gain_db: float
    gain_frequency_hz: float
    gain_std_db: float
    gain_reference: str
    rs_ohm: float
    temperature_k: float
    band_hz: tuple[float, float]
    weighting: Weighting
    detector: Detector
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
    uncertainty: Uncertainty
    repeats: RepeatSummary | None
    sample_rate_hz: float
    segment_length: int
    spectrum_window: str
    rbw_hz: float
    n_averages: int
    dof: float
    volts_per_fs: float | None
    files: AnalysisFiles
    spot: tuple[SpotValue, ...]
    notes: tuple[str, ...]
    warnings: tuple[str, ...] = ()  # one line each, also on stderr as "benchnf: warning: ..."
    # How the DUT's output spectrum was estimated: one channel's Welch auto-spectrum (less the floor), or the
    # averaged cross-spectrum of two channels on the one output (less the correlated background).
    output_estimator: OutputEstimator = "auto-spectrum"
    cross: CrossSummary | None = figure(default=None, omit_if_none=True)
    # What reference channels (a supply rail, a mains loop) explain of the output; the figures are then of the
    # output with their coherent parts removed.
    attribution: tuple[Attribution, ...] | None = figure(default=None, omit_if_none=True)
    attribution_all: AttributionTotal | None = figure(default=None, omit_if_none=True)
    provenance: Provenance | None = figure(default=None, omit_if_none=True)
    spectra: AnalysisSpectra | None = memory_only()

    def __post_init__(self) -> None:
        lo, hi = self.band_hz
        if not 0 <= lo < hi:
            from ..errors import ParameterError
            raise ParameterError(f"band_hz {lo:g}-{hi:g} Hz: the low edge must be >= 0 and below the high edge")

    @property
    def budgets(self) -> dict[str, Budget]:
        """The uncertainty budgets by figure (``ein_db``, ``noise_figure_db``, ``gain_db``, ``nf_at_1khz_db``)."""
        return self.uncertainty.budgets

    def figure(self, key: str) -> float | None:
        """A scalar figure by its name (one of SCALAR_FIGURES, the names profiles use); None where the
        analysis did not resolve it."""
        if key not in SCALAR_FIGURES:
            raise KeyError(f"{key!r} is not a scalar figure of a gain-method result")
        value = getattr(self, key)
        return float(value) if value is not None and math.isfinite(value) else None

    def figure_u(self, key: str) -> float | None:
        """The expanded uncertainty (k = 2) of a scalar figure, in dB for levels, densities and voltages (as a
        ratio), in Hz for the 1/f corner; None where the result states none."""
        if key == "flicker_corner_hz":
            return 2 * self.flicker_corner_std_hz if self.flicker_corner_std_hz is not None else None
        budget = FIGURE_UNITS[key][1]
        return self.uncertainty.get(budget) if budget else None
