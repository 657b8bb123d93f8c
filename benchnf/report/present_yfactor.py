"""The view of a Y-factor result: the source and the corrections in words, noise figure, noise temperature,
gain, system and receiver noise figures with their U, the table against frequency, and the plots."""

from __future__ import annotations

from ..measure.yfactor_result import YFactorResult
from .budget_text import budget_lines
from ..quantity import Quantity
from .view import Headline, Plot, Table, Trace, View, values

__all__ = ["present"]


def _hz(f: float) -> str:
    return Quantity(f, "Hz").text()


def _conditions(r: YFactorResult) -> tuple[tuple[str, str], ...]:
    src = (f"noise source, ENR {r.enr_db:.2f} dB at the band centre (hot {r.t_hot_k:.1f} K), cold {r.t_cold_k:.2f} K"
           if r.method == "enr" else f"two temperatures, hot {r.t_hot_k:.2f} K, cold {r.t_cold_k:.2f} K")
    correction = ("second stage corrected from the calibration pair" if r.second_stage_corrected
                  else "receiver floor subtracted in linear power" if r.floor_subtracted
                  else "none: system noise figure (DUT and receiver together)")
    out = [("source", src), ("band", f"{_hz(r.band_hz[0])} to {_hz(r.band_hz[1])}; RBW {r.rbw_hz:.2f} Hz, "
                                     f"{r.n_averages} averages"), ("correction", correction)]
    ex = r.excluded
    if ex.dc_spike_hz and ex.edges_hz:
        out.append(("excluded", f"DC spike {_hz(ex.dc_spike_hz[0])} to {_hz(ex.dc_spike_hz[1])}, band edges below "
                                f"{_hz(ex.edges_hz[0][1])} and above {_hz(ex.edges_hz[1][0])}"))
    for side in ("source", "receiver"):
        stages = [p for p in r.passive_stages if p.side == side]
        if stages:
            out.append((f"{side} side of the DUT", "; ".join(
                f"{p.name}: {p.loss_db:g} dB at {p.temperature_k:g} K" for p in stages) + ", de-embedded"))
    return tuple(out)


def _headline(r: YFactorResult) -> tuple[Headline, ...]:
    u = r.uncertainty.get
    rows = [Headline("noise figure" + (", DUT" if r.second_stage_corrected else ""),
                     Quantity(r.noise_figure_db, "dB", u("noise_figure_db")), key="noise_figure_db"),
            Headline("noise temperature", Quantity(r.noise_temperature_k, "K", r.noise_temperature_u95_k),
                     key="noise_temperature_k"),
            Headline("Y factor", Quantity(r.y_factor_db, "dB", digits=3), key="y_factor_db"),
            Headline("system noise figure", Quantity(r.system_noise_figure_db, "dB", u("system_noise_figure_db")),
                     "DUT and receiver together, before correction", "system_noise_figure_db")]
    if r.second_stage_corrected:
        rows += [Headline("DUT gain", Quantity(r.gain_db, "dB", u("gain_db")), key="gain_db"),
                 Headline("receiver noise figure", Quantity(r.receiver_noise_figure_db, "dB",
                                                            u("receiver_noise_figure_db")),
                          "from the calibration pair", "receiver_noise_figure_db")]
    if r.repeats:
        rows.append(Headline("noise figure scatter of repeats (1 sigma)",
                             Quantity(r.repeats.noise_figure_std_db, "dB", digits=3),
                             f"{r.repeats.n} pairs; drift {r.repeats.noise_figure_drift_db_per_pair:+.3f} dB per pair",
                             "repeats"))
    return tuple(rows)


def _scale(r: YFactorResult) -> tuple[float, str]:
    return (1e-6, "MHz") if r.band_hz[1] >= 1e6 else ((1e-3, "kHz") if r.band_hz[1] >= 1e4 else (1.0, "Hz"))


def _plots(r: YFactorResult) -> tuple[Plot, ...]:
    rows = [row for row in (*r.rows, *r.spots) if row.noise_figure_db is not None]
    factor, unit = _scale(r)
    f = values((row.freq_hz for row in rows), factor)
    audio_wide = r.centre_hz is None and r.band_hz[0] > 0 and r.band_hz[1] / r.band_hz[0] > 10
    title = "second stage corrected" if r.second_stage_corrected else "system (DUT and receiver)"
    nf = [Trace("noise figure (bars: U, k=2)", f, values(row.noise_figure_db for row in rows), "line+markers",
                u=tuple(row.noise_figure_expanded_db for row in rows))]
    plots = [Plot("yf", "yfactor.png", f"Y-factor noise figure, {title}: {r.noise_figure_db:.2f} dB over the band",
                  f"Frequency ({unit})", "Noise figure (dB)", tuple(nf), log_x=audio_wide, y_from_zero=True)]
    gains = values(row.gain_db for row in rows)
    if any(g is not None for g in gains):
        plots.append(Plot("gain", "yfactor_gain.png", "DUT gain from the calibration pair", f"Frequency ({unit})",
                          "Gain (dB)", (Trace("DUT gain", f, gains, "line+markers"),), log_x=audio_wide))
    plots.append(Plot("y", "yfactor_y.png", "Y factor against frequency", f"Frequency ({unit})", "Y factor (dB)",
                      (Trace("Y factor", f, values(row.y_factor_db for row in rows), "line+markers"),),
                      log_x=audio_wide))
    return tuple(plots)


def present(r: YFactorResult, *, file_stem: str = "yfactor") -> View:
    """The view of a Y-factor result (`file_stem` names its PNG files)."""
    rows = tuple((Quantity(row.freq_hz, "Hz"), Quantity(row.y_factor_db, "dB", digits=3),
                  Quantity(row.noise_figure_db, "dB"), Quantity(row.noise_figure_expanded_db, "dB"),
                  Quantity(row.noise_temperature_k, "K"), Quantity(row.gain_db, "dB"))
                 for row in (*r.rows, *r.spots))
    table = Table("Against frequency (U: expanded, k=2)", ("centre", "Y (dB)", "NF (dB)", "U (dB)", "Te (K)",
                                                         "gain (dB)"), rows)
    plots = tuple(Plot(p.id, p.file.replace("yfactor", file_stem), p.title, p.x_label, p.y_label, p.traces, p.log_x,
                       p.log_y, p.band, p.categories, p.y_from_zero) for p in _plots(r))
    summary = f"noise figure {Quantity(r.noise_figure_db, 'dB', r.uncertainty.get('noise_figure_db')).text()}" + (
        f", gain {Quantity(r.gain_db, 'dB', r.uncertainty.get('gain_db')).text()}" if r.gain_db is not None else "")
    details = tuple(budget_lines(r.budgets, "Uncertainty budgets (standard uncertainties in dB)"))
    return View("yfactor", "Y-factor noise figure", _conditions(r), _headline(r), (table,), plots, tuple(r.notes),
                tuple(r.warnings), details, summary)
