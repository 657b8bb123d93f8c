"""The views of where the noise comes from: the en/in sweep, the measured stage budget and the cascade
prediction (figures with their U, tables, and plots with category axes for stages)."""

from __future__ import annotations

from ..measure.cascade import CascadePrediction
from ..measure.stages import BudgetResult, EniResult, EniRow
from ..units import BOLTZMANN_J_PER_K, T0_K
from ..quantity import Quantity, resistance_text
from .view import Headline, Plot, Table, Trace, View, values

__all__ = ["present_eni", "present_budget", "present_cascade"]

def _twice(std: float | None) -> float | None:
    return None if std is None else 2 * std


def _eni_headline(a: EniRow) -> tuple[Headline, ...]:
    f = Quantity(a.freq_hz, "Hz").text()
    return (Headline(f"voltage noise en, {f}", Quantity(a.en_v_per_rthz, "V/√Hz", _twice(a.en_std_v_per_rthz)),
                     key="en_at_1khz_v_per_rthz"),
            Headline(f"current noise in, {f}", Quantity(a.in_a_per_rthz, "A/√Hz", _twice(a.in_std_a_per_rthz)),
                     key="in_at_1khz_a_per_rthz"),
            Headline(f"Ropt = en/in, {f}", Quantity(a.ropt_ohm, "Ω", a.ropt_u95_ohm),
                     "; ".join(a.undetermined) if a.ropt_ohm is None else "", "ropt_at_1khz_ohm"),
            Headline(f"NFmin, {f}", Quantity(a.nfmin_db, "dB", a.nfmin_u95_db),
                     "" if a.nfmin_db is not None else "not determined by this sweep", "nfmin_at_1khz_db"),
            Headline(f"correlation of en and in, {f}", Quantity(a.correlation, "", _twice(a.correlation_std), digits=2),
                     "" if a.correlation is not None else "two source resistances: taken as uncorrelated",
                     "correlation_at_1khz"))


def _eni_plots(r: EniResult) -> tuple[Plot, ...]:
    rows = r.rows
    f = values(row.freq_hz for row in rows)
    en = Trace("en (bars: U, k=2)", f, values((row.en_v_per_rthz for row in rows), 1e9), "line+markers",
               u=values((_twice(row.en_std_v_per_rthz) for row in rows), 1e9))
    i_n = Trace("in (bars: U, k=2)", f, values((row.in_a_per_rthz for row in rows), 1e12), "line+markers",
                u=values((_twice(row.in_std_a_per_rthz) for row in rows), 1e12))
    curves = []
    for name, c in r.nf_vs_rs.curves.items():
        curves.append(Trace(f"model at {name} Hz", values(c.rs_ohm), values(c.noise_figure_db)))
        if c.noise_figure_u95_db is not None:
            curves.append(Trace(f"U (k=2) at {name} Hz", values(c.rs_ohm), values(c.noise_figure_db), "band",
                                u=values(c.noise_figure_u95_db)))
    measured = [(p.rs_ohm, _nf_db(1 + (p.input_density_at_1khz_v_per_rthz ** 2 - 4 * BOLTZMANN_J_PER_K
                                       * p.temperature_k * p.rs_ohm) / (4 * BOLTZMANN_J_PER_K * T0_K * p.rs_ohm)))
                for p in r.points if p.rs_ohm > 0]
    if measured:
        curves.append(Trace("measured at 1 kHz", values(x for x, _ in measured), values(y for _, y in measured),
                            "markers", labels=tuple(resistance_text(x) for x, _ in measured)))
    return (Plot("en", "en.png", "Amplifier voltage noise from the Rs sweep", "Frequency (Hz)", "en (nV/√Hz)", (en,),
                 log_y=True),
            Plot("in", "in.png", "Amplifier current noise from the Rs sweep", "Frequency (Hz)", "in (pA/√Hz)", (i_n,),
                 log_y=True),
            Plot("nfrs", "nf_vs_rs.png", "Noise figure against source resistance (best SNR is at the lowest Rs)",
                 "Source resistance (Ω)", "Noise figure (dB)", tuple(curves), y_from_zero=True))


