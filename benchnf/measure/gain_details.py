"""The detailed figures of the gain method: spot values, the 1/f corner, the quasi-peak reading, the
spot NF budget and repeats. Called by the steps of :mod:`benchnf.measure.gain_method`."""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray

from ..capture import Capture
from ..dsp.spectrum import Psd
from ..dsp.spurs import LineSearch, find_lines
from ..dsp.weighting import Band
from ..errors import MeasurementError, ParameterError
from ..noise.floor import band_relative_std, band_std
from ..noise.gain_method import (
    band_noise_factor,
    spot_means,
    spot_noise_factor,
    third_octave_centres_hz,
    third_octave_weights,
)
from ..noise.uncertainty import Budget, dut_power_rel_std, ein_budget, nf_budget
from ..units import BOLTZMANN_J_PER_K, T0_K, power_db, thermal_density_v2_per_hz, vrms_to_dbu
from .gain import GainEstimate
from .noise_inputs import NoiseInput
from .results import RepeatSummary, SpotValue

__all__ = ["resolved", "line_mask", "spot_values", "nonzero_span", "flicker_fit", "qp_ein", "spot_power",
           "spot_nf_budget", "spot_density_budget", "repeat_values"]

_MAX_QP_SECONDS = 30.0


def resolved(weights: NDArray[np.float64], measured: NDArray[np.float64], floor: NDArray[np.float64] | None,
              *, dof_measured: float, dof_floor: float | None, correlation: tuple[float, ...],
              variance_measured: NDArray[np.float64] | None = None) -> bool:
    """True if the excess of `measured` over `floor` (over zero for a cross-spectrum estimate, whose bins'
    `variance_measured` is given) in these weighted bins exceeds 3 sigma."""
    m = float(np.dot(weights, measured))
    if variance_measured is not None and floor is None:  # a negative estimate is not resolved either
        return m > 0 and m > 3.0 * band_std(weights, variance_measured, correlation)
    if floor is None or dof_floor is None:
        return True
    fl = float(np.dot(weights, floor))
    sm = band_relative_std(weights, measured, dof=dof_measured, correlation=correlation) * m
    sf = band_relative_std(weights, floor, dof=dof_floor, correlation=correlation) * fl
    return m - fl > 3.0 * math.hypot(sm, sf)


def line_mask(search: LineSearch, size: int) -> NDArray[np.bool_]:
    mask = np.zeros(size, dtype=bool)
    for line in search.lines:
        mask[line.bins[0]:line.bins[1] + 1] = True
    return mask


def spot_values(f, band, fs, p_term, p_floor, p_short, term_clean, floor_clean, short_clean, out_diff,
           e2_diff, en_diff, rs_ohm, temperature_k, notes, term_var=None, short_var=None) -> list[SpotValue]:
    """One-third-octave spot values; a band narrower than one bin is not listed."""
    spot_band = Band(band.low_hz, min(band.high_hz, fs / 2 / 10 ** (1 / 20)))
    centres = [c for c in third_octave_centres_hz(spot_band)
               if c[1] * (10 ** (1 / 20) - 10 ** (-1 / 20)) >= p_term.bin_width_hz]
    spot_w = [third_octave_weights(f, exact) for _label, exact in centres]
    e2_spot = spot_means(spot_w, e2_diff)
    out_spot = spot_means(spot_w, out_diff)
    nf_spot = spot_noise_factor(e2_spot, rs_ohm=rs_ohm, temperature_k=temperature_k)
    en_spot = spot_means(spot_w, en_diff) if en_diff is not None else None
    kernel = p_term.correlation_kernel
    floor_dof = p_floor.dof if p_floor is not None else None
    spots, low_margin = [], []
    for i, ((label, _exact), w_full) in enumerate(zip(centres, spot_w)):
        span = nonzero_span(w_full)  # a band's few bins: the rest weigh nothing
        w_s, term_s = w_full[span], term_clean[span]
        var_s = term_var[span] if term_var is not None else None
        floor_s = floor_clean[span] if floor_clean is not None else None
        ok = e2_spot[i] > 0 and resolved(w_s, term_s, floor_s, dof_measured=p_term.dof,
                                          dof_floor=floor_dof, correlation=kernel, variance_measured=var_s)
        m_band = float(np.dot(w_s, term_s))
        f_band = float(np.dot(w_s, floor_s)) if floor_s is not None else None
        m_db = float(power_db(m_band / f_band)) if f_band is not None else None
        if m_db is not None and m_db < 3.0:
            low_margin.append(label)
        en_ok = (en_spot is not None and short_clean is not None and en_spot[i] > 0
                 and resolved(w_s, short_clean[span], floor_s, dof_measured=p_short.dof,
                               dof_floor=floor_dof, correlation=kernel,
                               variance_measured=short_var[span] if short_var is not None else None))
        rel = dut_power_rel_std(
            measured=m_band, measured_rel_std=band_relative_std(w_s, term_s, dof=p_term.dof, correlation=kernel,
                                                                variance=var_s),
            floor=f_band, floor_rel_std=(band_relative_std(w_s, floor_s, dof=floor_dof, correlation=kernel)
                                         if floor_s is not None and floor_dof is not None else None))
        spots.append(SpotValue(
            freq_hz=label,
            input_density_v_per_rthz=math.sqrt(e2_spot[i]) if ok else None,
            noise_figure_db=float(power_db(nf_spot[i])) if ok and nf_spot[i] > 0 else None,
            output_density_v_per_rthz=math.sqrt(out_spot[i]) if ok else None,
            floor_margin_db=m_db,
            voltage_noise_v_per_rthz=math.sqrt(en_spot[i]) if en_ok and en_spot is not None else None,
            # A density's amplitude has half the relative uncertainty of its power: U = 2 * 8.686 * rel / 2 dB.
            input_density_expanded_db=float(8.686 * rel) if ok and math.isfinite(rel) else None,
            # dF = e2 rel / (4 k T0 Rs): U = 10/ln10 * 2 dF / F dB.
            noise_figure_expanded_db=(float(8.686 * rel * e2_spot[i] / (4 * BOLTZMANN_J_PER_K * T0_K * rs_ohm)
                                            / nf_spot[i]) if ok and nf_spot[i] > 0 and math.isfinite(rel) else None),
        ))
    if low_margin:
        notes.append("less than 3 dB above the analyzer floor at " +
                     ", ".join(f"{x:g} Hz" for x in low_margin) + ": those spot values are uncertain")
    if not any(s.input_density_v_per_rthz for s in spots):
        notes.append("no spot frequency is resolved above the floor")
    return spots


