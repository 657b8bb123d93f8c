"""Terminal summary of an analysis: every condition stated, then the figures."""

from __future__ import annotations

import math

from ..analysis import AnalysisResult

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


def format_summary(r: AnalysisResult, *, max_spots: int | None = None) -> str:
    """A plain-text summary for the terminal (ASCII only)."""
    lo, hi = r.band_hz
    band = f"{lo:g} Hz-{hi / 1000:g} kHz" if hi >= 1000 else f"{lo:g}-{hi:g} Hz"
    floor = (f"analyzer floor subtracted, DUT {r.floor_margin_db:.1f} dB above it in band"
             if r.floor_corrected else "analyzer floor NOT subtracted (no floor capture)")
    lines = [
        "benchnf - gain-method noise analysis",
        "",
        "Conditions",
        f"  source        {r.rs_ohm:g} ohm at {r.temperature_k:.2f} K "
        f"({r.temperature_k - 273.15:.1f} C); NF referred to T0 = 290 K",
        f"  band          {band}, weighting {r.weighting}, detector {r.detector.upper()}",
        f"  floor         {floor}",
        f"  spectrum      Welch, Hann, RBW {r.rbw_hz:.2f} Hz, {r.n_averages} averages "
        f"({r.dof:.0f} degrees of freedom), fs {r.sample_rate_hz:g} Hz",
        f"  calibration   {r.volts_per_fs:.6g} V per full scale",
        f"  gain from     {r.gain_reference}",
        "",
        "Results",
        f"  gain                 {r.gain_db:8.3f} dB at {r.gain_frequency_hz:.1f} Hz "
        f"(fit std {r.gain_std_db:.2g} dB)",
        f"  EIN                  {r.ein_dbu:8.2f} dBu   ({r.ein_dbv:.2f} dBV, {si_volts(r.ein_vrms)})",
        f"  thermal limit of Rs  {r.thermal_ein_dbu:8.2f} dBu   (EIN is "
        f"{r.ein_dbu - r.thermal_ein_dbu:.2f} dB above it)",
        f"  noise figure, band   {_db(r.noise_figure_db):>8} dB",
        f"  noise figure, 1 kHz  {_db(r.nf_at_1khz_db):>8} dB",
        f"  input noise, 1 kHz   {density_text(r.input_density_at_1khz_v_per_rthz):>8} nV/rtHz",
        f"  output noise         {si_volts(r.output_noise_vrms):>10} ({r.output_noise_dbu:.2f} dBu; "
        f"{si_volts(r.output_noise_uncorrected_vrms)} before floor subtraction)",
    ]
    if r.voltage_noise_band_vrms is not None or r.voltage_noise_at_1khz_v_per_rthz is not None:
        lines.append(f"  voltage noise (shorted input)  "
                     f"{density_text(r.voltage_noise_at_1khz_v_per_rthz)} nV/rtHz at 1 kHz, "
                     f"{si_volts(r.voltage_noise_band_vrms)} in band")
    spots = list(r.spot)
    if max_spots is not None and len(spots) > max_spots:
        step = math.ceil(len(spots) / max_spots)
        spots = spots[::step]
    lines += ["", "Spot values (one-third-octave band means)",
              f"  {'freq Hz':>8}  {'input nV/rtHz':>13}  {'NF dB':>6}  {'margin dB':>9}  "
              f"{'en nV/rtHz':>10}"]
    for s in spots:
        lines.append(f"  {s.freq_hz:>8g}  {density_text(s.input_density_v_per_rthz):>13}  "
                     f"{_db(s.noise_figure_db):>6}  {_db(s.floor_margin_db, 1):>9}  "
                     f"{density_text(s.voltage_noise_v_per_rthz):>10}")
    if r.notes:
        lines += ["", "Notes"] + [f"  * {n}" for n in r.notes]
    return "\n".join(lines) + "\n"
