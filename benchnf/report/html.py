"""Self-contained HTML pages (styles and figures inline: no network needed to view them): the report of a
unit with its PNG summary, and the control chart of a recorded figure.  Layout, colours and wording are benchnf's own."""

from __future__ import annotations

import base64
import html
import io
import math
from typing import Any

import numpy as np

from .._optional import require

__all__ = ["unit_figure", "unit_report_html", "unit_png", "page_html", "control_chart_html", "analysis_report_html"]

_TONE = {"PASS": "#2e7d4f", "MARGINAL": "#b07d12", "FAIL": "#b3261e", "ERROR": "#5f5f5f"}


def unit_figure(results: dict[str, Any], check: dict[str, Any] | None, profile=None):
    """A two-panel matplotlib figure: spot input density with the mask, and hum lines against limits."""
    require("matplotlib", extra=None, purpose="plotting")
    from matplotlib.figure import Figure
    fig = Figure(figsize=(11, 4.2), layout="constrained")
    a, b = fig.subplots(1, 2, gridspec_kw={"width_ratios": [3, 2]})
    spots = [s for s in results.get("spot", []) if s.get("input_density_v_per_rthz")]
    f = [s["freq_hz"] for s in spots]
    a.loglog(f, [s["input_density_v_per_rthz"] * 1e9 for s in spots], "o-", ms=4, color="#1f5a96",
             label="this unit (1/3-octave)")
    if profile is not None:
        for m in profile.masks:
            if m.quantity == "input_density_v_per_rthz":
                ff = np.geomspace(m.frequency_hz[0], m.frequency_hz[-1], 200)
                a.loglog(ff, [m.at(x) * 1e9 for x in ff], "--", color="#b3261e", label="profile mask")
    a.set_xlabel("Frequency (Hz)")
    a.set_ylabel("Input-referred noise (nV/\u221aHz)")
    from .plots import plain_log_ticks
    plain_log_ticks(a)
    a.grid(True, which="both", alpha=0.3)
    a.legend(fontsize=8)
    a.set_title("Noise density against the mask", fontsize=10)
    spurs = sorted(results.get("spurs", []), key=lambda s: s["freq_hz"])[:12]
    if spurs:
        colours = {"mains": "#1f5a96", "ripple": "#b07d12", "unclassified": "#5f5f5f"}
        b.bar(range(len(spurs)), [s["output_vrms"] * 1e6 for s in spurs],
              color=[colours.get(s["family"], "#5f5f5f") for s in spurs])
        b.set_xticks(range(len(spurs)), [f"{s['freq_hz']:.0f}" for s in spurs], rotation=45, fontsize=8)
        b.set_xlabel("Line frequency (Hz)")
        b.set_ylabel("Output level (\u00b5V RMS)")
        if profile is not None:
            for h in profile.hum:
                b.axhline(h.max_output_vrms * 1e6, ls=":", color="#b3261e", lw=1)
                b.annotate(f"{h.family} limit", (len(spurs) - 0.5, h.max_output_vrms * 1e6), fontsize=7,
                           ha="right", va="bottom", color="#b3261e")
    else:
        b.text(0.5, 0.5, "no hum or spur lines found", ha="center", va="center", transform=b.transAxes)
    b.set_title("Hum and spur lines (blue mains, amber ripple)", fontsize=10)
    verdict = (check or {}).get("verdict", "")
    fig.suptitle(f"{(check or {}).get('unit', '')}  {verdict}", color=_TONE.get(verdict, "black"), fontsize=12)
    return fig


def _png_bytes(fig) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=100)
    return buf.getvalue()


def unit_png(results, check, profile=None) -> bytes:
    """The unit's summary figure as PNG bytes."""
    return _png_bytes(unit_figure(results, check, profile))


def _fmt(v: Any) -> str:
    if v is None:
        return "&ndash;"
    if isinstance(v, float):
        if not math.isfinite(v):
            return "&ndash;"
        return f"{v:.4g}"
    return html.escape(str(v))


def _record_html(results: dict[str, Any] | None) -> str:
    """Where the unit's results came from: when, which software and station, each input file and its hash."""
    prov = (results or {}).get("provenance")
    if not prov:
        return ""
    files = "".join(f"<tr><td>{html.escape(i['file'])}</td><td><code>{html.escape(i['sha256'][:16])}...</code></td></tr>"
                    for i in prov.get("inputs", []))
    return (f"<h2>Record</h2><p>Analysed {html.escape(str(prov.get('created_utc')))} (UTC) by "
            f"{html.escape(str(prov.get('software')))} at station {html.escape(str(prov.get('station')))}"
            + (f", operator {html.escape(str(prov['operator']))}" if prov.get("operator") else "")
            + f".</p><table><tr><th>input file</th><th>SHA-256</th></tr>{files}</table>")


