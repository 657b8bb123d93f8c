"""Terminal summary of a Y-factor measurement."""

from __future__ import annotations

import math

from ..measure.yfactor import YFactorResult

__all__ = ["format_yfactor"]


def _f(v: float | None, fmt: str = ".3f") -> str:
    return "-" if v is None or not math.isfinite(v) else format(v, fmt)


def _hz(f: float) -> str:
    if f >= 1e6:
        return f"{f / 1e6:.4f} MHz"
    if f >= 1e3:
        return f"{f / 1e3:.3f} kHz"
    return f"{f:.1f} Hz"


def format_yfactor(r: YFactorResult, *, explain: bool = False) -> str:
    """Plain-text summary (ASCII)."""
    u = r.uncertainty
    src = (f"noise source, ENR {r.enr_db:.2f} dB at the band centre (hot {r.t_hot_k:.1f} K), cold "
           f"{r.t_cold_k:.2f} K" if r.method == "enr" else
           f"two temperatures, hot {r.t_hot_k:.2f} K, cold {r.t_cold_k:.2f} K")
    lines = ["benchnf - Y-factor noise figure", "", "Conditions",
             f"  source        {src}",
             f"  band          {_hz(r.band_hz[0])} - {_hz(r.band_hz[1])}; RBW {r.rbw_hz:.2f} Hz, "
             f"{r.n_averages} averages",
             "  correction    " + ("second stage corrected from the calibration pair" if r.second_stage_corrected
                                  else "receiver floor subtracted in linear power" if r.floor_subtracted
                                  else "none: system noise figure (DUT and receiver)")]
    if r.excluded:
        dc = r.excluded["dc_spike_hz"]
        lines.append(f"  excluded      DC spike {_hz(dc[0])} - {_hz(dc[1])}, band edges below "
                     f"{_hz(r.excluded['edges_hz'][0][1])} and above {_hz(r.excluded['edges_hz'][1][0])}")
    for name, loss in (("loss before", r.loss_before), ("loss after", r.loss_after)):
        if loss:
            lines.append(f"  {name:13s} {loss['loss_db']:g} dB at {loss['temperature_k']:g} K, de-embedded")
    nf_u = u.get("noise_figure_db")
    lines += ["", "Results",
              f"  noise figure         {_f(r.noise_figure_db)} dB +/- {_f(nf_u, '.2f')} dB (k=2)",
              f"  noise temperature    {_f(r.noise_temperature_k, '.1f')} K",
              f"  Y factor             {_f(r.y_factor_db)} dB",
              f"  system NF            {_f(r.system_noise_figure_db)} dB (before correction)"]
    if r.second_stage_corrected:
        lines += [f"  DUT gain             {_f(r.gain_db)} dB +/- {_f(u.get('gain_db'), '.2f')} dB (k=2)",
                  f"  receiver NF          {_f(r.receiver_noise_figure_db)} dB"]
    if r.repeats:
        lines.append(f"  repeats              {r.repeats['n']} pairs: scatter {r.repeats['noise_figure_std_db']:.3f} dB "
                     f"(1 sigma), drift {r.repeats['noise_figure_drift_db_per_pair']:+.3f} dB per pair")
    lines += ["", "Against frequency",
              f"  {'centre':>14}  {'Y dB':>7}  {'NF dB':>7}  {'+/- dB':>7}  {'Te K':>8}  {'gain dB':>8}"]
    for row in (*r.rows, *r.spots):
        lines.append(f"  {_hz(row.freq_hz):>14}  {_f(row.y_factor_db):>7}  {_f(row.noise_figure_db):>7}  "
                     f"{_f(row.noise_figure_expanded_db, '.2f'):>7}  {_f(row.noise_temperature_k, '.1f'):>8}  "
                     f"{_f(row.gain_db, '.2f'):>8}")
    if explain:
        from .budget_text import budget_lines
        lines += budget_lines(r.budgets, "Uncertainty budgets (standard uncertainties in dB)")
    if r.notes:
        lines += ["", "Notes"] + [f"  * {n}" for n in r.notes]
    return "\n".join(lines) + "\n"
