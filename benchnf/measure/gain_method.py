"""The gain-method analysis as named steps: captures in, one frozen :class:`AnalysisResult` out.

Steps (each a function below, small typed intermediates between them):

1. ``_prepare``: validate the request; one sample rate; one calibration; the segment length.
2. ``_spectra``: checked Welch spectra of the terminated runs (pooled), the floor and the shorted input.
3. ``_lines``: hum and spur lines found on each spectrum, replaced by their baseline.
4. ``_floor``: band weights; the floor margin (refused below resolvability); floor subtraction.
5. ``_band_figures``: input-referred density, EIN, band noise factor, output noise.
6. ``_voltage_noise``: the shorted input's voltage noise, referred through the gain at the terminals.
7. spot values, spurs at the input, the 1/f corner, the quasi-peak reading.
8. ``_budgets``: the uncertainty budgets and the notes they imply.
9. ``_assemble``: the frozen result.

See docs/method.md for every equation.
"""

from __future__ import annotations

import math
from dataclasses import replace
from collections.abc import Sequence
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..capture import Capture
from ..dsp.integrate import band_bin_weights
from ..dsp.spectrum import Psd, default_segment_length, pool_psds
from ..dsp.spurs import find_lines, hum_hints
from ..dsp.weighting import ABOVE_HUM_HARMONIC, Band, above_hum_band, weighting_power_gain
from ..errors import CaptureError, MeasurementError, ParameterError, warnings_into
from ..noise.floor import band_relative_std, check_band_margin, subtract_floor
from ..noise.gain_method import (
    band_noise_factor,
    check_source,
    spot_noise_factor,
)
from ..noise.uncertainty import (
    Budget,
    StatedUncertainty,
    Uncertainty,
    dut_power_rel_std,
    ein_budget,
    gain_budget,
    nf_budget,
    output_noise_budget,
)
from ..units import BOLTZMANN_J_PER_K, T0_K, power_db, thermal_density_v2_per_hz, vrms_to_dbu, vrms_to_dbv
from .assumptions import NO_FLOOR
from .attribution import Reference, attributed_output, describe
from .cross_estimate import (CrossSetup, advice, check_cross_inputs, check_cross_resolved, check_multichannel,
                             cross_output, less_background, second_input_term, shorted_output, summarise_cross)
from .gain import GainEstimate, GainSetup, measure_gain
from .gain_steps import BandFigures, FloorStep, Lines, Prepared, Spectra
from .noise_inputs import NoiseInput, Progress, capture_psd, check_rates, label_of, path_of, with_vpfs
from .gain_details import flicker_fit, qp_ein, repeat_values, resolved, spot_density_budget, spot_nf_budget, spot_values
from .physics import check_not_swapped, check_physics, single_tone_warning
from .results import DETECTORS, AnalysisFiles, AnalysisResult, AnalysisSpectra, RepeatSummary, SpotValue, SpurValue

__all__ = ["analyze_gain_method"]

