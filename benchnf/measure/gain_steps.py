"""The intermediates of the gain-method pipeline (:mod:`.gain_method`): small frozen records handed from one
named step to the next."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..dsp.spectrum import Psd
from ..dsp.spurs import LineSearch
from .attribution import Attributed
from .cross_estimate import CrossOutput
from .noise_inputs import NoiseInput

__all__ = ["Prepared", "Spectra", "Lines", "FloorStep", "BandFigures"]


@dataclass(frozen=True)
class Prepared:
    runs: list[NoiseInput]
    floor: NoiseInput | None
    shorted: NoiseInput | None
    fs: float
    seg: int
    vpfs: float | None


@dataclass(frozen=True)
class Spectra:
    runs: list[Psd]
    term: Psd
    floor: Psd | None
    short: Psd | None
    cross: CrossOutput | None = None  # the two channels' estimate (term is its DUT spectrum)
    attributed: Attributed | None = None  # the output conditioned on references (term is the conditioned one)

    @property
    def f(self) -> NDArray[np.float64]:
        return self.term.frequency_hz


@dataclass(frozen=True)
class Lines:
    term: LineSearch
    floor: LineSearch | None
    short: LineSearch | None

    @property
    def term_var(self) -> NDArray[np.float64] | None:
        """The cleaned terminated estimate's bin variances, for a cross-spectrum (else chi-square)."""
        return self.term.cleaned_variance

    @property
    def short_var(self) -> NDArray[np.float64] | None:
        """The cleaned shorted estimate's bin variances, for a cross-spectrum (else chi-square)."""
        return self.short.cleaned_variance if self.short is not None else None


@dataclass(frozen=True)
class FloorStep:
    w_band: NDArray[np.float64]
    used: NDArray[np.bool_]
    kernel: tuple[float, ...]
    m_band: float
    m_rel: float
    f_band: float | None
    f_rel: float | None
    margin_db: float | None
    out_diff: NDArray[np.float64]
    out_diff_spurs: NDArray[np.float64]


@dataclass(frozen=True)
class BandFigures:
    e2_diff: NDArray[np.float64]
    ein_power: float
    ein: float
    ein_spurs: float
    noise_factor: float
    b_w: float
    thermal: float
    out_noise: float
    out_spurs: float
    out_raw: float
