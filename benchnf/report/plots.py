"""Plots of an analysis.  Each function takes ``ax=None``, returns the Axes, never shows.

matplotlib is imported only here, and only when a plot is asked for.
"""

from __future__ import annotations

import math

from typing import TYPE_CHECKING

import numpy as np

from .._optional import require
from ..measure import AnalysisResult
from ..units import thermal_density_v2_per_hz

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

__all__ = ["plot_output_spectrum", "plot_input_density", "plot_noise_figure", "analysis_figures",
           "yfactor_figures", "budget_figures", "eni_figures"]

Figures = list[tuple[str, "Figure"]]


def _figure(rows: int = 1, height: float = 5.0, **subplots_kw):
    """A new Figure and its Axes through matplotlib's object API: no pyplot, no backend switched."""
    require("matplotlib", extra=None, purpose="plotting")
    from matplotlib.figure import Figure
    fig = Figure(figsize=(8, height), layout="constrained")
    return fig, fig.subplots(rows, 1, **subplots_kw)


def plain_log_ticks(ax) -> None:
    """Plain numbers (0.9, 2, 300) instead of 9x10^-1 on whichever of the axes is logarithmic."""
    from matplotlib.ticker import FuncFormatter

    def minor_for(axis):
        def minor(v: float, _pos: int) -> str:
            lo, hi = sorted(axis.get_view_interval())
            if lo > 0 and hi / lo < 15:  # about a decade or less: every minor tick may carry its number
                return f"{v:.2g}"
            mantissa = round(v / 10 ** math.floor(math.log10(v)), 6) if v > 0 else 0
            return f"{v:g}" if mantissa in (2.0, 5.0) else ""  # wide: 2 and 5 only, so labels never collide
        return minor
    for axis, scale in ((ax.xaxis, ax.get_xscale()), (ax.yaxis, ax.get_yscale())):
        if scale == "log":
            axis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
            axis.set_minor_formatter(FuncFormatter(minor_for(axis)))


def _axes(ax):
    if ax is None:
        _, ax = _figure()
    return ax


def _decorate(ax, r: AnalysisResult, title: str) -> None:
    lo, hi = r.band_hz
    ax.axvspan(lo, hi, color="0.93", zorder=0, label=f"band {lo:g}-{hi:g} Hz")
    ax.set_xscale("log")
    ax.set_xlim(max(r.spectra.frequency_hz[1], 1.0), r.sample_rate_hz / 2)
    ax.grid(True, which="both", alpha=0.3)
    ax.set_xlabel("Frequency (Hz)")
    plain_log_ticks(ax)
    ax.set_title(title, fontsize=11)
    ax.legend(fontsize=8, loc="best")


def _sel(r: AnalysisResult):
    f = r.spectra.frequency_hz
    return f, f > 0


def plot_output_spectrum(r: AnalysisResult, *, ax: "Axes | None" = None) -> "Axes":
    """Output noise density with the analyzer floor and the floor-subtracted curve."""
    ax = _axes(ax)
    f, s = _sel(r)
    ax.loglog(f[s], np.sqrt(r.spectra.output_v2_per_hz[s]) * 1e9, color="tab:blue", lw=0.8,
              label="DUT output, as measured")
    if r.spectra.floor_v2_per_hz is not None:
        ax.loglog(f[s], np.sqrt(r.spectra.floor_v2_per_hz[s]) * 1e9, color="0.45", lw=0.8,
                  label="analyzer floor")
        ax.loglog(f[s], np.sqrt(r.spectra.output_corrected_v2_per_hz[s]) * 1e9, color="tab:orange",
                  lw=0.8, alpha=0.8, label="DUT output, floor subtracted")
    lines = r.spectra.lines or ()
    out = np.sqrt(r.spectra.output_v2_per_hz) * 1e9
    for i, ln in enumerate(lines[:12]):
        k = int(round(ln.freq_hz / (f[1] - f[0])))
        ax.plot(ln.freq_hz, out[k] * 1.25, "v", color="tab:red", ms=6,
                label="hum / spur lines" if i == 0 else None)
        ax.annotate(f"{ln.freq_hz:.0f}", (ln.freq_hz, out[k] * 1.4), fontsize=7, ha="center",
                    color="tab:red")
    ax.set_ylabel("Output noise density (nV/\u221aHz)")
    _decorate(ax, r, f"Output spectrum  (RBW {r.rbw_hz:.1f} Hz, {r.n_averages} averages)")
    return ax