# -- the pipeline ---------------------------------------------------------------------------------
def analyze_gain_method(*, terminated: NoiseInput | Sequence[NoiseInput], gain: GainSetup, rs_ohm: float,
                        temperature_k: float = T0_K, floor: NoiseInput | None = None,
                        shorted: NoiseInput | None = None, band: Band = Band(20.0, 20_000.0),
                        weighting: str = "none", detector: str = "rms", segment_length: int | None = None,
                        mains_hz: float | None = None, flicker_range_hz: tuple[float, float] | None = None,
                        flicker_free_slope: bool = False, stated: StatedUncertainty = StatedUncertainty(),
                        reference_output_vrms: float | None = None, band_above_mains: bool = False,
                        assumptions: Sequence[str] = (), progress: Progress | None = None,
                        cross: CrossSetup | None = None, references: Sequence[Reference] = ()) -> AnalysisResult:
    """Gain, input-referred noise density, EIN and noise figure from captures.

    Parameters
    ----------
    terminated : Capture, Psd, or a sequence of them
        DUT output with its input terminated in `rs_ohm`; calibrated.  Several
        captures of the one condition are pooled, and their scatter and drift
        reported.
    gain : GainSetup
        How the gain is known.
    rs_ohm : float
        Source resistance in ohm, > 0.
    temperature_k : float
        Physical temperature of the source resistor in kelvin (290 K).
    floor : Capture or Psd, optional
        Analyzer alone, input terminated; subtracted in linear power.
    shorted : Capture or Psd, optional
        DUT output with its input shorted: the DUT's voltage noise alone.
    band : Band
        Integration band (20 Hz-20 kHz).
    weighting : str
        ``none``, ``A``, ``C``, ``468`` or ``468-2k``.
    detector : str
        ``rms``, or ``qp`` (the BS.468-4 quasi-peak meter, with ``468`` only).
    segment_length : int, optional
        Welch segment length; default bins of 3 Hz or finer (16384 samples at 48 kHz, RBW 4.39 Hz).
    mains_hz : float, optional
        Mains fundamental; found among 50 and 60 Hz when omitted.
    flicker_range_hz : (float, float), optional
        Range of the 1/f fit (default: the band's bottom to 10 kHz).
    flicker_free_slope : bool
        Fit the 1/f exponent too.
    stated : StatedUncertainty
        Limits of the user-stated quantities, for the uncertainty budget.
    reference_output_vrms : float, optional
        Output level for an SNR figure.
    band_above_mains : bool
        Replace `band` by :func:`~benchnf.dsp.weighting.above_hum_band` of the mains frequency found
        (the ``above-hum`` preset).
    assumptions : sequence of str
        Notes from the resolution of the inputs (e.g. a temperature nobody stated), listed first.
    progress : callable, optional
        Called with the number of frames read, as reading proceeds.
    cross : CrossSetup, optional
        Estimate the DUT's output spectrum by the averaged cross-spectrum of `terminated` (one capture)
        and a second channel of the same recording on the same output, less the correlated background's
        when given (:mod:`.cross_estimate`); no floor capture then.
    references : sequence of Reference
        Channels of the terminated recording that carry suspected sources (a supply rail, a mains loop): the
        output is conditioned on them, and what each explains is stated (:mod:`.attribution`).

    Returns
    -------
    AnalysisResult

    Raises
    ------
    BenchError
        Bad or mismatched captures, impossible parameters, DUT not resolved
        above the floor.

    References
    ----------
    .. [1] See :mod:`benchnf.noise.gain_method` and docs/method.md.
    """
    _validate(rs_ohm=rs_ohm, temperature_k=temperature_k, weighting=weighting, detector=detector,
              reference_output_vrms=reference_output_vrms)
    check_multichannel(cross=cross, references=references, detector=detector, terminated=terminated)
    prep = _prepare(terminated=terminated, floor=floor, shorted=shorted, gain=gain, band=band,
                    segment_length=segment_length, cross=cross)
    notes: list[str] = list(assumptions)
    warned: list[str] = []
    with warnings_into(warned):
        spec = _spectra(prep, progress=progress, cross=cross, references=references, band=band, weighting=weighting,
                        mains_hz=mains_hz)
        lines = _lines(spec, mains_hz=mains_hz)
        if band_above_mains:
            band = above_hum_band(lines.term.mains_hz)
            notes.append(f"band {band.label()}: from harmonic {ABOVE_HUM_HARMONIC} of the mains frequency "
                         + (f"found ({lines.term.mains_hz:g} Hz)" if lines.term.mains_hz else
                            "(none found: 50 Hz assumed)"))
        g = measure_gain(gain, frequency_hz=spec.f, rs_ohm=rs_ohm, segment_length=prep.seg,
                         output_volts_per_fs=prep.vpfs, band=band)
        fl = _floor(spec, lines, band=band, weighting=weighting, what=f"terminated capture {label_of(prep.runs[0])}",
                    notes=notes)
    bf = _band_figures(spec, fl, g, band=band, weighting=weighting, rs_ohm=rs_ohm, temperature_k=temperature_k)
    ein_reported = bf.ein if detector != "qp" else qp_ein(prep.runs[0], spec.term, spec.floor, fl.w_band, g, notes)
    en_diff = _voltage_noise(prep, spec, lines, fl, g, gain=gain, rs_ohm=rs_ohm, notes=notes)
    spots = spot_values(spec.f, band, prep.fs, spec.term, spec.floor, spec.short, lines.term.cleaned,
                   lines.floor.cleaned if lines.floor is not None else None,
                   lines.short.cleaned if lines.short is not None else None, fl.out_diff, bf.e2_diff, en_diff,
                   rs_ohm, temperature_k, notes, term_var=lines.term_var, short_var=lines.short_var)
    at_1k = next((s for s in spots if s.freq_hz == 1000.0), None)
    flicker, flicker_on = flicker_fit(spec.f, en_diff, bf.e2_diff, lines.term, spec.term, band, flicker_range_hz,
                                   flicker_free_slope, notes)
    budgets = _budgets(spec, lines, fl, bf, g, gain=gain, stated=stated, spots=spots, ein_reported=ein_reported,
                       rs_ohm=rs_ohm, temperature_k=temperature_k, calibrated=prep.vpfs is not None)
    repeats = _repeat_summary(spec, lines, fl, g, band=band, weighting=weighting, rs_ohm=rs_ohm,
                              temperature_k=temperature_k, notes=notes)
    return _assemble(prep, spec, lines, fl, bf, g, gain=gain, band=band, weighting=weighting, detector=detector,
                     rs_ohm=rs_ohm, temperature_k=temperature_k, ein_reported=ein_reported, en_diff=en_diff,
                     spots=spots, at_1k=at_1k, flicker=flicker, flicker_on=flicker_on, budgets=budgets,
                     stated=stated, repeats=repeats, reference_output_vrms=reference_output_vrms, notes=notes,
                     warned=[*warned, *filter(None, [single_tone_warning(
                         gain_kind=gain.kind, has_response=gain.response is not None, band=band, tone_hz=g.frequency_hz)])])


