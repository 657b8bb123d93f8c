"""The view of a gain-method result (:class:`~benchnf.measure.results.AnalysisResult`): every condition in
words, the figures with their U, the hum and spot tables, and the three plots (output spectrum with the
floor, input-referred density with the source's thermal line and the one-third-octave means, noise figure).

Plots drawn from a result read back from its JSON (no spectra in memory) show what the JSON holds: the
one-third-octave means with their U, and the thermal line.
"""

from __future__ import annotations

import math

from ..measure.results import AnalysisResult
from ..units import thermal_density_v2_per_hz
from .budget_text import budget_lines
from ..quantity import Quantity, resistance_text
from .present_attribution import attribution_table, coherence_plot
from .view import Headline, Plot, Table, Trace, View, values

__all__ = ["present", "weighted", "detector_words"]

_NV = 1e9


def weighted(weighting: str) -> str:
    return "unweighted" if weighting == "none" else f"{weighting}-weighted"


def detector_words(detector: str) -> str:
    return "quasi-peak" if detector == "qp" else "RMS"


def band_text(band: tuple[float, float]) -> str:
    lo, hi = (Quantity(x, "Hz", digits=3).text() for x in band)
    return f"{lo}-{hi}"


def _conditions(r: AnalysisResult) -> tuple[tuple[str, str], ...]:
    detector = "quasi-peak (ITU-R BS.468-4 meter)" if r.detector == "qp" else "RMS"
    floor = (f"analyzer floor subtracted, the DUT {r.floor_margin_db:.1f} dB above it in band"
             if r.floor_corrected and r.floor_margin_db is not None else
             "analyzer floor NOT subtracted (no floor capture): the figures include the analyzer's own noise")
    spectrum = (f"Welch, {r.spectrum_window} window, RBW {r.rbw_hz:.2f} Hz, {r.n_averages} averages "
                f"({r.dof:.0f} degrees of freedom), sampled at {Quantity(r.sample_rate_hz, 'Hz').text()}")
    if r.cross is not None:
        floor, spectrum = _cross_conditions(r)
    out = [("source", f"{resistance_text(r.rs_ohm)} at {r.temperature_k:.2f} K ({r.temperature_k - 273.15:.1f} °C); "
                      f"noise figure referred to T0 = 290 K"),
           ("band", f"{band_text(r.band_hz)}, weighting {r.weighting}, detector {detector}"),
           ("floor", floor), ("spectrum", spectrum),
           ("calibration", f"{r.volts_per_fs:.6g} V per full scale" if r.volts_per_fs is not None
            else "instrument data, in volts"),
           ("gain from", r.gain_reference)]
    if r.mains_hz:
        out.append(("mains", f"{r.mains_hz:g} Hz"))
    return tuple(out)


def _cross_conditions(r: AnalysisResult) -> tuple[str, str]:
    """The floor and spectrum lines of a cross-spectrum estimate."""
    c = r.cross
    assert c is not None
    margin = (f", the DUT {c.channel_margin_db:+.1f} dB against it in band" if c.channel_margin_db is not None
              else "")
    if c.background_upper_vrms is None:
        background = "the analyzer's correlated background not measured (record it with --background)"
    elif c.background_vrms is None:
        background = (f"its correlated background subtracted (not resolved, below "
                      f"{Quantity(c.background_upper_vrms, 'V').text()} at the output)")
    else:
        background = f"its correlated background subtracted ({Quantity(c.background_vrms, 'V').text()} at the output)"
    floor = (f"cross-spectrum of channels {c.channels[0]} and {c.channels[1]}: the inputs' own noise averaged "
             f"away{margin}; {background}")
    spectrum = (f"Welch cross-spectrum, {r.spectrum_window} window, RBW {r.rbw_hz:.2f} Hz, {c.averages} averages; "
                f"one bin resolves {Quantity(c.resolution_floor_v_per_rthz, 'V/√Hz').text()} at the output, "
                f"sampled at {Quantity(r.sample_rate_hz, 'Hz').text()}")
    return floor, spectrum


