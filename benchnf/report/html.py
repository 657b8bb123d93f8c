"""Self-contained HTML pages (styles and figures inline: no network needed to view them): the report of any
result from its view, the report of a unit's check with its PNG summary, and the control chart of a recorded
figure. Layout, colours and wording are benchnf's own."""

from __future__ import annotations

import base64
import html
import io
import math
from collections.abc import Sequence
from typing import Any

from ..check.limits import CheckResult
from ..measure.provenance import Provenance
from ..measure.results import AnalysisResult
from .labels import condition_rows
from .view import Table, View

__all__ = ["unit_figure", "unit_report_html", "unit_png", "page_html", "control_chart_html", "view_html"]

_TONE = {"PASS": "#1c5d99", "MARGINAL": "#a8740f", "FAIL": "#b3402a", "ERROR": "#55606a"}
_CAUTION = ("Mains and valve equipment carry lethal voltages; phantom power and speaker outputs can destroy a "
            "sound-card input: follow local codes and licensed practice.")


def _e(text: Any) -> str:
    return html.escape(str(text))


def _table_html(table: Table) -> str:
    head = "".join(f"<th>{_e(c)}</th>" for c in table.columns)
    rows = "".join("<tr>" + "".join(f"<td>{_e(table.cell(c, v))}</td>" for c, v in zip(table.columns, row)) + "</tr>"
                   for row in table.rows)
    note = f"<p class='note'>{_e(table.note)}</p>" if table.note else ""
    return f"<h2>{_e(table.title)}</h2><table><tr>{head}</tr>{rows}</table>{note}"


def _provenance_html(prov: Provenance | None) -> str:
    """Where the result came from: when, which software and station, each input file and its hash."""
    if prov is None:
        return ""
    files = "".join(f"<tr><td>{_e(i.file)}</td><td><code>{_e(i.sha256[:16])}...</code></td></tr>" for i in prov.inputs)
    return (f"<h2>Record</h2><p>Analysed {_e(prov.created_utc)} (UTC) by {_e(prov.software)} at station "
            f"{_e(prov.station)}" + (f", operator {_e(prov.operator)}" if prov.operator else "")
            + f".</p><table><tr><th>input file</th><th>SHA-256</th></tr>{files}</table>")


def _png(png: bytes, alt: str) -> str:
    return f"<img alt='{_e(alt)}' src='data:image/png;base64,{base64.b64encode(png).decode('ascii')}'>"


def view_html(view: View, *, figures: Sequence[tuple[str, bytes]] = (), provenance: Provenance | None = None) -> str:
    """Any result's view as one page: conditions, figures with their U, tables, plots (PNG inline), notes,
    and the inputs it was made from."""
    cond = "".join(f"<tr><th>{_e(k)}</th><td>{_e(v)}</td></tr>" for k, v in view.conditions)
    heads = "".join(f"<tr><th>{_e(h.label)}</th><td class='num'>{_e(h.quantity.number_text())} {_e(h.quantity.unit_text())}"
                    f"</td><td>{_e(h.quantity.u_text())}</td><td>{_e(h.note)}</td></tr>" for h in view.headline)
    figs = "".join(f"<h2>{_e(name)}</h2>{_png(png, name)}" for name, png in figures)
    warn = "".join(f"<li>{_e(w)}</li>" for w in view.warnings)
    notes = "".join(f"<li>{_e(n)}</li>" for n in view.notes)
    body = (f"<h1>benchnf: {_e(view.title)}</h1>"
            + (f"<ul class='warn'>{warn}</ul>" if warn else "")
            + f"<h2>Conditions</h2><table>{cond}</table>"
            + (f"<h2>Results</h2><table><tr><th>figure</th><th>value</th><th>U (k=2)</th><th></th></tr>{heads}</table>"
               if heads else "")
            + "".join(_table_html(t) for t in view.tables if t.rows) + figs
            + (f"<h2>Notes</h2><ul>{notes}</ul>" if notes else "") + _provenance_html(provenance)
            + f"<footer>benchnf report. {_e(_CAUTION)}</footer>")
    return page_html(f"benchnf: {view.title}", body)