def _validate(*, rs_ohm: float, temperature_k: float, weighting: str, detector: str,
              reference_output_vrms: float | None) -> None:
    check_source(rs_ohm=rs_ohm, temperature_k=temperature_k)
    weighting_power_gain(weighting, np.array([1000.0]))  # validates the name
    if detector not in DETECTORS:
        raise ParameterError(f"detector {detector!r} is not one of {', '.join(DETECTORS)}")
    if detector == "qp" and weighting != "468":
        raise ParameterError("--detector qp is defined only with --weighting 468 (ITU-R BS.468-4); "
                             "use the RMS detector with other weightings")
    if reference_output_vrms is not None and not (math.isfinite(reference_output_vrms)
                                                  and reference_output_vrms > 0):
        raise ParameterError(f"reference output {reference_output_vrms!r} V must be > 0")


def _prepare(*, terminated: NoiseInput | Sequence[NoiseInput], floor: NoiseInput | None,
             shorted: NoiseInput | None, gain: GainSetup, band: Band, segment_length: int | None,
             cross: CrossSetup | None = None) -> Prepared:
    """One sample rate, one calibration, a trace that covers the band, the segment length."""
    runs: list[NoiseInput] = list(terminated) if isinstance(terminated, (list, tuple)) else [terminated]  # type: ignore[list-item]
    if not runs:
        raise ParameterError("give at least one terminated capture")
    if cross is not None:
        check_cross_inputs(runs, floor=floor, shorted=shorted)
    first = runs[0]
    fs = first.sample_rate_hz
    if isinstance(first, Capture):
        check_rates(fs, label_of(first), {"floor": floor, "shorted": shorted, "tone": gain.tone,
                                          "response": gain.response,
                                          **{f"repeat {i + 1}": r for i, r in enumerate(runs[1:])}})
    else:
        if first.enbw_hz > band.width_hz:
            raise ParameterError(f"the trace's noise bandwidth ({first.enbw_hz:g} Hz) is coarser than the "
                                 f"band {band.label()}: narrow the RBW or widen the band")
        if not (first.frequency_hz[0] <= band.low_hz and band.high_hz <= first.frequency_hz[-1]):
            raise ParameterError(f"the trace covers {first.frequency_hz[0]:g}-{first.frequency_hz[-1]:g} Hz, "
                                 f"not the whole band {band.label()}: choose a band inside it")
    band.check_within(fs)
    if isinstance(first, Psd):
        seg, vpfs = first.segment_length, None
    else:
        seg = default_segment_length(fs) if segment_length is None else int(segment_length)
        vpfs = first.volts_per_fs_or_raise("EIN and noise figure")
    label = label_of(first)
    return Prepared(runs=[with_vpfs(r, vpfs, "repeated terminated", label) for r in runs],  # type: ignore[misc]
                     floor=with_vpfs(floor, vpfs, "floor", label), shorted=with_vpfs(shorted, vpfs, "shorted", label),
                     fs=fs, seg=seg, vpfs=vpfs)