def _headline(r: AnalysisResult) -> tuple[Headline, ...]:
    u = r.uncertainty.get
    w, det = weighted(r.weighting), detector_words(r.detector)
    rows = [
        Headline("gain", Quantity(r.gain_db, "dB", u("gain_db"), digits=3),
                 f"at {Quantity(r.gain_frequency_hz, 'Hz').text()}", "gain_db"),
        Headline(f"EIN ({det}, {w})", Quantity(r.ein_dbu, "dBu", u("ein_db")),
                 f"{r.ein_dbv:.2f} dBV, {Quantity(r.ein_vrms, 'V').text()}; hum and spurs excluded, "
                 f"{r.ein_with_spurs_dbu:.2f} dBu with them", "ein_dbu")]
    if r.detector == "qp":
        rows.append(Headline(f"EIN (RMS, {w})", Quantity(r.ein_rms_dbu, "dBu"),
                             "the same noise on an RMS detector", "ein_rms_dbu"))
    rows += [
        Headline(f"thermal limit of Rs (RMS, {w})", Quantity(r.thermal_ein_dbu, "dBu"),
                 f"the RMS EIN is {r.ein_rms_dbu - r.thermal_ein_dbu:.2f} dB above it", "thermal_ein_dbu"),
        Headline(f"noise figure, band ({w})", Quantity(r.noise_figure_db, "dB", u("noise_figure_db")),
                 key="noise_figure_db"),
        Headline("noise figure, 1 kHz (1/3 octave)", Quantity(r.nf_at_1khz_db, "dB", u("nf_at_1khz_db")),
                 key="nf_at_1khz_db"),
        Headline("input noise density, 1 kHz (1/3 octave)",
                 Quantity(r.input_density_at_1khz_v_per_rthz, "V/√Hz", u("input_density_at_1khz_db"), "dB"),
                 key="input_density_at_1khz_v_per_rthz"),
        Headline(f"output noise ({det if r.detector != 'qp' else 'RMS'}, {w})",
                 Quantity(r.output_noise_vrms, "V", u("output_noise_db"), "dB"),
                 f"{r.output_noise_dbu:.2f} dBu, hum and spurs excluded; "
                 f"{Quantity(r.output_noise_uncorrected_vrms, 'V').text()} before floor subtraction, hum and "
                 f"spurs included", "output_noise_vrms")]
    if r.voltage_noise_at_1khz_v_per_rthz is not None or r.voltage_noise_band_vrms is not None:
        rows.append(Headline("voltage noise, input shorted, 1 kHz",
                             Quantity(r.voltage_noise_at_1khz_v_per_rthz, "V/√Hz", u("voltage_noise_at_1khz_db"),
                                      "dB"),
                             f"{Quantity(r.voltage_noise_band_vrms, 'V').text()} RMS in band ({w})",
                             "voltage_noise_at_1khz_v_per_rthz"))
    if r.flicker_corner_hz is not None:
        slope = "" if r.flicker_slope == 1.0 else f", slope {r.flicker_slope:.2f}"
        std = r.flicker_corner_std_hz
        rows.append(Headline("1/f corner", Quantity(r.flicker_corner_hz, "Hz", None if std is None else 2 * std,
                                                    digits=3),
                             f"white level {Quantity(r.white_density_v_per_rthz, 'V/√Hz').text()}{slope}; fitted on "
                             f"the {r.flicker_fit_on}", "flicker_corner_hz"))
    if r.snr_db is not None:
        rows.append(Headline(f"SNR (RMS, {w})", Quantity(r.snr_db, "dB"),
                             f"re {Quantity(r.reference_output_vrms, 'V').text()} at the output (same band)", "snr_db"))
    if r.repeats is not None:
        rp = r.repeats
        rows.append(Headline("noise figure scatter of repeats (1 sigma)", Quantity(rp.noise_figure_std_db, "dB", digits=3),
                             f"{rp.n} captures pooled; EIN scatter {rp.ein_std_db:.3f} dB; drift "
                             f"{rp.noise_figure_drift_db_per_capture:+.3f} dB per capture", "repeats"))
    return tuple(rows)