def unit_figure(results: AnalysisResult, check: CheckResult | None, profile: Any = None) -> Any:
    """A two-panel figure: spot input density with the mask, and hum lines against limits."""
    import numpy as np

    from .render_png import COLOURS, new_figure, plain_log_ticks
    fig, (a, b) = new_figure(1, 4.2, cols=2, width=11, gridspec_kw={"width_ratios": [3, 2]})
    spots = [s for s in results.spot if s.input_density_v_per_rthz]
    a.loglog([s.freq_hz for s in spots], [(s.input_density_v_per_rthz or 0.0) * 1e9 for s in spots], "o-", ms=4,
             color=COLOURS[1], label="this unit (1/3-octave)")
    for m in (profile.masks if profile is not None else ()):
        if m.quantity == "input_density_v_per_rthz":
            ff = np.geomspace(m.frequency_hz[0], m.frequency_hz[-1], 200)
            a.loglog(ff, [m.at(x) * 1e9 for x in ff], "--", color=COLOURS[2], label="profile mask")
    a.set_xlabel("Frequency (Hz)")
    a.set_ylabel("Input-referred noise density (nV/\u221aHz)")
    plain_log_ticks(a)
    a.grid(True, which="both", alpha=0.3)
    a.legend(fontsize=8)
    a.set_title("Noise density against the mask", fontsize=10)
    spurs = sorted(results.spurs, key=lambda s: s.freq_hz)[:12]
    if spurs:
        colours = {"mains": COLOURS[5], "ripple": COLOURS[3], "unclassified": COLOURS[4]}
        b.bar(range(len(spurs)), [s.output_vrms * 1e6 for s in spurs], color=[colours.get(s.family, COLOURS[4])
                                                                              for s in spurs])
        b.set_xticks(range(len(spurs)), [f"{s.freq_hz:.0f}" for s in spurs], rotation=45, fontsize=8)
        b.set_xlabel("Line frequency (Hz)")
        b.set_ylabel("Output level (\u00b5V RMS)")
        for h in (profile.hum if profile is not None else ()):
            b.axhline(h.max_output_vrms * 1e6, ls=":", color=COLOURS[2], lw=1)
            b.annotate(f"{h.family} limit", (len(spurs) - 0.5, h.max_output_vrms * 1e6), fontsize=7, ha="right",
                       va="bottom", color=COLOURS[2])
    else:
        b.text(0.5, 0.5, "no hum or spur lines found", ha="center", va="center", transform=b.transAxes)
    b.set_title("Hum and spur lines (blue mains, ochre ripple)", fontsize=10)
    verdict = check.verdict if check is not None else ""
    fig.suptitle(f"{check.unit if check else ''}  {verdict}", color=_TONE.get(verdict, "black"), fontsize=12)
    return fig


def _png_bytes(fig: Any) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=100)
    return buf.getvalue()


def unit_png(results: AnalysisResult, check: CheckResult | None, profile: Any = None) -> bytes:
    """The unit's summary figure as PNG bytes."""
    return _png_bytes(unit_figure(results, check, profile))


def unit_report_html(*, serial: str, verdict: str, check: CheckResult | None, results: AnalysisResult | None,
                     profile: Any = None, error: str | None = None) -> str:
    """One unit's report as a single self-contained page: verdict, limits, figures, conditions, record."""
    from .present_analysis import present as present_analysis
    from ..check.decision import rule_text
    from .present_check import MARGINAL_WORDS, limit_rows
    tone = _TONE.get(verdict, "#55606a")
    rows = "".join(f"<tr class='{_e(str(row[5]).lower())}'>" + "".join(f"<td>{_e(Table.cell('', c))}</td>" for c in row)
                   + "</tr>" for row in (limit_rows(check) if check else ()))
    figures = ""
    floor_note = ""
    if results is not None:
        figures = _png(_png_bytes(unit_figure(results, check, profile)), "noise density against the mask, and hum lines")
        heads = present_analysis(results).headline
        figures += "<table class='figs'>" + "".join(
            f"<tr><th>{_e(h.label)}</th><td>{_e(h.quantity.text())}</td></tr>" for h in heads) + "</table>"
        if not results.floor_corrected:
            floor_note = "<p class='err'>The analyzer floor was NOT subtracted: the figures include its own noise.</p>"
    cond_rows = "".join(f"<tr><th>{_e(k)}</th><td>{_e(v)}</td></tr>"
                        for k, v in (condition_rows(check.conditions) if check else []))
    marginal = (f"<p>{_e(MARGINAL_WORDS)}</p>" if check and any(v.verdict == "MARGINAL" for v in check.limits) else "")
    body = f"""<h1>Unit {_e(serial)}</h1>
<p><span class="verdict">{_e(verdict)}</span> against profile <i>{_e(check.profile if check else '-')}</i></p>
{f"<p>Decision rule: {_e(rule_text(check.decision_rule))}.</p>" if check else ""}
{floor_note}{f"<p class='err'>{_e(error)}</p>" if error else ""}
<h2>Limits</h2>
<table><tr><th>limit</th><th>measured</th><th>limit</th><th>margin</th><th>U (k=2)</th><th>verdict</th>
<th>suggestion</th></tr>{rows}</table>
{marginal}
{_findings_html(check)}
<h2>Figures</h2>{figures}
<h2>Measurement conditions</h2><table>{cond_rows}</table>
{_provenance_html(results.provenance if results is not None else None)}
<footer>benchnf check report. Suggestions are general trade knowledge, not a diagnosis. {_e(_CAUTION)}</footer>"""
    return page_html(f"benchnf check: {serial}", body, accent=tone)