def plot_input_density(r: AnalysisResult, *, ax: "Axes | None" = None) -> "Axes":
    """Input-referred noise density with the source resistor's thermal line."""
    ax = _axes(ax)
    f, s = _sel(r)
    ax.loglog(f[s], np.sqrt(r.spectra.input_v2_per_hz[s]) * 1e9, color="tab:blue", lw=0.7,
              alpha=0.6, label=f"input-referred, Rs = {r.rs_ohm:g} \u03a9")
    spot_f = [p.freq_hz for p in r.spot if p.input_density_v_per_rthz]
    spot_v = [p.input_density_v_per_rthz * 1e9 for p in r.spot if p.input_density_v_per_rthz]
    ax.loglog(spot_f, spot_v, "o", color="tab:blue", ms=4, label="1/3-octave means")
    if r.spectra.voltage_noise_v2_per_hz is not None:
        ax.loglog(f[s], np.sqrt(r.spectra.voltage_noise_v2_per_hz[s]) * 1e9, color="tab:green",
                  lw=0.7, alpha=0.7, label="voltage noise (input shorted)")
    fit = r.spectra.flicker
    if fit is not None:
        ff = np.geomspace(max(f[1], 1.0), r.sample_rate_hz / 2, 300)
        ax.loglog(ff, np.sqrt(fit.model_v2_per_hz(ff)) * 1e9, color="k", lw=1.0, ls="-.",
                  label=f"1/f fit: {fit.white_density_v_per_rthz * 1e9:.3f} nV/\u221aHz, "
                        f"corner {fit.corner_hz:.0f} Hz")
    thermal = float(np.sqrt(thermal_density_v2_per_hz(resistance_ohm=r.rs_ohm,
                                                      temperature_k=r.temperature_k))) * 1e9
    ax.axhline(thermal, color="tab:red", ls="--", lw=1.0,
               label=f"\u221a(4kTRs) = {thermal:.3f} nV/\u221aHz at {r.temperature_k:.1f} K")
    ax.set_ylabel("Input-referred noise density (nV/\u221aHz)")
    weighting = "unweighted" if r.weighting == "none" else f"{r.weighting}-weighted"
    _decorate(ax, r, f"Input-referred noise  (EIN {r.ein_dbu:.2f} dBu {weighting}, "
                     f"{r.band_hz[0]:g}-{r.band_hz[1]:g} Hz)")
    return ax


def plot_noise_figure(r: AnalysisResult, *, ax: "Axes | None" = None) -> "Axes":
    """Spot noise figure against frequency, with the band figure."""
    ax = _axes(ax)
    f, s = _sel(r)
    ax.semilogx(f[s], r.spectra.noise_figure_db[s], color="tab:purple", lw=0.6, alpha=0.5,
                label="per bin")
    spot_f = [p.freq_hz for p in r.spot if p.noise_figure_db is not None]
    spot_nf = [p.noise_figure_db for p in r.spot if p.noise_figure_db is not None]
    ax.semilogx(spot_f, spot_nf, "o-", color="tab:purple", ms=4, lw=1.2, label="1/3-octave means")
    ax.axhline(r.noise_figure_db, color="k", ls=":", lw=1.0,
               label=f"band NF {r.noise_figure_db:.2f} dB")
    finite = np.asarray(spot_nf, dtype=float)
    top = float(np.nanmax(finite)) if finite.size else 10.0
    ax.set_ylim(0.0, max(top * 1.3, 1.0))
    ax.set_ylabel("Noise figure (dB)")
    _decorate(ax, r, f"Noise figure at Rs = {r.rs_ohm:g} \u03a9, T = {r.temperature_k:.1f} K "
                     f"(T0 = 290 K)")
    return ax


def analysis_figures(r: AnalysisResult) -> Figures:
    """The three figures of a gain-method analysis, with their file names."""
    out: Figures = []
    for name, fn in (("output_spectrum.png", plot_output_spectrum),
                     ("input_density.png", plot_input_density),
                     ("noise_figure.png", plot_noise_figure)):
        fig, ax = _figure()
        fn(r, ax=ax)
        out.append((name, fig))
    return out