def _hum_table(r: AnalysisResult) -> Table:
    mains = f"mains {r.mains_hz:g} Hz" if r.mains_hz else "no mains family found"
    rows = tuple((Quantity(s.freq_hz, "Hz", digits=5, display="Hz"), Quantity(s.output_vrms, "V", display="µV"),
                  Quantity(s.input_vrms, "V", display="nV"), Quantity(s.excess_db, "dB", digits=1),
                  s.family + (f" x{s.harmonic}" if s.harmonic else "")) for s in r.spurs)
    return Table(f"Hum and spur lines ({len(r.spurs)}, {mains}; strongest first)",
                 ("f (Hz)", "at the output (µV)", "referred to the input (nV)", "above the noise (dB)", "family"), rows,
                 " ".join(f"hint: {h}" for h in r.hum_hints))


def _spot_table(r: AnalysisResult) -> Table:
    def u(v: float | None) -> Quantity:
        return Quantity(v, "dB")
    rows = tuple((Quantity(s.freq_hz, "Hz", digits=5, display="Hz"), Quantity(s.input_density_v_per_rthz, "V/√Hz"),
                  u(s.input_density_expanded_db), Quantity(s.noise_figure_db, "dB"), u(s.noise_figure_expanded_db),
                  Quantity(s.floor_margin_db, "dB", digits=1), Quantity(s.voltage_noise_v_per_rthz, "V/√Hz"))
                 for s in r.spot)
    return Table("Spot values (one-third-octave band means; U: expanded, k=2, from the Welch statistics)",
                 ("f (Hz)", "input (nV/√Hz)", "U (dB)", "NF (dB)", "U (dB)", "floor margin (dB)",
                  "shorted en (nV/√Hz)"), rows,
                 "-: not resolved in the cross-spectrum in that band" if r.cross is not None else
                 "-: not resolved above the analyzer floor in that band")


def _density_u(v: float | None, u_db: float | None) -> float | None:
    """An error bar in nV/√Hz for a density with its U in dB (the larger, upper side)."""
    if v is None or u_db is None:
        return None
    return v * _NV * (10 ** (u_db / 20) - 1)


def _spot_traces(r: AnalysisResult) -> tuple[Trace, Trace]:
    ok = [s for s in r.spot if s.input_density_v_per_rthz]
    density = Trace("1/3-octave means (bars: U, k=2)", values(s.freq_hz for s in ok),
                    values((s.input_density_v_per_rthz for s in ok), _NV), "markers",
                    u=tuple(_density_u(s.input_density_v_per_rthz, s.input_density_expanded_db) for s in ok))
    nf_ok = [s for s in r.spot if s.noise_figure_db is not None]
    nf = Trace("1/3-octave means (bars: U, k=2)", values(s.freq_hz for s in nf_ok),
               values(s.noise_figure_db for s in nf_ok), "line+markers",
               u=tuple(s.noise_figure_expanded_db for s in nf_ok))
    return density, nf