def _spectra(prep: Prepared, *, progress: Progress | None, cross: CrossSetup | None = None,
             references: Sequence[Reference] = (), band: Band = Band(20.0, 20_000.0), weighting: str = "none",
             mains_hz: float | None = None) -> Spectra:
    att = (attributed_output(prep.runs[0], references, segment_length=prep.seg, band=band,  # type: ignore[arg-type]
                             weighting=weighting, mains_hz=mains_hz, progress=progress,
                             other=cross.other if cross is not None else None) if references else None)
    if cross is not None:
        out = cross_output(prep.runs[0], cross, segment_length=prep.seg, progress=progress)  # type: ignore[arg-type]
        if att is not None:  # the co-spectrum conditioned on the references, less the background's
            out = replace(out, dut=less_background(att.conditioned, out.background))
        p_short = (shorted_output(prep.shorted, cross, out.background, segment_length=prep.seg,  # type: ignore[arg-type]
                                  progress=progress) if prep.shorted is not None else None)
        return Spectra(runs=[out.dut], term=out.dut, floor=None, short=p_short, cross=out, attributed=att)
    if att is not None:
        p_floor = capture_psd(prep.floor, segment_length=prep.seg, progress=progress) if prep.floor else None
        p_short = capture_psd(prep.shorted, segment_length=prep.seg, progress=progress) if prep.shorted else None
        return Spectra(runs=[att.conditioned], term=att.conditioned, floor=p_floor, short=p_short, attributed=att)
    p_runs = [capture_psd(r, segment_length=prep.seg, progress=progress) for r in prep.runs]
    p_term = pool_psds(p_runs)
    p_floor = capture_psd(prep.floor, segment_length=prep.seg, progress=progress) if prep.floor is not None else None
    p_short = (capture_psd(prep.shorted, segment_length=prep.seg, progress=progress)
               if prep.shorted is not None else None)
    for p, role in ((p_floor, "floor"), (p_short, "shorted")):
        if p is not None and p.frequency_hz.shape != p_term.frequency_hz.shape:
            raise CaptureError(f"the {role} spectrum has other frequency bins than the terminated "
                               f"one: use one segment length (or one instrument setting) for all")
    return Spectra(runs=p_runs, term=p_term, floor=p_floor, short=p_short)


def _lines(spec: Spectra, *, mains_hz: float | None) -> Lines:
    """Lines, found on each spectrum, are replaced by their baseline for the broadband figures."""
    s_term = find_lines(spec.term, mains_hz=mains_hz)
    return Lines(term=s_term,
                  floor=find_lines(spec.floor, mains_hz=s_term.mains_hz) if spec.floor is not None else None,
                  short=find_lines(spec.short, mains_hz=s_term.mains_hz) if spec.short is not None else None)


def _floor(spec: Spectra, lines: Lines, *, band: Band, weighting: str, what: str, notes: list[str]) -> FloorStep:
    """Band weights, the margin over the analyzer floor (refused when not resolved), floor subtraction."""
    f, p_term, p_floor = spec.f, spec.term, spec.floor
    w_band = band_bin_weights(f, band, weighting=weighting)
    used = w_band > 0
    if not used.any():
        raise ParameterError(f"no spectrum bin lies in the band {band.label()}")
    term_clean = lines.term.cleaned
    kernel = p_term.correlation_kernel
    m_band = float(np.dot(w_band[used], term_clean[used]))
    if spec.cross is not None:
        check_cross_resolved(p_term, w_band, term_clean, lines.term_var, what=what)  # type: ignore[arg-type]
    m_rel = band_relative_std(w_band, term_clean, dof=p_term.dof, correlation=kernel, variance=lines.term_var)
    if p_floor is None:
        if spec.cross is None:
            notes.append(NO_FLOOR)
        return FloorStep(w_band, used, kernel, m_band, m_rel, None, None, None, term_clean, p_term.psd_per_hz)
    floor_clean = lines.floor.cleaned  # type: ignore[union-attr]
    f_band = float(np.dot(w_band[used], floor_clean[used]))
    f_rel = band_relative_std(w_band, floor_clean, dof=p_floor.dof, correlation=kernel)
    margin_db = check_band_margin(measured_v2=m_band, floor_v2=f_band, measured_rel_std=m_rel,
                                  floor_rel_std=f_rel, what=what)
    return FloorStep(w_band, used, kernel, m_band, m_rel, f_band, f_rel, margin_db,
                      subtract_floor(term_clean, floor_clean).difference,
                      subtract_floor(p_term.psd_per_hz, p_floor.psd_per_hz).difference)


