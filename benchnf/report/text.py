"""Terminal summary of an analysis: every condition stated, then the figures."""

from __future__ import annotations

import math

from ..measure import AnalysisResult

__all__ = ["format_summary", "si_volts", "density_text"]


def si_volts(v: float | None, unit: str = "V") -> str:
    """E.g. ``7.16 uV``; ``-`` for None."""
    if v is None or not math.isfinite(v):
        return "-"
    for factor, prefix in ((1.0, ""), (1e-3, "m"), (1e-6, "u"), (1e-9, "n"), (1e-12, "p")):
        if abs(v) >= factor:
            return f"{v / factor:.3g} {prefix}{unit}"
    return f"{v / 1e-15:.3g} f{unit}"


def density_text(v: float | None) -> str:
    """A voltage density in nV/rtHz."""
    return "-" if v is None else f"{v * 1e9:.3f}"


def _db(v: float | None, digits: int = 2) -> str:
    return "-" if v is None or not math.isfinite(v) else f"{v:.{digits}f}"


def _pm(r: AnalysisResult, key: str) -> str:
    u = r.uncertainty.get(key)
    return f" +/- {u:.2f} dB (k=2)" if isinstance(u, float) else ""


def format_summary(r: AnalysisResult, *, max_spots: int | None = None, max_spurs: int = 8,
                   explain: bool = False) -> str:
    """A plain-text summary for the terminal (ASCII only): conditions, results, hum and spurs, spot
    values, uncertainty (with `explain`, every budget contribution by contribution) and notes."""
    lines = _conditions(r) + _results(r) + _spur_table(r, max_spurs) + _spot_table(r, max_spots)
    lines += _uncertainty(r, explain)
    if r.notes:
        lines += ["", "Notes"] + [f"  * {n}" for n in r.notes]
    return "\n".join(lines) + "\n"


def _conditions(r: AnalysisResult) -> list[str]:
    lo, hi = r.band_hz
    band = f"{lo:g} Hz-{hi / 1000:g} kHz" if hi >= 1000 else f"{lo:g}-{hi:g} Hz"
    floor = (f"analyzer floor subtracted, DUT {r.floor_margin_db:.1f} dB above it in band"
             if r.floor_corrected else "analyzer floor NOT subtracted (no floor capture)")
    detector = ("quasi-peak (ITU-R BS.468-4 meter)" if r.detector == "qp" else "RMS")
    return [
        "benchnf - gain-method noise analysis",
        "",
        "Conditions",
        f"  source        {r.rs_ohm:g} ohm at {r.temperature_k:.2f} K "
        f"({r.temperature_k - 273.15:.1f} C); NF referred to T0 = 290 K",
        f"  band          {band}, weighting {r.weighting}, detector {detector}",
        f"  floor         {floor}",
        (f"  spectrum      Welch, {r.spectrum_window}, RBW {r.rbw_hz:.2f} Hz, {r.n_averages} averages "
         f"({r.dof:.0f} degrees of freedom), fs {r.sample_rate_hz:g} Hz" if r.volts_per_fs is not None else
         f"  spectrum      {r.spectrum_window}, RBW {r.rbw_hz:.2f} Hz, {r.n_averages} average(s)"),
        (f"  calibration   {r.volts_per_fs:.6g} V per full scale" if r.volts_per_fs is not None else
         "  calibration   instrument data in volts"),
        f"  gain from     {r.gain_reference}",
    ]


def _weighted(weighting: str) -> str:
    return "unweighted" if weighting == "none" else f"{weighting}-weighted"


def _row(label: str, text: str) -> str:
    return f"  {label:<40} {text}"


