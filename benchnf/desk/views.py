"""Results as the desk shows them: headline figures with their uncertainty, conditions, tables, plot data.

Nothing is computed here that the measurement layer does not compute: the figures are read from the
results JSON, and the spectra of a gain-method result come from re-running its request
(:func:`benchnf.measure.requests.request_from_results`) on the captures it names, accepted only when the
re-run reproduces the stored EIN.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

__all__ = ["result_view", "figure_row"]

_NV = 1e9


def figure_row(label: str, value: Any, unit: str, u: Any = None, *, digits: int = 2) -> dict[str, Any]:
    """One headline figure: label, value text, unit and expanded uncertainty text (k=2)."""
    def num(v: Any) -> str:
        return "-" if v is None or (isinstance(v, float) and not math.isfinite(v)) else f"{v:.{digits}f}"
    return {"label": label, "value": num(value), "unit": unit, "u": None if u is None else num(u)}


def _f(value: Any, spec: str, scale: float = 1.0) -> str:
    """A table cell: the number formatted, or "-" where the result has none."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    return format(value * scale, spec)


def _u(data: dict[str, Any], key: str) -> Any:
    return (data.get("uncertainty") or {}).get(key)


def _scaled(v: Any, factor: float) -> Any:
    return None if v is None else v * factor


def _conditions(data: dict[str, Any], keys: tuple[str, ...]) -> list[list[str]]:
    rows = []
    for k in keys:
        if data.get(k) is not None:
            v = data[k]
            rows.append([k, ", ".join(f"{x:g}" for x in v) if isinstance(v, list) else
                         (f"{v:.6g}" if isinstance(v, float) else str(v))])
    return rows


def _plot(pid: str, title: str, x_label: str, y_label: str, traces: list[dict[str, Any]], *,
          log_x: bool = True, log_y: bool = True, band: Any = None) -> dict[str, Any]:
    return {"id": pid, "title": title, "x_label": x_label, "y_label": y_label, "traces": traces,
            "log_x": log_x, "log_y": log_y, "band": band}


def _trace(name: str, x: Any, y: Any, **extra: Any) -> dict[str, Any]:
    def clean(a: Any) -> list[float | None]:
        return [None if v is None or not math.isfinite(float(v)) else float(v) for v in a]
    if extra.get("u") is not None:
        extra["u"] = clean(extra["u"])
    return {"name": name, "x": clean(x), "y": clean(y), **extra}


def _analysis(data: dict[str, Any], where: Path) -> dict[str, Any]:
    head = [figure_row("Gain", data.get("gain_db"), "dB", _u(data, "gain_db")),
            figure_row(f"EIN ({data.get('weighting', 'none')}, {data.get('detector', 'rms')})",
                       data.get("ein_dbu"), "dBu", _u(data, "ein_db")),
            figure_row("Noise figure (band)", data.get("noise_figure_db"), "dB", _u(data, "noise_figure_db")),
            figure_row("Noise figure at 1 kHz", data.get("nf_at_1khz_db"), "dB", _u(data, "nf_at_1khz_db")),
            figure_row("Input density at 1 kHz", _scaled(data.get("input_density_at_1khz_v_per_rthz"), _NV),
                       "nV/\u221aHz", digits=3),
            figure_row("Flicker corner", data.get("flicker_corner_hz"), "Hz",
                       _scaled(data.get("flicker_corner_std_hz"), 2.0), digits=1),
            figure_row("Floor margin", data.get("floor_margin_db"), "dB", digits=1)]
    spot = [[_f(r.get("freq_hz"), "g"), _f(r.get("input_density_v_per_rthz"), ".3f", _NV),
             _f(r.get("noise_figure_db"), ".2f"), _f(r.get("floor_margin_db"), ".1f")] for r in data.get("spot") or []]
    hum = [[_f(r.get("freq_hz"), ".2f"), r.get("family", ""), _f(r.get("output_vrms"), ".3f", 1e6),
            _f(r.get("input_vrms"), ".2f", _NV), _f(r.get("excess_db"), ".1f")] for r in data.get("spurs") or []]
    tables = [{"title": "Spot values", "columns": ["f (Hz)", "input density (nV/\u221aHz)", "NF (dB)",
                                                   "floor margin (dB)"], "rows": spot},
              {"title": "Hum and spur lines", "columns": ["f (Hz)", "family", "output (\u00b5V)", "input (nV)",
                                                          "above baseline (dB)"], "rows": hum}]
    view: dict[str, Any] = {"headline": head, "tables": tables,
            "conditions": _conditions(data, ("rs_ohm", "temperature_k", "band_hz", "weighting", "detector",
                                             "floor_corrected", "gain_reference", "sample_rate_hz", "rbw_hz",
                                             "n_averages", "volts_per_fs", "mains_hz")),
            "notes": [*(data.get("notes") or []), *(data.get("hum_hints") or [])]}
    view["plots"], note = _analysis_plots(data, where)
    if note:
        view["notes"].append(note)
    view["exports"] = [] if note else ["csv", "html"]
    return view


