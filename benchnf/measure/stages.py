"""Where the noise comes from: measured stage budgets from tap captures, and en/in from an Rs sweep.

Both build on the gain-method pieces of :mod:`benchnf.measure.gain_method`: each capture
gives an input-referred density ``e^2(f) = (S - S_floor) / |G|^2`` (lines
removed), with the variance of every bin from the Welch statistics of the
capture and of the floor, ``var = (2/nu_m S_m^2 + 2/nu_f S_f^2) / |G|^4``.
The formulas are in :mod:`benchnf.noise.cascade` and
:mod:`benchnf.noise.twoport`; the method in docs/cascade.md.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np
from numpy.typing import NDArray

from ..codec import ResultFile, figure, memory_only
from .assumptions import NO_FLOOR
from .gain import GainSetup, measure_gain
from .noise_inputs import capture_psd
from .physics import CAUSES, check_physics
from .provenance import Provenance
from ..capture import Capture
from ..dsp.integrate import band_bin_weights
from ..dsp.scatter import band_power_rel_var
from ..dsp.spectrum import Psd, default_segment_length
from ..dsp.spurs import find_lines
from ..dsp.weighting import Band
from ..errors import CaptureError, MeasurementError, ParameterError
from ..noise.floor import correlated_sum_variance
from ..noise.cascade import Chain, predict
from ..noise.gain_method import third_octave_centres_hz, third_octave_weights
from ..noise.twoport import EnInFit, fit_en_in, noise_factor_vs_rs, noise_figure_u95_vs_rs
from ..units import BOLTZMANN_J_PER_K, T0_K

__all__ = ["InputReferred", "input_referred", "TapResult", "BudgetResult", "measured_budget",
           "EniRow", "EniPoint", "NfCurve", "NfVsRs", "EniResult", "extract_en_in", "SCHEMA_VERSION"]

SCHEMA_VERSION = "1"


@dataclass(frozen=True)
class InputReferred:
    """Input-referred density of one capture, with per-bin variance and the gain used."""

    frequency_hz: NDArray[np.float64]
    density_v2_per_hz: NDArray[np.float64]
    variance: NDArray[np.float64]
    gain_db: float
    gain_rel_std: float
    correlation: tuple[float, ...]
    label: str
    seen_band_variance: float | None = None  # of the band mean, from the captures' own scatter (.dsp.scatter)

    def band_mean(self, weights: NDArray[np.float64]) -> tuple[float, float]:
        """Weighted mean density over the band and its standard deviation: the larger of the Welch statistics'
        (bins correlated by the window, :func:`benchnf.noise.floor.correlated_sum_variance`) and the scatter
        the tap and floor captures actually show over the band they were referred for."""
        wsum = float(weights.sum())
        mean = float(np.dot(weights, self.density_v2_per_hz)) / wsum
        var = correlated_sum_variance(weights * np.sqrt(self.variance), self.correlation) / wsum ** 2
        return mean, math.sqrt(max(var, self.seen_band_variance or 0.0))


#: The longest stretch of a capture its band power's scatter is estimated from.
SCATTER_SECONDS = 120.0


def seen_rel_var(capture: Capture | Psd, segment_length: int, weights: NDArray[np.float64]) -> float | None:
    """The relative variance of a capture's mean band power as its own segments scatter (None for a trace)."""
    if not isinstance(capture, Capture):
        return None
    x = capture.read(max_frames=int(SCATTER_SECONDS * capture.sample_rate_hz))
    return band_power_rel_var(x, segment_length, weights)