def _nf_db(factor: float) -> float | None:
    """A measured point's noise figure, dB (None where its noise factor came out at or below zero)."""
    import math
    return 10 * math.log10(factor) if factor > 0 else None


def present_eni(r: EniResult) -> View:
    """The view of an en/in sweep."""
    rows = tuple((Quantity(row.freq_hz, "Hz", display="Hz"), Quantity(row.en_v_per_rthz, "V/√Hz"),
                  Quantity(_twice(row.en_std_v_per_rthz), "V/√Hz"), Quantity(row.in_a_per_rthz, "A/√Hz"),
                  Quantity(_twice(row.in_std_a_per_rthz), "A/√Hz"), Quantity(row.ropt_ohm, "Ω"),
                  Quantity(row.nfmin_db, "dB"), "; ".join(row.undetermined) or "")
                 for row in r.rows)
    table = Table("Per one-third octave (U: expanded, k=2)",
                  ("f (Hz)", "en (nV/√Hz)", "U (nV/√Hz)", "in (pA/√Hz)", "U (pA/√Hz)", "Ropt", "NFmin (dB)",
                   "not determined"), rows)
    points = Table("Captures swept", ("Rs", "capture", "gain (dB)", "at 1 kHz (nV/√Hz)"),
                   tuple((Quantity(p.rs_ohm, "Ω"), p.label, Quantity(p.gain_db, "dB"),
                          Quantity(p.input_density_at_1khz_v_per_rthz, "V/√Hz")) for p in r.points))
    a = r.at_1khz
    conditions = (("source resistances", ", ".join(f"{resistance_text(p.rs_ohm)} ({p.label})" for p in r.points)),
                  ("model", "e_ni^2 = en^2 + (in Rs)^2 + 4kTRs" + (" + 2 rho en in Rs" if a.correlation is not None
                                                                   else ", en and in uncorrelated")))
    notes = tuple(r.notes)
    summary = (f"en {Quantity(a.en_v_per_rthz, 'V/√Hz').text()}, in {Quantity(a.in_a_per_rthz, 'A/√Hz').text()} at "
               f"{Quantity(a.freq_hz, 'Hz').text()}")
    return View("eni", "voltage and current noise from a source-resistance sweep", conditions, _eni_headline(a),
                (points, table), _eni_plots(r), notes, tuple(r.warnings), (), summary)


def present_budget(r: BudgetResult) -> View:
    """The view of a measured stage budget against the part data."""
    conditions = (("source", f"{resistance_text(r.rs_ohm)} at {r.temperature_k:.2f} K "
                             f"({Quantity(r.source_density_v_per_rthz, 'V/√Hz').text()})"),
                  ("band", f"{Quantity(r.band_hz[0], 'Hz').text()} to {Quantity(r.band_hz[1], 'Hz').text()} "
                           f"(band-mean densities, lines removed)"))
    head = (Headline("noise figure, measured", Quantity(r.measured_noise_figure_db, "dB", r.measured_noise_figure_u95_db),
                     key="measured_noise_figure_db"),
            Headline("noise figure, predicted from the part data", Quantity(r.predicted_noise_figure_db, "dB"),
                     key="predicted_noise_figure_db"))
    rows = tuple((t.name, Quantity(t.gain_db, "dB"),
                  Quantity(t.input_density_v_per_rthz, "V/√Hz"), Quantity(2 * t.input_density_std_v_per_rthz, "V/√Hz"),
                  Quantity(t.added_v2_per_hz ** 0.5 if t.added_v2_per_hz > 0 else 0.0, "V/√Hz"),
                  Quantity(t.predicted_added_v2_per_hz ** 0.5 if t.predicted_added_v2_per_hz else None, "V/√Hz"),
                  Quantity(100 * t.share_measured, "%"),
                  Quantity(None if t.share_predicted is None else 100 * t.share_predicted, "%"),
                  "unexplained" if t.unexplained else "") for t in r.taps)
    table = Table("Stages (input-referred; U: expanded, k=2)",
                  ("tap", "gain (dB)", "input noise (nV/√Hz)", "U (nV/√Hz)", "added by the stage (nV/√Hz)",
                   "added, predicted (nV/√Hz)",
                   "share measured (%)", "share predicted (%)", ""), rows)
    names = tuple(t.name for t in r.taps)
    traces = [Trace("measured", tuple(float(i) for i in range(len(names))), values(100 * t.share_measured for t in r.taps),
                    "bar", labels=names)]
    if any(t.share_predicted is not None for t in r.taps):
        traces.append(Trace("predicted from part data", tuple(float(i) for i in range(len(names))),
                            values(None if t.share_predicted is None else 100 * t.share_predicted for t in r.taps),
                            "bar", labels=names))
    plot = Plot("budget", "stage_budget.png", f"Stage budget at Rs = {resistance_text(r.rs_ohm)}", "stage",
                "Share of the excess noise (%)", tuple(traces), log_x=False, categories=True)
    summary = f"noise figure measured {r.measured_noise_figure_db:.2f} dB" + (
        f", predicted {r.predicted_noise_figure_db:.2f} dB" if r.predicted_noise_figure_db is not None else "")
    return View("budget", "measured stage budget", conditions, head, (table,), (plot,), tuple(r.notes), tuple(r.warnings), (),
                summary)