def _analysis_plots(data: dict[str, Any], where: Path) -> tuple[list[dict[str, Any]], str | None]:
    """The spectra of a gain-method result, re-run from its captures; spot NF from the JSON otherwise."""
    spot = data.get("spot") or []
    fallback = [_plot("nf", "Noise figure at the spot frequencies", "Frequency (Hz)", "NF (dB)",
                      [_trace("NF", [r["freq_hz"] for r in spot], [r["noise_figure_db"] for r in spot],
                              mode="lines+markers")], log_y=False)]
    from ..errors import BenchError
    from .analysis import rerun
    try:
        result = rerun(where, data)
    except (BenchError, OSError, ValueError) as err:
        return fallback, f"spectra not shown: {err}"
    return _spectra_plots(result, data), None


def _spectra_plots(result: Any, data: dict[str, Any]) -> list[dict[str, Any]]:
    import numpy as np
    s = result.spectra
    f = s.frequency_hz[1:]

    def rt(a: Any) -> Any:
        return None if a is None else np.sqrt(np.clip(a[1:], 0, None))
    band = data.get("band_hz")
    out = [_trace("output (terminated)", f, rt(s.output_v2_per_hz)),
           _trace("output, floor-corrected", f, rt(s.output_corrected_v2_per_hz))]
    if s.floor_v2_per_hz is not None:
        out.append(_trace("analyzer floor", f, rt(s.floor_v2_per_hz)))
    inp = [_trace("input-referred", f, rt(s.input_v2_per_hz))]
    if s.voltage_noise_v2_per_hz is not None:
        inp.append(_trace("voltage noise (shorted)", f, rt(s.voltage_noise_v2_per_hz)))
    return [_plot("output", "Output spectrum", "Frequency (Hz)", "V/\u221aHz", out, band=band),
            _plot("input", "Input-referred density", "Frequency (Hz)", "V/\u221aHz", inp, band=band),
            _plot("nf", "Noise figure against frequency", "Frequency (Hz)", "NF (dB)",
                  [_trace("NF", f, s.noise_figure_db[1:])], log_y=False, band=band)]


def _yfactor(data: dict[str, Any], where: Path) -> dict[str, Any]:
    rows = data.get("rows") or []
    head = [figure_row("Noise figure", data.get("noise_figure_db"), "dB", _u(data, "noise_figure_db")),
            figure_row("Noise temperature", data.get("noise_temperature_k"), "K", digits=1),
            figure_row("Y factor", data.get("y_factor_db"), "dB", digits=3),
            figure_row("Gain", data.get("gain_db"), "dB")]
    plots = [_plot("yf", "Y-factor noise figure against frequency (bars: U, k=2)", "Frequency (Hz)", "NF (dB)",
                   [_trace("NF", [r["freq_hz"] for r in rows], [r["noise_figure_db"] for r in rows],
                           u=[r.get("noise_figure_expanded_db") for r in rows])],
                   log_x=(data.get("centre_hz") is None), log_y=False, band=data.get("band_hz"))]
    table = [[_f(r.get("freq_hz"), ".6g"), _f(r.get("y_factor_db"), ".3f"), _f(r.get("noise_figure_db"), ".2f"),
              _f(r.get("noise_temperature_k"), ".0f")] for r in rows]
    return {"headline": head, "plots": plots,
            "tables": [{"title": "Per frequency", "columns": ["f (Hz)", "Y (dB)", "NF (dB)", "Te (K)"],
                        "rows": table}],
            "conditions": _conditions(data, ("method", "t_hot_k", "t_cold_k", "enr_db", "band_hz", "centre_hz",
                                             "second_stage_corrected", "floor_subtracted", "rbw_hz",
                                             "n_averages")),
            "notes": list(data.get("notes") or [])}