def input_referred(capture: Capture | Psd, gain: GainSetup, *, rs_ohm: float, floor: Psd | None,
                   segment_length: int, band: Band, floor_rel_var: float | None = None) -> InputReferred:
    """Input-referred density of a capture (lines removed, floor subtracted), its variance from the Welch
    statistics, and the variance of its band mean from the scatter the capture (and the floor's, given as
    `floor_rel_var`) actually show."""
    p = capture_psd(capture, segment_length=segment_length)
    clean = find_lines(p).cleaned
    var_out = 2.0 / p.dof * clean ** 2
    diff, floor_clean = clean, np.zeros_like(clean)
    if floor is not None:
        floor_clean = find_lines(floor).cleaned
        diff = clean - floor_clean
        var_out = var_out + 2.0 / floor.dof * floor_clean ** 2
    vpfs = capture.volts_per_fs if isinstance(capture, Capture) else None
    g = measure_gain(gain, frequency_hz=p.frequency_hz, rs_ohm=rs_ohm, segment_length=segment_length,
                     output_volts_per_fs=vpfs, band=band)
    label = capture.label if isinstance(capture, Capture) else "spectrum"
    w = band_bin_weights(p.frequency_hz, band)
    seen = None
    rel = seen_rel_var(capture, segment_length, w)
    if rel is not None:
        band_of = (lambda v: float(np.dot(w, v)) / float(w.sum()))  # noqa: E731
        out_var = rel * band_of(clean) ** 2 + (floor_rel_var or 0.0) * band_of(floor_clean) ** 2
        seen = out_var / band_of(g.power_gain) ** 2
    return InputReferred(p.frequency_hz, diff / g.power_gain, var_out / g.power_gain ** 2, g.gain_db,
                         g.gain_rel_std, p.correlation_kernel, label, seen)


# -- measured stage budget -------------------------------------------------------------------
@dataclass(frozen=True)
class TapResult:
    """One tap: the noise after a stage, referred to the chain's input."""

    name: str
    gain_db: float
    input_density_v_per_rthz: float
    input_density_std_v_per_rthz: float
    added_v2_per_hz: float
    added_std_v2_per_hz: float
    predicted_added_v2_per_hz: float | None
    share_measured: float
    share_predicted: float | None
    unexplained: bool