def _band_figures(spec: Spectra, fl: FloorStep, g: GainEstimate, *, band: Band, weighting: str, rs_ohm: float,
                  temperature_k: float) -> BandFigures:
    """Input-referred density (1) and the band figures (3), (4) of docs/method.md."""
    w, used = fl.w_band, fl.used
    e2_diff = fl.out_diff / g.power_gain
    ein_power = float(np.dot(w[used], e2_diff[used]))
    if not ein_power > 0:
        raise MeasurementError("the input-referred noise came out at zero or below: check the captures")
    ein_spurs = math.sqrt(max(float(np.dot(w[used], (fl.out_diff_spurs / g.power_gain)[used])), ein_power))
    noise_factor = band_noise_factor(spec.f, e2_diff, band, weighting=weighting, rs_ohm=rs_ohm,
                                     temperature_k=temperature_k)
    b_w = float(w.sum())
    thermal = math.sqrt(float(thermal_density_v2_per_hz(resistance_ohm=rs_ohm, temperature_k=temperature_k)) * b_w)
    return BandFigures(
        e2_diff=e2_diff, ein_power=ein_power, ein=math.sqrt(ein_power), ein_spurs=ein_spurs,
        noise_factor=noise_factor, b_w=b_w, thermal=thermal,
        out_noise=math.sqrt(max(float(np.dot(w[used], fl.out_diff[used])), 0.0)),
        out_spurs=math.sqrt(max(float(np.dot(w[used], fl.out_diff_spurs[used])), 0.0)),
        out_raw=math.sqrt(float(np.dot(w[used], spec.term.psd_per_hz[used]))))


def _voltage_noise(prep: Prepared, spec: Spectra, lines: Lines, fl: FloorStep, g: GainEstimate, *,
                   gain: GainSetup, rs_ohm: float, notes: list[str]) -> NDArray[np.float64] | None:
    """Shorted input: the DUT's voltage noise alone, referred through the gain at its terminals."""
    if spec.short is None:
        return None
    terminals = 1.0 if gain.zin_ohm is None else (gain.zin_ohm + rs_ohm) / gain.zin_ohm
    short_clean = lines.short.cleaned  # type: ignore[union-attr]
    w, used = fl.w_band, fl.used
    s_rel = band_relative_std(w, short_clean, dof=spec.short.dof, correlation=fl.kernel, variance=lines.short_var)
    if lines.short_var is not None and not resolved(w, short_clean, None, dof_measured=spec.short.dof, dof_floor=None,
                                                    correlation=fl.kernel, variance_measured=lines.short_var):
        notes.append(f"the shorted recording {label_of(prep.shorted)} is not resolved in the cross-spectrum "  # type: ignore[arg-type]
                     f"after {spec.short.n_averages} averages: its voltage noise is not reported; record it longer")
        return None
    check_not_swapped(shorted_power=float(np.dot(w[used], short_clean[used])),
                      terminated_power=fl.m_band * terminals ** 2, rel_std=math.hypot(fl.m_rel, s_rel))
    floor_clean = lines.floor.cleaned if lines.floor is not None else None
    short_diff = subtract_floor(short_clean, floor_clean).difference if floor_clean is not None else short_clean
    if spec.floor is not None and not resolved(fl.w_band, short_clean, floor_clean, dof_measured=spec.short.dof,
                                                dof_floor=spec.floor.dof, correlation=fl.kernel):
        notes.append(f"the shorted capture {label_of(prep.shorted)} cannot be told from the analyzer "  # type: ignore[arg-type]
                     f"floor in the band: its voltage noise is not reported")
        return None
    return short_diff / (g.power_gain * terminals ** 2)