def _eni(data: dict[str, Any], where: Path) -> dict[str, Any]:
    rows = data.get("rows") or []
    head = [figure_row("en at 1 kHz", _scaled(data.get("en_at_1khz_v_per_rthz"), _NV), "nV/\u221aHz", digits=3),
            figure_row("in at 1 kHz", _scaled(data.get("in_at_1khz_a_per_rthz"), 1e12), "pA/\u221aHz", digits=3),
            figure_row("Ropt at 1 kHz", data.get("ropt_at_1khz_ohm"), "\u03a9", digits=0),
            figure_row("NFmin at 1 kHz", data.get("nfmin_at_1khz_db"), "dB")]
    f = [r["freq_hz"] for r in rows]
    nf = data.get("nf_vs_rs") or {}
    curves = [_trace(f"{k} Hz", nf.get("rs_ohm_grid", []), c if isinstance(c, list) else c.get("nf_db", []))
              for k, c in (nf.get("curves") or {}).items()]
    def u(key: str) -> list[float | None]:
        return [None if r.get(key) is None else 2.0 * r[key] for r in rows]
    plots = [_plot("en", "Voltage noise en (bars: U, k=2)", "Frequency (Hz)", "V/\u221aHz",
                   [_trace("en", f, [r["en_v_per_rthz"] for r in rows], u=u("en_std_v_per_rthz"))]),
             _plot("in", "Current noise in (bars: U, k=2)", "Frequency (Hz)", "A/\u221aHz",
                   [_trace("in", f, [r["in_a_per_rthz"] for r in rows], u=u("in_std_a_per_rthz"))]),
             _plot("nfrs", "Noise figure against source resistance", "Rs (\u03a9)", "NF (dB)", curves, log_y=False)]
    table = [[_f(p.get("rs_ohm"), "g"), p.get("label", ""), _f(p.get("gain_db"), ".2f")]
             for p in data.get("points") or []]
    return {"headline": head, "plots": plots, "conditions": [],
            "tables": [{"title": "Captures swept", "columns": ["Rs (\u03a9)", "capture", "gain (dB)"], "rows": table}],
            "notes": list(data.get("notes") or [])}


def _budget(data: dict[str, Any], where: Path) -> dict[str, Any]:
    taps = data.get("taps") or []
    head = [figure_row("Measured NF", data.get("measured_noise_figure_db"), "dB"),
            figure_row("Friis-predicted NF", data.get("predicted_noise_figure_db"), "dB")]
    names = [t["name"] for t in taps]
    plots = [_plot("budget", "Share of the input-referred noise by stage", "stage", "share",
                   [_trace("measured", list(range(len(taps))), [t.get("share_measured") for t in taps], kind="bar",
                           labels=names),
                    _trace("predicted", list(range(len(taps))), [t.get("share_predicted") for t in taps],
                           kind="bar", labels=names)], log_x=False, log_y=False)]
    table = [[t["name"], _f(t.get("gain_db"), ".2f"), _f(t.get("input_density_v_per_rthz"), ".3f", _NV),
              _f(t.get("share_measured"), ".1f", 100.0), "yes" if t.get("unexplained") else ""] for t in taps]
    return {"headline": head, "plots": plots,
            "tables": [{"title": "Stages", "columns": ["stage", "gain (dB)", "input density (nV/\u221aHz)",
                                                       "share (%)", "unexplained"], "rows": table}],
            "conditions": _conditions(data, ("band_hz", "rs_ohm", "temperature_k")),
            "notes": list(data.get("notes") or [])}


_KINDS = {"analysis": _analysis, "yfactor": _yfactor, "eni": _eni, "budget": _budget}


def result_view(path: Path, name: str) -> dict[str, Any]:
    """What the desk shows of one results JSON: headline, conditions, tables, plots, notes, downloads."""
    import json

    from ..errors import BenchError
    try:
        data = json.loads(path.read_text())
    except (OSError, ValueError) as err:
        raise BenchError(f"{name} is not a readable results JSON ({err})") from err
    kind = data.get("kind") if isinstance(data, dict) else None
    if kind not in _KINDS:
        raise BenchError(f"{name} is not a benchnf results file (kind {kind!r}); open one written by benchnf")
    view = _KINDS[kind](data, path)
    view.setdefault("exports", [])
    view.update(kind=kind, name=name, downloads=_downloads(path, name))
    view["provenance"] = (data.get("provenance") or {}).get("made_at")
    return view


def _downloads(path: Path, name: str) -> list[str]:
    """The result and the files written beside it that belong to it (CSV, HTML, TXT of its stem; for
    ``results.json`` also the summary and spectra)."""
    folder = Path(name).parent
    stems = {path.stem, *(("summary", "spectra", "report") if path.stem == "results" else ())}
    found = [name]
    for p in sorted(path.parent.iterdir()):
        if p != path and p.suffix.lower() in (".csv", ".html", ".txt") and (p.stem in stems or
                                                                           p.stem.startswith(path.stem)):
            found.append((folder / p.name).as_posix())
    return found