@dataclass(frozen=True)
class BudgetResult(ResultFile):
    """The measured stage budget beside the prediction."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {
        "rs_ohm": dict(exclusiveMinimum=0), "temperature_k": dict(exclusiveMinimum=0),
        "source_density_v_per_rthz": dict(minimum=0)}

    KIND = "budget"

    band_hz: tuple[float, float]
    rs_ohm: float
    temperature_k: float
    source_density_v_per_rthz: float
    taps: tuple[TapResult, ...]
    measured_noise_figure_db: float
    predicted_noise_figure_db: float | None
    notes: tuple[str, ...]
    warnings: tuple[str, ...] = ()  # one line each, also on stderr as "benchnf: warning: ..."
    measured_noise_figure_u95_db: float | None = None  # U (k=2) from the last tap's Welch statistics and gain
    provenance: Provenance | None = figure(default=None, omit_if_none=True)


def measured_budget(*, taps: Sequence[tuple[str, Capture, GainSetup]], rs_ohm: float,
                    temperature_k: float = T0_K, floor: Capture | None = None, chain: Chain | None = None,
                    band: Band = Band(400.0, 20_000.0), segment_length: int | None = None,
                    assumptions: Sequence[str] = ()) -> BudgetResult:
    """What each stage adds, measured at taps after each stage, against the chain's prediction.

    Parameters
    ----------
    taps : sequence of (name, noise capture, gain setup)
        In chain order: the chain's input terminated in `rs_ohm`, the noise at the
        output of each stage, and how the gain from the input to that tap is known.
    chain : Chain, optional
        Stated part data, for the prediction (same stages, same order).
    band : Band
        Where the densities are averaged (default 400 Hz-20 kHz, above most 1/f).

    Notes
    -----
    After tap k the input-referred density is ``e_k^2``; stage k added
    ``e_k^2 - e_{k-1}^2`` (``e_0^2 = 4kT Rs``).  A stage's measured addition
    differs from the prediction ("unexplained") when the difference exceeds
    twice its combined standard uncertainty (Welch statistics of both taps and
    the floor, and the gain fits).

    Raises
    ------
    ParameterError
        Taps whose gain does not increase, a chain of another length.
    """
    if not taps:
        raise ParameterError("a budget needs at least one tap")
    if chain is not None and len(chain.stages) != len(taps):
        raise ParameterError(f"the chain has {len(chain.stages)} stages but {len(taps)} taps were given")
    first = taps[0][1]
    fs = first.sample_rate_hz
    seg = default_segment_length(fs) if segment_length is None else int(segment_length)
    p_floor = capture_psd(floor, segment_length=seg) if floor is not None else None
    floor_rel = (seen_rel_var(floor, seg, band_bin_weights(p_floor.frequency_hz, band))
                 if floor is not None and p_floor is not None else None)
    refs = [input_referred(cap, g, rs_ohm=rs_ohm, floor=p_floor, segment_length=seg, band=band,
                           floor_rel_var=floor_rel) for _name, cap, g in taps]
    for a, b, (na, _, _), (nb, _, _) in zip(refs, refs[1:], taps, taps[1:]):
        if not b.gain_db > a.gain_db:
            raise ParameterError(f"tap {nb!r} has gain {b.gain_db:.2f} dB, not more than tap {na!r} "
                                 f"({a.gain_db:.2f} dB): give the taps in chain order")
    w = band_bin_weights(refs[0].frequency_hz, band)
    source = 4 * BOLTZMANN_J_PER_K * temperature_k * rs_ohm
    prediction = None
    predicted_cum: list[float] | None = None
    if chain is not None:
        chain_here = Chain(chain.stages, source_ohm=chain.source_ohm or rs_ohm, temperature_k=temperature_k,
                           name=chain.name)
        prediction = predict(chain_here)
        if prediction.form == "voltage":
            predicted_cum = [s.contribution for s in prediction.stages]
        else:  # Friis: the amplifier part of F - 1, in density terms at this Rs
            n0 = 4 * BOLTZMANN_J_PER_K * T0_K * rs_ohm
            predicted_cum = [s.contribution * n0 for s in prediction.stages]
    notes: list[str] = [*assumptions, *([] if floor is not None else [NO_FLOOR])]
    results = []
    prev_mean, prev_std = source, 0.0
    means = []
    for k, (ref, (name, _cap, _g)) in enumerate(zip(refs, taps)):
        mean, std = ref.band_mean(w)
        std = math.hypot(std, 2 * ref.gain_rel_std * mean)
        means.append(mean)
        added = mean - prev_mean
        added_std = math.hypot(std, prev_std)
        pred = predicted_cum[k] if predicted_cum is not None else None
        unexplained = pred is not None and abs(added - pred) > 2 * added_std
        if unexplained:
            notes.append(f"unexplained noise at stage {k + 1} ({name}): it adds "
                         f"{math.sqrt(max(added, 0)) * 1e9:.3f} nV/rtHz (referred to the input) where the part "
                         f"data predict {math.sqrt(max(pred or 0.0, 0)) * 1e9:.3f} nV/rtHz "
                         f"(difference beyond twice its uncertainty)")
        results.append((name, ref.gain_db, mean, std, added, added_std, pred))
        prev_mean, prev_std = mean, std
    total_excess = means[-1] - source
    pred_total = sum(predicted_cum) if predicted_cum is not None else None
    taps_out = tuple(TapResult(name, g, math.sqrt(max(m, 0)), s / (2 * math.sqrt(m)) if m > 0 else math.inf,
                               a, a_s, p, a / total_excess if total_excess > 0 else math.nan,
                               (p / pred_total) if (p is not None and pred_total) else None,
                               bool(p is not None and abs(a - p) > 2 * a_s))
                     for name, g, m, s, a, a_s, p in results)
    n0 = 4 * BOLTZMANN_J_PER_K * T0_K * rs_ohm
    for (tap, _gain_db, m, sd, *_rest) in results:  # every tap carries at least the source's noise
        if not m > 0:
            raise MeasurementError(f"tap {tap} cannot be told from the analyzer floor in the band (its noise less "
                                   f"the floor's came out at or below zero): raise the tap's level (more gain "
                                   f"before the analyzer), use a quieter analyzer, or record both longer")
        check_physics(rs_ohm=rs_ohm, temperature_k=temperature_k, band_ratio=m / source,
                      band_u95_db=10 * math.log10(1 + 2 * sd / m), spots=(), where=f"at tap {tap}", band_k=3.0)
    factor = 1 + (means[-1] - source) / n0  # IEEE F, source at its own T
    if not factor > 0:
        raise MeasurementError(f"the last tap's noise factor came out at {factor:.3g}, at or below zero: "
                               f"likely causes: {CAUSES}")
    measured_nf = 10 * math.log10(factor)
    # dF = d(e^2)/N0, so U(NF) = 10/ln10 * 2 std / (N0 F) dB (first order, GUM 5.1.2)
    nf_u95 = 10 / math.log(10) * 2 * results[-1][3] / (n0 * factor)
    return BudgetResult((band.low_hz, band.high_hz), rs_ohm, temperature_k, math.sqrt(source), taps_out,
                        measured_nf, prediction.noise_figure_db if prediction is not None else None,
                        tuple(notes), measured_noise_figure_u95_db=nf_u95)


# -- en/in from an Rs sweep ------------------------------------------------------------------
@dataclass(frozen=True)
class EniRow:
    """en, in (and their correlation) at one frequency, with Ropt and NFmin where the sweep determines them;
    the reasons it does not determine one are under ``undetermined``."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {"freq_hz": dict(exclusiveMinimum=0)}

    freq_hz: float
    en_v_per_rthz: float | None
    in_a_per_rthz: float | None
    en_std_v_per_rthz: float | None
    in_std_a_per_rthz: float | None
    correlation: float | None
    correlation_std: float | None
    ropt_ohm: float | None
    ropt_u95_ohm: float | None
    nfmin_db: float | None
    nfmin_u95_db: float | None
    undetermined: tuple[str, ...] = ()