def _kernel_sum(kernel: tuple[float, ...]) -> float:
    """Bins' worth of variance one bin carries with its correlated neighbours (35/18 for Hann)."""
    return kernel[0] + 2.0 * sum(kernel[1:])


def nonzero_span(weights: NDArray[np.float64]) -> slice:
    """The slice from the first to the last non-zero weight."""
    nz = np.flatnonzero(weights)
    return slice(int(nz[0]), int(nz[-1]) + 1) if nz.size else slice(0, 0)


def flicker_fit(f, en_diff, e2_diff, s_term, p_term, band, range_hz, free_slope, notes):
    """The 1/f corner: on the voltage noise (shorted) when given, else on the total input noise."""
    from ..noise.flicker import fit_flicker
    target, on = ((en_diff, "shorted (amplifier voltage noise)") if en_diff is not None
                  else (e2_diff, "terminated (total input noise, source included)"))
    rng = range_hz if range_hz is not None else (max(band.low_hz, 2 * p_term.bin_width_hz),
                                                 min(band.high_hz, 10_000.0))
    try:
        fit = fit_flicker(f, target, dof=p_term.dof, enbw_bins=_kernel_sum(p_term.correlation_kernel),
                          range_hz=rng, exclude=line_mask(s_term, f.size), free_slope=free_slope)
    except MeasurementError as err:
        notes.append(f"no 1/f corner: {err}")
        return None, None
    why = flicker_unresolved(fit.corner_hz, fit.corner_std_hz, band)
    if why:
        notes.append(f"1/f corner not resolved: {why}")
        return None, None
    return fit, on


def flicker_unresolved(corner_hz: float, corner_std_hz: float, band: Band) -> str:
    """Why a fitted 1/f corner is no figure (empty when it is one): it lies outside the band, where the data
    do not show it, or its k = 2 interval spans more than a decade (reaching zero counts as infinitely many)."""
    if not (math.isfinite(corner_hz) and band.low_hz <= corner_hz <= band.high_hz):
        where = "below" if corner_hz < band.low_hz else "above"
        return f"the fit puts it at {corner_hz:.3g} Hz, {where} the band {band.label()}, where the data cannot show it"
    low, high = corner_hz - 2 * corner_std_hz, corner_hz + 2 * corner_std_hz
    if not (math.isfinite(high) and low > 0 and high / low <= 10):
        return (f"the fit puts it at {corner_hz:.3g} Hz, but its k=2 interval "
                f"({max(low, 0):.3g}-{high:.3g} Hz) spans more than a decade")
    return ""