def plot_yfactor(r, *, ax_nf: "Axes | None" = None, ax_y: "Axes | None" = None):
    """NF and gain against frequency with the k=2 band (top), Y against frequency (bottom)."""
    if ax_nf is None or ax_y is None:
        _, (ax_nf, ax_y) = _figure(2, 7, sharex=True)
    rows = [row for row in r.rows if row.noise_figure_db is not None]
    scale, unit = (1e6, "MHz") if r.band_hz[1] >= 1e6 else ((1e3, "kHz") if r.band_hz[1] >= 1e4 else (1, "Hz"))
    f = np.array([row.freq_hz for row in rows]) / scale
    nf = np.array([row.noise_figure_db for row in rows])
    un = np.array([row.noise_figure_expanded_db or 0.0 for row in rows])
    ax_nf.fill_between(f, nf - un, nf + un, color="tab:purple", alpha=0.2, label="NF, k=2 interval")
    ax_nf.plot(f, nf, "o-", color="tab:purple", ms=4, label="noise figure")
    ax_nf.set_ylabel("Noise figure (dB)")
    gains = [row.gain_db for row in rows]
    if any(g is not None for g in gains):
        ax_g = ax_nf.twinx()
        ax_g.plot(f, [g if g is not None else np.nan for g in gains], "s--", color="tab:green", ms=3,
                  label="DUT gain")
        ax_g.set_ylabel("Gain (dB)", color="tab:green")
        ax_g.legend(fontsize=8, loc="lower right")
    ax_nf.grid(True, alpha=0.3)
    ax_nf.legend(fontsize=8, loc="upper left")
    title = "second stage corrected" if r.second_stage_corrected else "system (DUT + receiver)"
    ax_nf.set_title(f"Y-factor noise figure, {title}: {r.noise_figure_db:.2f} dB over the band", fontsize=11)
    ax_y.plot(f, [row.y_factor_db for row in rows], "o-", color="tab:blue", ms=4)
    ax_y.set_ylabel("Y factor (dB)")
    ax_y.set_xlabel(f"Frequency ({unit})")
    ax_y.grid(True, which="both", alpha=0.3)
    if r.centre_hz is None and len(f) and f.min() > 0 and f.max() / f.min() > 10:  # audio: decades wide
        for ax in (ax_nf, ax_y):
            ax.set_xscale("log")
            plain_log_ticks(ax)
    return ax_nf, ax_y


def yfactor_figures(r, *, name: str = "yfactor.png") -> Figures:
    """The Y-factor figure (noise figure and Y against frequency) with its file name."""
    fig, (a, b) = _figure(2, 7, sharex=True)
    plot_yfactor(r, ax_nf=a, ax_y=b)
    return [(name, fig)]


def plot_stage_budget(budget, *, ax: "Axes | None" = None) -> "Axes":
    """Each stage's share of the excess noise, measured beside predicted."""
    if ax is None:
        _, ax = _figure()
    names = [t.name for t in budget.taps]
    x = np.arange(len(names))
    ax.bar(x - 0.2, [100 * t.share_measured for t in budget.taps], 0.4, label="measured", color="tab:blue")
    if any(t.share_predicted is not None for t in budget.taps):
        ax.bar(x + 0.2, [100 * (t.share_predicted or 0) for t in budget.taps], 0.4, label="predicted from part data",
               color="tab:gray")
    for i, t in enumerate(budget.taps):
        if t.unexplained:
            ax.annotate("unexplained", (i - 0.2, 100 * t.share_measured), ha="center", va="bottom",
                        fontsize=8, color="tab:red")
    ax.set_xticks(x, names)
    ax.set_ylabel("Share of the excess noise (%)")
    ax.set_title(f"Stage budget at Rs = {budget.rs_ohm:g} \u03a9: NF measured {budget.measured_noise_figure_db:.2f} dB"
                 + (f", predicted {budget.predicted_noise_figure_db:.2f} dB"
                    if budget.predicted_noise_figure_db is not None else ""), fontsize=11)
    ax.grid(True, axis="y", alpha=0.3)
    ax.legend(fontsize=8)
    return ax


def plot_en_in(eni, *, axes=None):
    """en(f) and in(f) with their k=2 bands."""
    if axes is None:
        _, axes = _figure(2, 7)
    fit = eni.fit
    f = fit.frequency_hz
    for ax, val, std, scale, label in ((axes[0], fit.en_v_per_rthz, fit.en_std, 1e9, "en (nV/\u221aHz)"),
                                       (axes[1], fit.in_a_per_rthz, fit.in_std, 1e12, "in (pA/\u221aHz)")):
        ax.fill_between(f, (val - 2 * std) * scale, (val + 2 * std) * scale, color="tab:blue", alpha=0.2,
                        label="k=2 interval")
        ax.loglog(f, val * scale, "o-", ms=3, color="tab:blue", label=label.split(" ")[0])
        ax.set_ylabel(label)
        ax.grid(True, which="both", alpha=0.3)
        ax.legend(fontsize=8)
        plain_log_ticks(ax)
    axes[1].set_xlabel("Frequency (Hz)")
    axes[0].set_title("Amplifier voltage and current noise from the Rs sweep", fontsize=11)
    return axes