def _budgets(spec: Spectra, lines: Lines, fl: FloorStep, bf: BandFigures, g: GainEstimate, *,
             gain: GainSetup, stated: StatedUncertainty, spots: list[SpotValue], ein_reported: float,
             rs_ohm: float, temperature_k: float, calibrated: bool) -> dict[str, Budget]:
    """The GUM budgets of EIN, band NF, gain and the 1 kHz spots; an input noise below the source's refused."""
    at_1k = next((s for s in spots if s.freq_hz == 1000.0), None)
    n0 = 4 * BOLTZMANN_J_PER_K * T0_K * rs_ohm * bf.b_w
    dut_rel = dut_power_rel_std(measured=fl.m_band, measured_rel_std=fl.m_rel, floor=fl.f_band,
                                floor_rel_std=fl.f_rel)
    corrected = spec.floor is not None
    ein_b = ein_budget(value_db=float(vrms_to_dbu(ein_reported)), dut_rel_std=dut_rel, floor_corrected=corrected,
                       gain_kind=gain.kind, gain_rel_std=g.gain_rel_std, stated=stated,
                       response_rel_std=g.response_rel_std)
    gain_b = gain_budget(value_db=g.gain_db, gain_kind=gain.kind, gain_rel_std=g.gain_rel_std, stated=stated)
    both = spec.cross is not None and gain.kind == "tone-1ch"  # v_B / v_A does not cancel
    if both:
        ein_b = second_input_term(ein_b, u_calibration_rel=stated.u_calibration_rel,
                                  calibration_pct=stated.calibration_pct)
    _check_physics(bf, spots, ein_u95_db=ein_b.expanded_db, gain_u95_db=gain_b.expanded_db, rs_ohm=rs_ohm,
                   temperature_k=temperature_k)  # before the noise factor's logarithm
    budgets = {"ein_db": ein_b, "noise_figure_db": nf_budget(
        quantity="noise_figure_db", noise_factor=bf.noise_factor, excess_over_n0=bf.ein_power / n0,
        dut_rel_std=dut_rel, floor_corrected=corrected, gain_kind=gain.kind, gain_rel_std=g.gain_rel_std,
        stated=stated, response_rel_std=g.response_rel_std), "gain_db": gain_b}
    if both:
        budgets["noise_figure_db"] = second_input_term(
            budgets["noise_figure_db"], u_calibration_rel=stated.u_calibration_rel,
            calibration_pct=stated.calibration_pct, sensitivity=bf.ein_power / n0 / bf.noise_factor)
    floor_clean = lines.floor.cleaned if lines.floor is not None else None
    if bf.out_noise > 0:
        budgets["output_noise_db"] = output_noise_budget(
            value_db=float(vrms_to_dbu(bf.out_noise)), dut_rel_std=dut_rel, floor_corrected=corrected,
            calibration_known=calibrated, stated=stated)
    if at_1k is not None and at_1k.noise_figure_db is not None:
        budgets["nf_at_1khz_db"] = spot_nf_budget(spec.f, 1000.0, spec.term, spec.floor, lines.term.cleaned,
                                                   floor_clean, g, gain, stated, rs_ohm, temperature_k,
                                                   term_var=lines.term_var)
    if at_1k is not None and at_1k.input_density_v_per_rthz:
        budgets["input_density_at_1khz_db"] = spot_density_budget(
            "input_density_at_1khz_db", at_1k.input_density_v_per_rthz, spec.f, spec.term, spec.floor,
            lines.term.cleaned, floor_clean, g, gain, stated, term_var=lines.term_var)
    if at_1k is not None and at_1k.voltage_noise_v_per_rthz and spec.short is not None and lines.short is not None:
        budgets["voltage_noise_at_1khz_db"] = spot_density_budget(
            "voltage_noise_at_1khz_db", at_1k.voltage_noise_v_per_rthz, spec.f, spec.short, spec.floor,
            lines.short.cleaned, floor_clean, g, gain, stated, term_var=lines.short_var)
    if both and at_1k is not None and at_1k.input_density_v_per_rthz and at_1k.noise_figure_db is not None:
        spot_ratio = at_1k.input_density_v_per_rthz ** 2 / (4 * BOLTZMANN_J_PER_K * T0_K * rs_ohm)
        for key, sens in (("input_density_at_1khz_db", 1.0),
                          ("nf_at_1khz_db", spot_ratio / 10 ** (at_1k.noise_figure_db / 10))):
            budgets[key] = second_input_term(budgets[key], u_calibration_rel=stated.u_calibration_rel,
                                             calibration_pct=stated.calibration_pct, sensitivity=sens)
    return budgets