@dataclass(frozen=True)
class EniPoint:
    """One capture of the sweep: its source resistance and temperature, gain and density at 1 kHz."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {
        "rs_ohm": dict(minimum=0), "temperature_k": dict(exclusiveMinimum=0),
        "input_density_at_1khz_v_per_rthz": dict(minimum=0)}

    rs_ohm: float
    temperature_k: float
    label: str
    gain_db: float
    input_density_at_1khz_v_per_rthz: float


@dataclass(frozen=True)
class NfCurve:
    """The noise figure against source resistance at one frequency, with its expanded uncertainty."""

    rs_ohm: tuple[float, ...]
    noise_figure_db: tuple[float, ...]
    noise_figure_u95_db: tuple[float, ...] | None


@dataclass(frozen=True)
class NfVsRs:
    """Noise figure curves against Rs, keyed by their frequency in Hz (as text)."""

    rs_ohm_grid: tuple[float, ...]
    curves: dict[str, NfCurve]


@dataclass(frozen=True)
class EniResult(ResultFile):
    """en, in (and rho) against frequency from an Rs sweep, with NF(Rs) curves.

    The five figures at 1 kHz repeat ``at_1khz`` for scripts that read only the top level.
    """

    KIND = "eni"

    en_at_1khz_v_per_rthz: float | None
    in_at_1khz_a_per_rthz: float | None
    ropt_at_1khz_ohm: float | None
    nfmin_at_1khz_db: float | None
    correlation_at_1khz: float | None
    at_1khz: EniRow
    rows: tuple[EniRow, ...]
    points: tuple[EniPoint, ...]
    nf_vs_rs: NfVsRs
    notes: tuple[str, ...]
    warnings: tuple[str, ...] = ()  # one line each, also on stderr as "benchnf: warning: ..."
    provenance: Provenance | None = figure(default=None, omit_if_none=True)
    fit: EnInFit | None = memory_only()

    @classmethod
    def of(cls, at_1khz: EniRow, **rest: Any) -> "EniResult":
        """The result with its top-level figures taken from `at_1khz`."""
        a = at_1khz
        return cls(a.en_v_per_rthz, a.in_a_per_rthz, a.ropt_ohm, a.nfmin_db, a.correlation, a, **rest)


def _eni_row(values: dict[str, Any]) -> EniRow:
    return EniRow(**{**values, "undetermined": tuple(values.get("undetermined") or ())})


def extract_en_in(*, sweep: Sequence[tuple[Capture | Psd, float, float, GainSetup]], floor: Capture | None = None,
                  band: Band = Band(20.0, 20_000.0), segment_length: int | None = None,
                  curve_hz: Sequence[float] = (100.0, 1000.0, 10_000.0),
                  assumptions: Sequence[str] = ()) -> EniResult:
    """en and in per one-third-octave band from captures at two or more source resistances.

    Parameters
    ----------
    sweep : sequence of (capture, rs_ohm, temperature_k, gain setup)
        Each capture with the input terminated in its Rs (0 = shorted) at its
        temperature, and how its gain (through that Rs) is known.
    """
    if len(sweep) < 2:
        raise ParameterError("en and in need captures at two or more source resistances (FILE@OHM ...)")
    rs = np.array([s[1] for s in sweep], dtype=np.float64)
    if np.unique(rs).size < 2:
        raise ParameterError("the sweep's captures all have the same source resistance: vary Rs")
    first = sweep[0][0]
    fs = first.sample_rate_hz
    for cap, *_ in sweep:
        if isinstance(cap, Capture) and cap.sample_rate_hz != fs:
            first_label = getattr(first, "label", "the first capture")
            raise CaptureError(f"{cap.label} was recorded at {cap.sample_rate_hz:g} Hz but {first_label} at "
                               f"{fs:g} Hz: record the sweep at one rate")
    seg = default_segment_length(fs) if segment_length is None else int(segment_length)
    p_floor = capture_psd(floor, segment_length=seg) if floor is not None else None
    refs = [input_referred(cap, g, rs_ohm=r, floor=p_floor, segment_length=seg, band=band)
            for cap, r, _t, g in sweep]
    f = refs[0].frequency_hz
    spot_band = Band(band.low_hz, min(band.high_hz, fs / 2 / 10 ** (1 / 20)))
    bin_w = f[1] - f[0]
    centres = [c for c in third_octave_centres_hz(spot_band) if c[1] * 0.2316 >= bin_w]
    weights = [third_octave_weights(f, exact) for _l, exact in centres]
    means = [[ref.band_mean(w) for w in weights] for ref in refs]  # (mean, std) per Rs and band
    dens = np.array([[m for m, _s in row] for row in means])
    var = np.array([[s ** 2 + (2 * ref.gain_rel_std * m) ** 2 for m, s in row] for row, ref in zip(means, refs)])
    temps = np.array([s[2] for s in sweep])
    fit = fit_en_in(rs, dens, var, temperature_k=temps, frequency_hz=[c[0] for c in centres])
    at_1k = _eni_row(fit.at(1000.0))
    rows = tuple(_eni_row(fit.at(c[0])) for c in centres)
    k_1k = int(np.argmin(np.abs(np.array([c[0] for c in centres]) - 1000.0)))
    points = tuple(EniPoint(float(r), float(t), ref.label, ref.gain_db, math.sqrt(max(float(dens[i, k_1k]), 0.0)))
                   for i, (ref, r, t) in enumerate(zip(refs, rs, temps)))
    grid = np.geomspace(max(min(rs[rs > 0], default=10.0) / 10, 1.0), max(rs.max() * 10, 1e4), 120)
    curves = {}
    for fc in curve_hz:
        v = fit.at(fc)
        if v["en_v_per_rthz"] and v["in_a_per_rthz"] and math.isfinite(v["en_v_per_rthz"]):
            factor = noise_factor_vs_rs(grid, en_v_per_rthz=v["en_v_per_rthz"], in_a_per_rthz=v["in_a_per_rthz"],
                                        correlation=v["correlation"] or 0.0)
            k = int(np.argmin(np.abs(fit.frequency_hz - fc)))
            u95 = (noise_figure_u95_vs_rs(grid, noise_factor=factor, cov=fit.cov[k])
                   if fit.cov is not None and np.all(np.isfinite(fit.cov[k])) else None)
            curves[f"{v['freq_hz']:g}"] = NfCurve(tuple(grid.tolist()), tuple((10 * np.log10(factor)).tolist()),
                                                  None if u95 is None else tuple(u95.tolist()))
    notes = [*assumptions, *([] if floor is not None else [NO_FLOOR]),
             "best SNR always comes at the lowest source impedance, not at Ropt: Ropt only minimises the "
             "amplifier's noise relative to the source's own"]
    if fit.correlation is None:
        notes.append("two source resistances: en and in fitted as uncorrelated (three or more give the "
                     "correlation too)")
    return EniResult.of(at_1k, rows=rows, points=points, nf_vs_rs=NfVsRs(tuple(grid.tolist()), curves),
                        notes=tuple(notes), fit=fit)