def _plots(r: AnalysisResult) -> tuple[Plot, ...]:
    thermal = math.sqrt(float(thermal_density_v2_per_hz(resistance_ohm=r.rs_ohm, temperature_k=r.temperature_k)))
    thermal_trace = Trace(f"√(4kTRs) of {resistance_text(r.rs_ohm)} at {r.temperature_k:.1f} K", (), (thermal * _NV,),
                          "reference")
    density_means, nf_means = _spot_traces(r)
    band = r.band_hz
    nf_line = Trace(f"band noise figure {r.noise_figure_db:.2f} dB", (), values([r.noise_figure_db]), "reference")
    s = r.spectra
    out_traces: list[Trace] = []
    in_traces: list[Trace] = [density_means, thermal_trace]
    nf_traces: list[Trace] = [nf_means, nf_line]
    if s is not None:
        f = s.frequency_hz[1:]

        def rt(a) -> tuple[float | None, ...]:
            import numpy as np
            with np.errstate(invalid="ignore"):
                return values(np.sqrt(np.where(a[1:] >= 0, a[1:], np.nan)), _NV)
        if s.unconditioned_output_v2_per_hz is not None:
            out_traces.append(Trace("DUT output, as recorded", values(f), rt(s.unconditioned_output_v2_per_hz)))
        out_traces.append(Trace("DUT output, the references' coherent parts removed"
                                if s.unconditioned_output_v2_per_hz is not None else
                                "DUT output, cross-spectrum of the two inputs" if s.resolution_v2_per_hz is not None
                                else "DUT output, as measured", values(f), rt(s.output_v2_per_hz)))
        if s.first_input_v2_per_hz is not None and s.resolution_v2_per_hz is not None:
            out_traces += [Trace("first input alone", values(f), rt(s.first_input_v2_per_hz)),
                           Trace("one bin resolves", values(f), rt(s.resolution_v2_per_hz))]
        if s.floor_v2_per_hz is not None:
            out_traces += [Trace("analyzer floor", values(f), rt(s.floor_v2_per_hz)),
                           Trace("DUT output, floor subtracted", values(f), rt(s.output_corrected_v2_per_hz))]
        lines = list(s.lines or ())[:12]
        if lines:
            width = f[1] - f[0] if f.size > 1 else 1.0
            out = s.output_v2_per_hz
            out_traces.append(Trace("hum and spur lines", values(ln.freq_hz for ln in lines),
                                    tuple(math.sqrt(out[int(round(ln.freq_hz / width))]) * _NV * 1.25 for ln in lines),
                                    "markers", labels=tuple(f"{ln.freq_hz:.0f}" for ln in lines)))
        in_traces.insert(0, Trace(f"input-referred, Rs = {resistance_text(r.rs_ohm)}", values(f), rt(s.input_v2_per_hz)))
        if s.voltage_noise_v2_per_hz is not None:
            in_traces.insert(1, Trace("voltage noise (input shorted)", values(f), rt(s.voltage_noise_v2_per_hz)))
        if s.flicker is not None:
            fit = s.flicker
            in_traces.append(Trace(f"1/f fit: corner {fit.corner_hz:.0f} Hz", values(f),
                                   values(fit.model_v2_per_hz(f) ** 0.5, _NV)))
        nf_traces.insert(0, Trace("per bin", values(f), values(s.noise_figure_db[1:])))
    plots = []
    if out_traces:
        plots.append(Plot("output", "output_spectrum.png", f"Output spectrum (RBW {r.rbw_hz:.1f} Hz, {r.n_averages} "
                          f"averages)", "Frequency (Hz)", "Output noise density (nV/√Hz)", tuple(out_traces),
                          log_y=True, band=band))
    plots += [Plot("input", "input_density.png", f"Input-referred noise (EIN {r.ein_dbu:.2f} dBu, {weighted(r.weighting)}, "
                   f"{band_text(band)})", "Frequency (Hz)", "Input-referred noise density (nV/√Hz)",
                   tuple(t for t in in_traces if t.style == "reference" or any(v is not None for v in t.y)),
                   log_y=True, band=band),
              Plot("nf", "noise_figure.png", f"Noise figure at Rs = {resistance_text(r.rs_ohm)}, T = "
                   f"{r.temperature_k:.1f} K (T0 = 290 K)", "Frequency (Hz)", "Noise figure (dB)",
                   tuple(t for t in nf_traces if t.style == "reference" or any(v is not None for v in t.y)),
                   band=band, y_from_zero=True)]
    coherence = coherence_plot(r)
    return tuple(plots) + ((coherence,) if coherence is not None else ())


def present(r: AnalysisResult) -> View:
    """The view of a gain-method result."""
    att = attribution_table(r)
    tables = ((att,) if att is not None else ()) + ((_hum_table(r),) if r.spurs else ()) + (_spot_table(r),)
    summary = (f"EIN {Quantity(r.ein_dbu, 'dBu', r.uncertainty.get('ein_db')).text()}, noise figure "
               f"{Quantity(r.noise_figure_db, 'dB', r.uncertainty.get('noise_figure_db')).text()} at "
               f"Rs = {resistance_text(r.rs_ohm)}")
    details = tuple(budget_lines(r.budgets, "Uncertainty budgets (standard uncertainties in dB; "
                                 f"{r.uncertainty.stated or 'stated limits'})"))
    return View("analysis", "gain-method noise analysis", _conditions(r), _headline(r), tables, _plots(r),
                tuple(r.notes), tuple(r.warnings), details, summary)