def _check_physics(bf: BandFigures, spots: list[SpotValue], *, ein_u95_db: float, gain_u95_db: float,
                   rs_ohm: float, temperature_k: float) -> None:
    """No input noise below the source's own, in band (within the EIN's U) or at a spot (within its Welch U
    and the gain's, combined in quadrature): see :mod:`.physics`."""
    gain_u = gain_u95_db if math.isfinite(gain_u95_db) else 0.0
    check_physics(rs_ohm=rs_ohm, temperature_k=temperature_k, band_ratio=bf.ein_power / bf.thermal ** 2,
                  band_u95_db=ein_u95_db,
                  spots=[(s.freq_hz, s.input_density_v_per_rthz, math.hypot(s.input_density_expanded_db or 0.0, gain_u))
                         for s in spots])


def _repeat_summary(spec: Spectra, lines: Lines, fl: FloorStep, g: GainEstimate, *, band: Band, weighting: str,
                    rs_ohm: float, temperature_k: float, notes: list[str]) -> RepeatSummary | None:
    if len(spec.runs) < 2:
        return None
    floor_clean = lines.floor.cleaned if lines.floor is not None else None
    repeats = repeat_values(spec.runs, spec.floor, floor_clean, g, fl.w_band, fl.used, spec.f, band, weighting, rs_ohm,
                       temperature_k, mains_hz=lines.term.mains_hz)
    if abs(repeats.noise_figure_drift_db_per_capture) * (repeats.n - 1) > 2 * max(repeats.noise_figure_std_db, 1e-12):
        notes.append(f"the noise figure drifts by {repeats.noise_figure_drift_db_per_capture:+.3f} dB per "
                     f"capture across the {repeats.n} repeats: let the setup settle and measure again")
    return repeats


def _spectra_out(spec: Spectra, lines: Lines, fl: FloorStep, bf: BandFigures, g: GainEstimate, *,
                 en_diff: NDArray[np.float64] | None, flicker: Any, rs_ohm: float,
                 temperature_k: float) -> AnalysisSpectra:
    with np.errstate(divide="ignore", invalid="ignore"):
        nf_curve = power_db(spot_noise_factor(np.where(bf.e2_diff > 0, bf.e2_diff, np.nan), rs_ohm=rs_ohm,
                                              temperature_k=temperature_k))
    return AnalysisSpectra(
        frequency_hz=spec.f, output_v2_per_hz=spec.term.psd_per_hz,
        floor_v2_per_hz=spec.floor.psd_per_hz if spec.floor is not None else None,
        output_corrected_v2_per_hz=np.where(fl.out_diff > 0, fl.out_diff, np.nan),
        input_v2_per_hz=np.where(bf.e2_diff > 0, bf.e2_diff, np.nan),
        voltage_noise_v2_per_hz=np.where(en_diff > 0, en_diff, np.nan) if en_diff is not None else None,
        noise_figure_db=nf_curve, power_gain=g.power_gain, band_weights=fl.w_band, lines=tuple(lines.term.lines),
        flicker=flicker, floor_dof=spec.floor.dof if spec.floor is not None else None,
        output_variance_v4_per_hz2=spec.term.bin_variance,
        unconditioned_output_v2_per_hz=spec.attributed.unconditioned.psd_per_hz if spec.attributed else None,
        coherence=tuple(zip((a.reference for a in spec.attributed.references), spec.attributed.coherence))
        if spec.attributed else (),
        first_input_v2_per_hz=spec.cross.spectra.s_xx if spec.cross else None,
        resolution_v2_per_hz=spec.cross.spectra.resolution_floor if spec.cross else None)