def present_cascade(r: CascadePrediction) -> View:
    """The view of a cascade prediction: totals, each stage's share, where to spend, a what-if."""
    form = "Friis (matched, noise factor)" if r.form == "friis" else "input-referred voltage and current noise"
    head = [Headline("noise figure", Quantity(r.noise_figure_db, "dB", digits=3), key="noise_figure_db"),
            Headline("noise temperature", Quantity(r.noise_temperature_k, "K"), key="noise_temperature_k"),
            Headline("gain", Quantity(r.gain_db, "dB"), key="gain_db")]
    if r.input_density_v_per_rthz is not None:
        head.append(Headline("input noise density", Quantity(r.input_density_v_per_rthz, "V/√Hz"), "source included",
                             "input_density_v_per_rthz"))
    if r.what_if is not None:
        other = r.what_if.result
        head.append(Headline(f"noise figure if {r.what_if.change}", Quantity(other.noise_figure_db, "dB", digits=3),
                             f"{other.noise_figure_db - r.noise_figure_db:+.3f} dB", "what_if"))
    stages = Table("Stages", ("stage", "gain (dB)", "noise factor", "share of the excess (%)", "NF after it (dB)", "from"),
                   tuple((s.name, Quantity(s.gain_db, "dB"), Quantity(s.noise_factor, "", digits=5),
                          Quantity(100 * s.share_of_excess, "%"), Quantity(s.cumulative_noise_figure_db, "dB", digits=3),
                          s.source) for s in r.stages))
    spend = Table(f"Where to spend: the chain's noise figure saved if one stage's own noise (its noise temperature, "
                  f"or its en and in) fell by {r.improve_db:g} dB",
                  ("saving (dB)", "stage"), tuple((Quantity(x.noise_figure_saving_db, "dB", digits=3), x.stage)
                                                  for x in r.where_to_spend))
    tables = [stages, spend]
    if r.device_levers:
        tables.append(Table("What the first stage's device would buy: the chain's noise figure saved",
                            ("saving (dB)", "change"), tuple((Quantity(x.noise_figure_saving_db, "dB", digits=3), x.stage)
                                                           for x in r.device_levers)))
    names = tuple(s.name for s in r.stages)
    plot = Plot("shares", "cascade_shares.png", "Each stage's share of the excess noise", "stage", "share (%)",
                (Trace("share", tuple(float(i) for i in range(len(names))),
                       values(100 * s.share_of_excess for s in r.stages), "bar", labels=names),),
                log_x=False, categories=True)
    return View("cascade", "cascade prediction", (("form", form),), tuple(head), tuple(tables), (plot,),
                tuple(r.notes), tuple(r.warnings), (),
                f"noise figure {r.noise_figure_db:.3f} dB, gain {r.gain_db:.2f} dB")