def _findings_html(check: CheckResult | None) -> str:
    if check is None or not check.diagnosis:
        return ""
    return "<h2>Findings, in the order to act on them</h2><ol>" + "".join(f"<li>{_e(f)}</li>" for f in check.diagnosis) + "</ol>"


def page_html(title: str, body: str, *, accent: str = "#55606a") -> str:
    """A self-contained page: benchnf's own plain styles inline, `accent` behind the verdict badge."""
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{html.escape(title)}</title>
<style>
body {{ font-family: system-ui, sans-serif; margin: 2em auto; max-width: 70em; color: #1f2a30; background: #fbf9f4; }}
.verdict {{ display: inline-block; padding: .3em .9em; border-radius: .3em; color: white; background: {accent};
           font-size: 1.6em; font-weight: 600; }}
table {{ border-collapse: collapse; margin: 1em 0; }}
th, td {{ border-bottom: 1px solid #e4ddcf; padding: .35em .7em; text-align: left; vertical-align: top; }}
td.num {{ text-align: right; white-space: nowrap; }}
tr.fail td {{ background: #f6e3dc; }} tr.marginal td {{ background: #f7ecd2; }}
img {{ max-width: 100%; border: 1px solid #e4ddcf; }} .err, .warn {{ color: #b3402a; font-weight: 600; }}
.note {{ color: #55606a; }} footer {{ color: #55606a; font-size: .85em; margin-top: 2em; }}
</style></head><body>
{body}
</body></html>
"""


def _fmt(v: Any) -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "&ndash;"
    return f"{v:.4g}" if isinstance(v, float) else html.escape(str(v))


def control_chart_html(chart: Any, *, figure: str, rows: list[dict[str, Any]], png: bytes, source: str,
                       software: str, made_utc: str) -> str:
    """The control chart of one recorded figure as a page: the chart, its limits, and each point that breaks
    a run rule with the unit's serial and time. `rows` are the records in the chart's order."""
    from ..records.charts import RUN_RULES
    breaks = "".join(f"<tr class='fail'><td>{i + 1}</td><td>{html.escape(str(rows[i]['serial']))}</td>"
                     f"<td>{html.escape(str(rows[i]['checked_at']))}</td><td>{_fmt(chart.values[i])}</td>"
                     f"<td>{rule}: {html.escape(RUN_RULES[rule])}</td></tr>" for i, rule in chart.signals)
    verdict = "RULES BROKEN" if chart.signals else "IN CONTROL"
    limits = (f"<tr><th>individuals</th><td>{chart.centre:.6g}</td><td>{chart.lower:.6g}</td>"
              f"<td>{chart.upper:.6g}</td></tr><tr><th>moving range</th><td>{chart.mr_centre:.6g}</td>"
              f"<td>0</td><td>{chart.mr_upper:.6g}</td></tr>")
    body = f"""<h1>Control chart: {html.escape(figure)}</h1>
<p><span class="verdict">{verdict}</span> over {len(chart.values)} units, each serial's latest check, in time order</p>
{_png(png, f'individuals and moving-range chart of {figure}')}
<h2>Limits</h2><table><tr><th></th><th>centre</th><th>lower</th><th>upper</th></tr>{limits}</table>
<p>Individuals limits: centre &plusmn; 2.660 &times; mean moving range; moving-range upper limit: 3.267 &times;
mean moving range.</p>
<h2>Points that break a run rule</h2>
{f"<table><tr><th>point</th><th>serial</th><th>checked (UTC)</th><th>value</th><th>rule</th></tr>{breaks}</table>"
 if breaks else "<p>None.</p>"}
<footer>Made {html.escape(made_utc)} (UTC) by {html.escape(software)} from the records at
{html.escape(source)}. A broken rule says the process changed, not which unit is bad.</footer>"""
    return page_html(f"benchnf control chart: {figure}", body,
                     accent=_TONE["FAIL"] if chart.signals else _TONE["PASS"])
