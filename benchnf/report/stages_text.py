"""Terminal tables for the cascade prediction, the measured stage budget and en/in extraction."""

from __future__ import annotations

import math

from ..noise.cascade import CascadeResult
from ..measure.stages import BudgetResult, EniResult

__all__ = ["format_cascade", "format_budget", "format_eni"]


def _n(v, fmt=".3f"):
    return "-" if v is None or (isinstance(v, float) and not math.isfinite(v)) else format(v, fmt)


def format_cascade(r: CascadeResult, *, spend: list[tuple[str, float]] | None = None, improve_db: float = 1.0,
                   what_if: tuple[str, CascadeResult] | None = None) -> str:
    form = "Friis (matched, noise factor)" if r.form == "friis" else "input-referred voltage and current noise"
    lines = ["benchnf - cascade prediction", "", f"  form              {form}",
             f"  noise figure      {r.noise_figure_db:.3f} dB", f"  noise temperature {r.noise_temperature_k:.1f} K",
             f"  gain              {_n(r.gain_db, '.2f')} dB"]
    if r.input_density_v_per_rthz is not None:
        lines.append(f"  input noise       {r.input_density_v_per_rthz * 1e9:.3f} nV/rtHz (source included)")
    lines += ["", f"  {'stage':24s} {'gain dB':>8} {'F':>8} {'share':>7} {'NF after':>9}  from"]
    for s in r.stages:
        lines.append(f"  {s.name[:24]:24s} {_n(s.gain_db, '.2f'):>8} {s.noise_factor:8.4f} "
                     f"{100 * s.share_of_excess:6.1f}% {s.cumulative_noise_figure_db:8.3f}  {s.source}")
    if spend:
        lines += ["", f"Where to spend: total NF saved if one stage's own noise (its noise temperature, or its "
                      f"en and in) fell by {improve_db:g} dB"]
        for name, saving in spend:
            lines.append(f"  {saving:7.3f} dB  {name}")
    if what_if:
        label, other = what_if
        lines += ["", f"What if {label}: NF {r.noise_figure_db:.3f} -> {other.noise_figure_db:.3f} dB "
                      f"({other.noise_figure_db - r.noise_figure_db:+.3f} dB)"]
    if r.notes:
        lines += [""] + [f"  * {n}" for n in r.notes]
    return "\n".join(lines) + "\n"


def format_budget(r: BudgetResult) -> str:
    lines = ["benchnf - measured stage budget", "",
             f"  source            {r.rs_ohm:g} ohm at {r.temperature_k:.2f} K "
             f"({r.source_density_v_per_rthz * 1e9:.3f} nV/rtHz)",
             f"  band              {r.band_hz[0]:g}-{r.band_hz[1]:g} Hz (band-mean densities, lines removed)",
             f"  noise figure      measured {r.measured_noise_figure_db:.3f} dB, predicted "
             f"{_n(r.predicted_noise_figure_db)} dB", "",
             f"  {'':18s} {'':>8} {'input noise':>14} {'added by stage':>14} {'added':>10} "
             f"{'share of excess noise':>21}",
             f"  {'tap':18s} {'gain dB':>8} {'nV/rtHz':>14} {'nV/rtHz':>14} {'predicted':>10} "
             f"{'measured':>10} {'predicted':>10}"]
    for t in r.taps:
        add = math.sqrt(t.added_v2_per_hz) * 1e9 if t.added_v2_per_hz > 0 else 0.0
        pred = math.sqrt(t.predicted_added_v2_per_hz) * 1e9 if t.predicted_added_v2_per_hz else None
        mark = "  <- unexplained" if t.unexplained else ""
        lines.append(f"  {t.name[:18]:18s} {t.gain_db:8.2f} {t.input_density_v_per_rthz * 1e9:14.3f} "
                     f"{add:14.3f} {_n(pred):>10} {100 * t.share_measured:9.1f}% "
                     f"{'-' if t.share_predicted is None else f'{100 * t.share_predicted:9.1f}%':>10}{mark}")
    if r.notes:
        lines += ["", "Notes"] + [f"  * {n}" for n in r.notes]
    return "\n".join(lines) + "\n"


def _pm(u: float | None, fmt: str) -> str:
    return "" if u is None else f" +/- {format(u, fmt)}"


def _k2(std: float | None) -> float | None:
    return None if std is None else 2 * std


def format_eni(r: EniResult, *, every: int = 3) -> str:
    """Summary and a table of every `every`-th one-third-octave row (3: octaves); the JSON has all."""
    a = r.at_1khz
    lines = ["benchnf - voltage and current noise from a source-resistance sweep", "",
             "  points: " + ", ".join(f"{p['rs_ohm']:g} ohm ({p['label']})" for p in r.points),
             f"  at {a['freq_hz']:g} Hz: en {_n(a['en_v_per_rthz'] * 1e9 if a['en_v_per_rthz'] else None)} nV/rtHz, "
             f"in {_n(a['in_a_per_rthz'] * 1e12 if a['in_a_per_rthz'] else None)} pA/rtHz, Ropt "
             f"{_n(a['ropt_ohm'], '.0f')}{_pm(a.get('ropt_u95_ohm'), '.0f')} ohm, NFmin {_n(a['nfmin_db'])}"
             f"{_pm(a.get('nfmin_u95_db'), '.2f')} dB"
             + (f", correlation {a['correlation']:+.2f}{_pm(_k2(a.get('correlation_std')), '.2f')}"
                if a["correlation"] is not None else "")
             + (" (k=2)" if a.get("ropt_u95_ohm") is not None else ""),
             *[f"  not determined by this sweep: {u}" for u in a.get("undetermined", [])], "",
             f"  {'freq Hz':>8} {'en nV/rtHz':>11} {'+/-':>7} {'in pA/rtHz':>11} {'+/-':>7} {'Ropt ohm':>9} "
             f"{'NFmin dB':>9}"]
    for row in r.rows[::every]:
        en, i_n = row["en_v_per_rthz"], row["in_a_per_rthz"]
        lines.append(f"  {row['freq_hz']:>8g} {_n(en * 1e9 if en else None):>11} "
                     f"{_n(row['en_std_v_per_rthz'] * 2e9 if en else None):>7} {_n(i_n * 1e12 if i_n else None):>11} "
                     f"{_n(row['in_std_a_per_rthz'] * 2e12 if i_n else None):>7} {_n(row['ropt_ohm'], '.0f'):>9} "
                     f"{_n(row['nfmin_db']):>9}")
    lines += ["", "  (+/- columns: expanded, k=2)"] + [f"  * {n}" for n in r.notes]
    return "\n".join(lines) + "\n"