def unit_report_html(*, serial: str, verdict: str, check: dict[str, Any] | None,
                     results: dict[str, Any] | None, profile=None, error: str | None = None) -> str:
    """One unit's report as a single self-contained HTML page."""
    tone = _TONE.get(verdict, "#5f5f5f")
    from .labels import condition_rows, limit_label, value_text
    weighting = (results or {}).get("weighting")
    rows = []
    for v in (check or {}).get("limits", []):
        rows.append(f"<tr class='{v['verdict'].lower()}'><td>{html.escape(limit_label(v['name'], weighting=weighting))}"
                    f"</td><td>{html.escape(value_text(v['name'], v['measured']))}</td>"
                    f"<td>{html.escape(v['limit'])}</td><td>{_fmt(v['margin'])} {html.escape(v['unit'])}</td>"
                    f"<td>{'&ndash;' if v['uncertainty'] is None else format(v['uncertainty'], '.2f')}</td>"
                    f"<td><b>{v['verdict']}</b></td>"
                    f"<td>{html.escape(v['hint'] or '')}</td></tr>")
    cond = (check or {}).get("conditions", {})
    cond_rows = "".join(f"<tr><th>{html.escape(label)}</th><td>{html.escape(text)}</td></tr>"
                        for label, text in condition_rows(cond))
    figures = ""
    if results:
        png = base64.b64encode(_png_bytes(unit_figure(results, check, profile))).decode("ascii")
        figures = f"<img alt='noise density against the mask, and hum lines' src='data:image/png;base64,{png}'>"
        key = ["gain_db", "ein_dbu", "noise_figure_db", "nf_at_1khz_db", "flicker_corner_hz", "output_noise_vrms"]
        figures += "<table class='figs'>" + "".join(
            f"<tr><th>{html.escape(limit_label(k, weighting=weighting))}</th>"
            f"<td>{html.escape(value_text(k, results.get(k)))}</td></tr>" for k in key) + "</table>"
    body_error = f"<p class='err'>{html.escape(error)}</p>" if error else ""
    record = _record_html(results)
    marginal = ("<p>MARGINAL: within the expanded measurement uncertainty of the limit, on either side: neither a "
                "confident pass nor a proven failure. Measure longer, or check the setup, before deciding.</p>"
                if any(v["verdict"] == "MARGINAL" for v in (check or {}).get("limits", [])) else "")
    body = f"""<h1>Unit {html.escape(serial)}</h1>
<p><span class="verdict">{verdict}</span> against profile <i>{html.escape((check or {}).get('profile', '-'))}</i></p>
{body_error}
<h2>Limits</h2>
<table><tr><th>limit</th><th>measured</th><th>limit</th><th>margin</th><th>U (k=2, dB)</th><th>verdict</th>
<th>suggestion</th></tr>{''.join(rows)}</table>
{marginal}
<h2>Figures</h2>{figures}
<h2>Measurement conditions</h2><table>{cond_rows}</table>
{record}
<footer>benchnf check report. Suggestions are general trade knowledge, not a diagnosis. Mains and valve
equipment carry lethal voltages: follow local codes and licensed practice.</footer>"""
    return page_html(f"benchnf check: {serial}", body, accent=tone)


def analysis_report_html(*, title: str, summary: str, figures: list[tuple[str, bytes]],
                         inputs: list[dict[str, Any]] | None = None) -> str:
    """A gain-method result as one self-contained page: its summary text, its figures (PNG inline) and the
    inputs it read with their SHA-256."""
    import base64
    imgs = "".join(f'<h2>{html.escape(name)}</h2><img alt="{html.escape(name)}" '
                   f'src="data:image/png;base64,{base64.b64encode(png).decode()}">' for name, png in figures)
    rows = "".join(f"<tr><td>{html.escape(str(i.get('file')))}</td><td><code>{html.escape(str(i.get('sha256')))}"
                   f"</code></td></tr>" for i in inputs or [])
    table = f"<h2>Inputs</h2><table><tr><th>file</th><th>SHA-256</th></tr>{rows}</table>" if rows else ""
    body = f"<h1>{html.escape(title)}</h1><pre>{html.escape(summary)}</pre>{imgs}{table}"
    return page_html(title, body)


def page_html(title: str, body: str, *, accent: str = "#5f5f5f") -> str:
    """A self-contained page: benchnf's own plain styles inline, `accent` behind the verdict badge."""
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{html.escape(title)}</title>
<style>
body {{ font-family: system-ui, sans-serif; margin: 2em auto; max-width: 70em; color: #1b1b1b; }}
.verdict {{ display: inline-block; padding: .3em .9em; border-radius: .3em; color: white; background: {accent};
           font-size: 1.6em; font-weight: 600; }}
table {{ border-collapse: collapse; margin: 1em 0; }}
th, td {{ border-bottom: 1px solid #ddd; padding: .35em .7em; text-align: left; vertical-align: top; }}
tr.fail td {{ background: #fbe9e7; }} tr.marginal td {{ background: #fff5dc; }}
img {{ max-width: 100%; border: 1px solid #eee; }} .err {{ color: #b3261e; font-weight: 600; }}
footer {{ color: #777; font-size: .85em; margin-top: 2em; }}
</style></head><body>
{body}
</body></html>
"""


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
    img = base64.b64encode(png).decode("ascii")
    body = f"""<h1>Control chart: {html.escape(figure)}</h1>
<p><span class="verdict">{verdict}</span> over {len(chart.values)} units, each serial's latest check, in time order</p>
<img alt='individuals and moving-range chart of {html.escape(figure)}' src='data:image/png;base64,{img}'>
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