def plot_nf_vs_rs(eni, *, ax: "Axes | None" = None) -> "Axes":
    """NF against source resistance at chosen frequencies, with the measured points."""
    if ax is None:
        _, ax = _figure()
    grid = np.array(eni.nf_vs_rs["rs_ohm_grid"])
    for name, curve in eni.nf_vs_rs["curves"].items():
        (line,) = ax.semilogx(grid, curve["noise_figure_db"], label=f"model at {name} Hz")
        if curve.get("noise_figure_u95_db") is not None:
            nf, u = np.array(curve["noise_figure_db"]), np.array(curve["noise_figure_u95_db"])
            ax.fill_between(grid, nf - u, nf + u, color=line.get_color(), alpha=0.15, lw=0)
    from ..units import BOLTZMANN_J_PER_K, T0_K
    a = eni.at_1khz
    for p in eni.points:
        if p["rs_ohm"] > 0 and a["en_v_per_rthz"]:
            e2 = p["input_density_at_1khz_v_per_rthz"] ** 2
            f_meas = 1 + (e2 - 4 * BOLTZMANN_J_PER_K * p["temperature_k"] * p["rs_ohm"]) / (
                4 * BOLTZMANN_J_PER_K * T0_K * p["rs_ohm"])
            ax.semilogx(p["rs_ohm"], 10 * np.log10(max(f_meas, 1e-3)), "ks", ms=6)
    if a["ropt_ohm"]:
        ax.axvline(a["ropt_ohm"], color="0.5", ls=":", label=f"Ropt {a['ropt_ohm']:.0f} \u03a9 (1 kHz)")
    ax.set_xlabel("Source resistance (\u03a9)")
    ax.set_ylabel("Noise figure (dB)")
    ax.set_ylim(bottom=0)
    ax.grid(True, which="both", alpha=0.3)
    plain_log_ticks(ax)
    ax.legend(fontsize=8, title="squares: measured at 1 kHz", title_fontsize=8)
    ax.set_title("NF against Rs (best SNR is at the lowest Rs, not at Ropt)", fontsize=11)
    return ax


def budget_figures(budget) -> Figures:
    """The stage-budget figure with its file name."""
    fig, ax = _figure()
    plot_stage_budget(budget, ax=ax)
    return [("stage_budget.png", fig)]


def eni_figures(eni) -> Figures:
    """en/in against frequency and NF against Rs, with their file names."""
    fig, axes = _figure(2, 7)
    plot_en_in(eni, axes=axes)
    fig2, ax = _figure()
    plot_nf_vs_rs(eni, ax=ax)
    return [("en_in.png", fig), ("nf_vs_rs.png", fig2)]


def control_chart_figures(chart, *, figure: str) -> Figures:
    """Individuals and moving-range chart of `figure` (a ControlChart), points breaking a run rule in red."""
    fig, (a, b) = _figure(2, 6.5, sharex=True)
    n = np.arange(1, len(chart.values) + 1)
    a.plot(n, chart.values, "o-", color="tab:blue", ms=4, lw=1)
    for y, style in ((chart.centre, "-"), (chart.lower, "--"), (chart.upper, "--")):
        a.axhline(y, color="0.4", ls=style, lw=1)
    flagged = sorted({i for i, _rule in chart.signals})
    if flagged:
        a.plot(n[flagged], np.array(chart.values)[flagged], "o", color="tab:red", ms=7, mfc="none",
               label="breaks a run rule: " + ", ".join(sorted({str(r) for _i, r in chart.signals})))
        a.legend(fontsize=8)
    a.set_ylabel(figure)
    a.set_title(f"Individuals: centre {chart.centre:.4g}, limits {chart.lower:.4g} to {chart.upper:.4g}", fontsize=10)
    a.grid(True, alpha=0.3)
    b.plot(n[1:], chart.moving_ranges, "s-", color="tab:green", ms=3, lw=1)
    b.axhline(chart.mr_centre, color="0.4", lw=1)
    b.axhline(chart.mr_upper, color="0.4", ls="--", lw=1)
    b.set_ylabel("moving range")
    b.set_xlabel("unit, in time order")
    from matplotlib.ticker import MaxNLocator
    b.xaxis.set_major_locator(MaxNLocator(integer=True))
    b.set_title(f"Moving range: centre {chart.mr_centre:.3g}, upper limit {chart.mr_upper:.3g}", fontsize=10)
    b.grid(True, alpha=0.3)
    return [(f"control_{figure}.png", fig)]