def qp_ein(capture: NoiseInput, p_term: Psd, p_floor: Psd | None, w_band, g: GainEstimate,
            notes: list[str]) -> float:
    from ..dsp.quasipeak import qp_reading
    if not isinstance(capture, Capture):
        raise ParameterError("a quasi-peak reading needs a time-domain capture, not a spectrum trace")
    x = capture.read(max_frames=int(_MAX_QP_SECONDS * capture.sample_rate_hz))
    reading = qp_reading(x * capture.volts_per_fs_or_raise("a quasi-peak reading"),
                         sample_rate_hz=capture.sample_rate_hz)
    qp = reading.median
    if p_floor is not None:
        ratio = float(np.dot(w_band, p_floor.psd_per_hz) / np.dot(w_band, p_term.psd_per_hz))
        qp *= math.sqrt(max(1.0 - ratio, 0.0))
        notes.append("quasi-peak reading floor-corrected by the weighted RMS ratio of floor to DUT "
                     "(assumes the same peak-to-RMS behaviour for both noises)")
    g_1k = math.sqrt(float(np.interp(1000.0, p_term.frequency_hz, g.power_gain)))
    notes.append(f"quasi-peak: median indication over {reading.seconds_used:.1f} s after settling "
                 f"(95th percentile {reading.p95 / reading.median:.2f} times higher), referred through "
                 f"the gain at 1 kHz")
    return qp / g_1k


def spot_power(f, centre_hz, p_term, p_floor, term_clean, floor_clean, term_var=None) -> tuple[float, float, float]:
    """(DUT output power in the one-third-octave band at `centre_hz` less the floor, its relative standard
    uncertainty from the Welch statistics of both, the band's weight sum)."""
    w = third_octave_weights(f, centre_hz)
    kernel = p_term.correlation_kernel
    m = float(np.dot(w, term_clean))
    m_rel = band_relative_std(w, term_clean, dof=p_term.dof, correlation=kernel, variance=term_var)
    fl = fl_rel = None
    if p_floor is not None:
        fl = float(np.dot(w, floor_clean))
        fl_rel = band_relative_std(w, floor_clean, dof=p_floor.dof, correlation=kernel)
    rel = dut_power_rel_std(measured=m, measured_rel_std=m_rel, floor=fl, floor_rel_std=fl_rel)
    return m - (fl or 0.0), rel, float(w.sum())


def spot_nf_budget(f, centre_hz, p_term, p_floor, term_clean, floor_clean, g, gain, stated, rs_ohm,
                    temperature_k, term_var=None) -> Budget:
    w = third_octave_weights(f, centre_hz)
    power, rel, b = spot_power(f, centre_hz, p_term, p_floor, term_clean, floor_clean, term_var)
    e2 = power / float(np.dot(w, g.power_gain)) * b
    n0 = 4 * BOLTZMANN_J_PER_K * T0_K * rs_ohm * b
    nt = float(thermal_density_v2_per_hz(resistance_ohm=rs_ohm, temperature_k=temperature_k)) * b
    factor = 1 + (e2 - nt) / n0
    return nf_budget(quantity="nf_at_1khz_db", noise_factor=factor, excess_over_n0=e2 / n0, dut_rel_std=rel,
                     floor_corrected=p_floor is not None, gain_kind=gain.kind,
                     gain_rel_std=g.gain_rel_std, stated=stated, response_rel_std=g.response_rel_std)


def spot_density_budget(quantity: str, value_v_per_rthz: float, f, p_term, p_floor, term_clean, floor_clean, g,
                        gain, stated, term_var=None) -> Budget:
    """Budget of an input-referred spot density at 1 kHz in dB (20 lg of the density): the one-third-octave
    band's Welch statistics (with the floor's) and the gain's ingredients, as for the EIN (the density is
    an input-referred amplitude like it)."""
    _power, rel, _b = spot_power(f, 1000.0, p_term, p_floor, term_clean, floor_clean, term_var)
    budget = ein_budget(value_db=20 * math.log10(value_v_per_rthz), dut_rel_std=rel,
                        floor_corrected=p_floor is not None, gain_kind=gain.kind, gain_rel_std=g.gain_rel_std,
                        stated=stated, response_rel_std=g.response_rel_std)
    return Budget(quantity, budget.value_db, budget.contributions)


def repeat_values(p_runs, p_floor, floor_clean, g, w_band, used, f, band, weighting, rs_ohm, temperature_k,
             *, mains_hz) -> RepeatSummary:
    eins, nfs = [], []
    for p in p_runs:
        clean = find_lines(p, mains_hz=mains_hz).cleaned
        diff = clean - floor_clean if floor_clean is not None else clean
        e2 = diff / g.power_gain
        eins.append(float(vrms_to_dbu(math.sqrt(max(float(np.dot(w_band[used], e2[used])), 1e-300)))))
        nfs.append(float(power_db(max(band_noise_factor(f, e2, band, weighting=weighting, rs_ohm=rs_ohm,
                                                        temperature_k=temperature_k), 1e-12))))
    idx = np.arange(len(nfs), dtype=np.float64)
    slope = float(np.polyfit(idx, nfs, 1)[0]) if len(nfs) > 1 else 0.0
    return RepeatSummary(len(nfs), tuple(eins), tuple(nfs), float(np.std(eins, ddof=1)),
                         float(np.std(nfs, ddof=1)), slope)