def _results(r: AnalysisResult) -> list[str]:
    """Each line says its detector and weighting; comparisons are between like readings only."""
    w = _weighted(r.weighting)
    detector = "quasi-peak" if r.detector == "qp" else "RMS"
    lines = [
        "",
        "Results",
        _row("gain", f"{r.gain_db:8.3f} dB{_pm(r, 'gain_db')} at {r.gain_frequency_hz:.1f} Hz"),
        _row(f"EIN ({detector}, {w})", f"{r.ein_dbu:8.2f} dBu{_pm(r, 'ein_db')}   ({r.ein_dbv:.2f} dBV, "
             f"{si_volts(r.ein_vrms)}; hum and spurs excluded, {r.ein_with_spurs_dbu:.2f} dBu with them)"),
    ]
    if r.detector == "qp":
        lines.append(_row(f"EIN (RMS, {w})", f"{r.ein_rms_dbu:8.2f} dBu   (the same noise on an RMS detector)"))
    lines += [
        _row(f"thermal limit of Rs (RMS, {w})", f"{r.thermal_ein_dbu:8.2f} dBu   (the RMS EIN is "
             f"{r.ein_rms_dbu - r.thermal_ein_dbu:.2f} dB above it)"),
        _row(f"noise figure, band ({w})", f"{_db(r.noise_figure_db):>8} dB{_pm(r, 'noise_figure_db')}"),
        _row("noise figure, 1 kHz (1/3 octave)", f"{_db(r.nf_at_1khz_db):>8} dB{_pm(r, 'nf_at_1khz_db')}"),
        _row("input noise, 1 kHz (1/3 octave)", f"{density_text(r.input_density_at_1khz_v_per_rthz):>8} nV/rtHz"),
        _row(f"output noise (RMS, {w})", f"{si_volts(r.output_noise_vrms):>8} ({r.output_noise_dbu:.2f} dBu, hum "
             f"and spurs excluded; {si_volts(r.output_noise_uncorrected_vrms)} before floor subtraction, hum and "
             f"spurs included)"),
    ]
    if r.voltage_noise_band_vrms is not None or r.voltage_noise_at_1khz_v_per_rthz is not None:
        lines.append(_row("voltage noise (shorted input)", f"{density_text(r.voltage_noise_at_1khz_v_per_rthz):>8} "
                          f"nV/rtHz at 1 kHz, {si_volts(r.voltage_noise_band_vrms)} RMS in band ({w})"))
    if r.flicker_corner_hz is not None:
        slope = "" if r.flicker_slope == 1.0 else f", slope {r.flicker_slope:.2f}"
        lines.append(_row("1/f corner", f"{r.flicker_corner_hz:8.1f} Hz +/- {2 * r.flicker_corner_std_hz:.1f} "
                          f"(k=2), white level {density_text(r.white_density_v_per_rthz)} nV/rtHz{slope}; "
                          f"fitted on the {r.flicker_fit_on}"))
    if r.snr_db is not None:
        lines.append(_row(f"SNR (RMS, {w})", f"{r.snr_db:8.2f} dB re {si_volts(r.reference_output_vrms)} at "
                          f"the output (same band)"))
    if r.repeats is not None:
        rp = r.repeats
        lines.append(_row("repeats", f"{rp.n} captures pooled; scatter EIN {rp.ein_std_db:.3f} dB, "
                          f"NF {rp.noise_figure_std_db:.3f} dB (1 sigma); drift "
                          f"{rp.noise_figure_drift_db_per_capture:+.3f} dB per capture"))
    return lines


def _spur_table(r: AnalysisResult, max_spurs: int) -> list[str]:
    if not r.spurs:
        return []
    mains = f"mains {r.mains_hz:g} Hz" if r.mains_hz else "no mains family found"
    lines = ["", f"Hum and spurs ({len(r.spurs)} lines, {mains}; strongest first)",
             f"  {'freq Hz':>9}  {'output':>10}  {'at input':>10}  {'above noise':>11}  family"]
    for sp in r.spurs[:max_spurs]:
        fam = sp.family + (f" x{sp.harmonic}" if sp.harmonic else "")
        lines.append(f"  {sp.freq_hz:>9.1f}  {si_volts(sp.output_vrms):>10}  {si_volts(sp.input_vrms):>10}  "
                     f"{sp.excess_db:>8.1f} dB  {fam}")
    if len(r.spurs) > max_spurs:
        lines.append(f"  ... {len(r.spurs) - max_spurs} more in the JSON")
    return lines + [f"  hint: {hint}" for hint in r.hum_hints]


def _spot_table(r: AnalysisResult, max_spots: int | None) -> list[str]:
    spots = list(r.spot)
    if max_spots is not None and len(spots) > max_spots:
        spots = spots[::math.ceil(len(spots) / max_spots)]
    lines = ["", "Spot values (one-third-octave band means; +/- expanded, k=2, from the Welch statistics)",
             f"  {'freq Hz':>8}  {'input nV/rtHz':>13}  {'+/- dB':>6}  {'NF dB':>6}  {'+/- dB':>6}  {'margin dB':>9}  "
             f"{'en nV/rtHz':>10}"]
    for s in spots:
        lines.append(f"  {s.freq_hz:>8g}  {density_text(s.input_density_v_per_rthz):>13}  "
                     f"{_db(s.input_density_expanded_db):>6}  {_db(s.noise_figure_db):>6}  "
                     f"{_db(s.noise_figure_expanded_db):>6}  {_db(s.floor_margin_db, 1):>9}  "
                     f"{density_text(s.voltage_noise_v_per_rthz):>10}")
    return lines


def _uncertainty(r: AnalysisResult, explain: bool) -> list[str]:
    if not explain:
        return ["", "Uncertainties are expanded (k=2) per the GUM; --explain lists each budget."]
    from .budget_text import budget_lines
    return budget_lines(r.budgets, f"Uncertainty budgets (standard uncertainties in dB; {r.uncertainty['stated']})")