def _assemble(prep: Prepared, spec: Spectra, lines: Lines, fl: FloorStep, bf: BandFigures, g: GainEstimate, *,
              gain: GainSetup, band: Band, weighting: str, detector: str, rs_ohm: float, temperature_k: float,
              ein_reported: float, en_diff: NDArray[np.float64] | None, spots: list[SpotValue],
              at_1k: SpotValue | None, flicker: Any, flicker_on: str | None, budgets: dict[str, Budget],
              stated: StatedUncertainty, repeats: RepeatSummary | None, reference_output_vrms: float | None,
              notes: list[str], warned: list[str]) -> AnalysisResult:
    """The frozen result: figures, conditions, budgets, spectra."""
    nf_band_db = float(power_db(bf.noise_factor)) if bf.noise_factor > 0 else None
    f = spec.f
    spurs = tuple(SpurValue(ln.freq_hz, ln.vrms, ln.vrms / math.sqrt(float(np.interp(ln.freq_hz, f, g.power_gain))),
                            ln.family, ln.harmonic, ln.excess_db) for ln in lines.term.lines)
    runs = prep.runs
    files = AnalysisFiles(tuple(path_of(r) or "" for r in runs) if len(runs) > 1 else (path_of(runs[0]) or ""),
                          path_of(prep.floor), path_of(prep.shorted), path_of(gain.tone), path_of(gain.response),
                          background=spec.cross.background_path if spec.cross is not None else None)
    w, used = fl.w_band, fl.used
    en_band = math.sqrt(max(float(np.dot(w[used], en_diff[used])), 0.0)) if en_diff is not None else None
    snr = (float(20 * math.log10(reference_output_vrms / bf.out_noise))
           if reference_output_vrms is not None and bf.out_noise > 0 else None)
    cross = None
    if spec.cross is not None:
        cross = summarise_cross(spec.cross, fl.w_band, lines.term.cleaned, lines.term_var)  # type: ignore[arg-type]
        notes = [*notes, advice(cross)]
    att = spec.attributed
    if att is not None:
        notes = [*notes, describe(att.total, att.references)]
    return AnalysisResult(
        gain_db=g.gain_db, gain_frequency_hz=g.frequency_hz, gain_std_db=g.gain_std_db, gain_reference=g.reference,
        rs_ohm=float(rs_ohm), temperature_k=float(temperature_k), band_hz=(band.low_hz, band.high_hz),
        weighting=weighting, detector=detector,  # type: ignore[arg-type]  # both checked by _validate
        # The cross-spectrum takes the inputs' own noise out itself; its margin is the DUT's against that noise.
        floor_corrected=spec.floor is not None or cross is not None,
        floor_margin_db=cross.channel_margin_db if cross is not None else fl.margin_db,
        ein_vrms=ein_reported, ein_dbu=float(vrms_to_dbu(ein_reported)), ein_dbv=float(vrms_to_dbv(ein_reported)),
        ein_rms_dbu=float(vrms_to_dbu(bf.ein)),
        ein_with_spurs_dbu=float(vrms_to_dbu(bf.ein_spurs * ein_reported / bf.ein)),
        thermal_ein_dbu=float(vrms_to_dbu(bf.thermal)), noise_factor=bf.noise_factor,
        noise_figure_db=nf_band_db if nf_band_db is not None else math.nan,
        nf_at_1khz_db=at_1k.noise_figure_db if at_1k else None,
        input_density_at_1khz_v_per_rthz=at_1k.input_density_v_per_rthz if at_1k else None,
        output_noise_vrms=bf.out_noise, output_noise_dbu=float(vrms_to_dbu(bf.out_noise)),
        output_noise_with_spurs_vrms=bf.out_spurs, output_noise_uncorrected_vrms=bf.out_raw,
        voltage_noise_at_1khz_v_per_rthz=at_1k.voltage_noise_v_per_rthz if at_1k else None,
        voltage_noise_band_vrms=en_band,
        flicker_corner_hz=flicker.corner_hz if flicker else None,
        flicker_corner_std_hz=flicker.corner_std_hz if flicker else None,
        white_density_v_per_rthz=flicker.white_density_v_per_rthz if flicker else None,
        flicker_slope=flicker.slope if flicker else None, flicker_fit_on=flicker_on,
        snr_db=snr, reference_output_vrms=reference_output_vrms, mains_hz=lines.term.mains_hz, spurs=spurs,
        hum_hints=tuple(hum_hints(lines.term.lines)), uncertainty=Uncertainty(budgets, stated.describe()),
        repeats=repeats,
        sample_rate_hz=prep.fs, segment_length=prep.seg, spectrum_window=spec.term.window,
        rbw_hz=spec.term.enbw_hz, n_averages=spec.term.n_averages, dof=spec.term.dof, volts_per_fs=prep.vpfs,
        files=files, spot=tuple(spots), notes=tuple(notes), warnings=tuple(warned),
        output_estimator="cross-spectrum" if cross is not None else "auto-spectrum", cross=cross,
        attribution=att.references if att is not None else None, attribution_all=att.total if att else None,
        spectra=_spectra_out(spec, lines, fl, bf, g, en_diff=en_diff, flicker=flicker, rs_ohm=rs_ohm,
                             temperature_k=temperature_k))
