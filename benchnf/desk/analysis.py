"""Gain-method analyses for the desk: re-run from a results JSON (for its spectra and downloads), or run on
a folder of captures. Both through :mod:`benchnf.measure.requests`; files through the desk's writer."""

from __future__ import annotations

from collections import OrderedDict
from pathlib import Path
from typing import Any

from ..errors import BenchError

__all__ = ["rerun", "export", "analyse_folder", "SETTINGS"]

_CACHE: OrderedDict[tuple[str, int, int], Any] = OrderedDict()
_CACHE_SIZE = 4


def rerun(path: Path, data: dict[str, Any]) -> Any:
    """The AnalysisResult behind a gain-method results JSON, re-run from the captures it names.

    Raises BenchError when a capture is missing or the re-run does not reproduce the stored EIN to
    0.001 dB (the captures changed since). Kept for the last few files, keyed by path, size and time.
    """
    st = path.stat()
    key = (str(path), st.st_mtime_ns, st.st_size)
    if key in _CACHE:
        _CACHE.move_to_end(key)
        return _CACHE[key]
    from ..measure.requests import request_from_results, run_gain_method
    result = run_gain_method(request_from_results(data))
    stored, again = data.get("ein_dbu"), result.ein_dbu
    if stored is None or again is None or abs(stored - again) > 1e-3:
        raise BenchError(f"re-running the analysis gave EIN {again} dBu, not the stored {stored} dBu (the captures "
                         f"changed since?)")
    _CACHE[key] = result
    while len(_CACHE) > _CACHE_SIZE:
        _CACHE.popitem(last=False)
    return result


def export(path: Path, form: str) -> tuple[str, bytes]:
    """(file name, content) of a gain-method result's spectra CSV or HTML report, made on request."""
    import json
    data = json.loads(path.read_text())
    if data.get("kind") != "analysis":
        raise BenchError(f"{path.name}: spectra and reports are made for gain-method results only")
    result = rerun(path, data)
    if form == "csv":
        from ..report.spectra_csv import spectra_csv
        return f"{path.stem}_spectra.csv", spectra_csv(result).encode()
    if form == "html":
        from ..report.html import analysis_report_html
        from ..report.plots import analysis_figures
        from ..report.text import format_summary
        figures = [(name, _png(fig)) for name, fig in analysis_figures(result)]
        page = analysis_report_html(title=f"benchnf analysis: {path.name}", summary=format_summary(result),
                                    figures=figures, inputs=(data.get("provenance") or {}).get("inputs"))
        return f"{path.stem}_report.html", page.encode()
    raise BenchError(f"form {form!r}: csv or html")


def _png(fig: Any) -> bytes:
    import io
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=100)
    return buf.getvalue()


# What the page may state for an analysis of a folder, and the range of each number.
SETTINGS = {"volts_per_fs": (1e-6, 1e4), "rs_ohm": (0.0, 1e9), "temperature_k": (1.0, 1e3),
            "tone_input_vrms": (1e-9, 1e3)}


def analyse_folder(captures: Path, *, writer: Any, calibration: Path | None, numbers: dict[str, float | None],
                   band_hz: tuple[float, float] | None, weighting: str | None, root: Path) -> Path:
    """Analyse a folder of captures (terminated and tone, optional floor and shorted) as ``analyze`` would;
    write results.json, summary.txt, spectra.csv and report.html into a fresh ``analysis`` folder beside
    them. Returns the results file."""
    from ..check.batch import role_files
    from ..measure.provenance import provenance
    from ..measure.requests import GainMethodRequest, run_gain_method
    from ..report.text import format_summary
    roles = role_files(captures)
    missing = [r for r in ("terminated", "tone") if r not in roles]
    if missing:
        raise BenchError(f"{captures.name} has no {' and no '.join(missing)} capture (by sidecar condition or name)")
    result = run_gain_method(GainMethodRequest(
        terminated=(roles["terminated"],), floor=roles.get("floor"), shorted=roles.get("shorted"), tone=roles["tone"],
        calibration=calibration, band_hz=band_hz, weighting=weighting, volts_per_fs=numbers.get("volts_per_fs"),
        rs_ohm=numbers.get("rs_ohm"), temperature_k=numbers.get("temperature_k"),
        tone_input_vrms=numbers.get("tone_input_vrms")))
    out = writer.fresh_folder(captures / "analysis")
    read = [*roles.values(), *([calibration] if calibration else [])]
    results = writer.json(out / "results.json", {**result.to_dict(), "provenance": provenance(read, root=root)})
    writer.text(out / "summary.txt", format_summary(result))
    for form, name in (("csv", "spectra.csv"), ("html", "report.html")):
        writer.bytes(out / name, export(results, form)[1])
    return results
