"""Gain-method analyses for the desk: a folder of captures analysed (and the result kept), a result's spectra
found again for its plots and downloads. Both through :mod:`benchnf.measure.requests`; files through the
desk's writer; every capture a result names resolved relative to the results file and inside the folder."""

from __future__ import annotations

from collections import OrderedDict
from pathlib import Path
from typing import Any

from ..errors import BenchError
from .folder import DeskFolder

__all__ = ["with_spectra", "export", "analyse_folder", "SETTINGS", "keep"]

_CACHE: OrderedDict[tuple[str, int, int], Any] = OrderedDict()
_CACHE_SIZE = 4


def _key(path: Path) -> tuple[str, int, int]:
    st = path.stat()
    return str(path.resolve()), st.st_mtime_ns, st.st_size


def keep(path: Path, result: Any) -> None:
    """Remember a result the desk computed and wrote to `path`: its spectra stay at hand, no re-run needed."""
    _CACHE[_key(path)] = result
    _CACHE.move_to_end(_key(path))
    while len(_CACHE) > _CACHE_SIZE:
        _CACHE.popitem(last=False)


def with_spectra(path: Path, result: Any, folder: DeskFolder) -> Any:
    """The gain-method result of `path` with its spectra: the one the desk computed, else a re-run of its
    request on the captures it names (each relative to the results file, inside the desk's folder).

    Raises BenchError when a capture is missing or outside the folder, or the re-run does not reproduce the
    stored EIN to 0.001 dB (the captures changed since).
    """
    key = _key(path)
    if key in _CACHE:
        _CACHE.move_to_end(key)
        return _CACHE[key]
    from ..measure.requests import request_from_result, run_gain_method

    def locate(role: str, name: str) -> Path:
        found = folder.resolve_named(name, base=path.parent)
        if not found.is_file():
            raise BenchError(f"the {role} capture {name!r} named in the results is not in the desk's folder")
        return found
    again = run_gain_method(request_from_result(result, locate=locate))
    if abs(result.ein_dbu - again.ein_dbu) > 1e-3:
        raise BenchError(f"re-running the analysis gave EIN {again.ein_dbu:.3f} dBu, not the stored "
                         f"{result.ein_dbu:.3f} dBu (the captures changed since?)")
    again = again.with_provenance(result.provenance)
    keep(path, again)
    return again


def export(path: Path, form: str, folder: DeskFolder) -> tuple[str, bytes]:
    """(file name, content) of a result's HTML report (any kind) or a gain-method result's spectra CSV."""
    from .. import registry
    from ..registry import read_result
    result = read_result(path)
    if result.KIND == "analysis":
        try:
            result = with_spectra(path, result, folder)
        except BenchError:
            if form == "csv":
                raise
    if form == "csv":
        if result.KIND != "analysis":
            raise BenchError(f"{path.name}: a spectra CSV is made for gain-method results only")
        from ..report.spectra_csv import spectra_csv
        return f"{path.stem}_spectra.csv", spectra_csv(result).encode()
    if form == "html":
        return f"{path.stem}_report.html", _report(registry.measurement(result.KIND).part("present")(result), result)
    raise BenchError(f"form {form!r}: csv or html")


def _report(view: Any, result: Any) -> bytes:
    import io

    from ..report.html import view_html
    from ..report.render_png import figures
    pngs = []
    for name, fig in figures(view):
        buf = io.BytesIO()
        fig.savefig(buf, format="png", dpi=100)
        pngs.append((name, buf.getvalue()))
    return view_html(view, figures=pngs, provenance=result.provenance).encode()


# What the page may state for an analysis of a folder, and the range of each number.
SETTINGS = {"volts_per_fs": (1e-6, 1e4), "rs_ohm": (0.0, 1e9), "temperature_k": (1.0, 1e3),
            "tone_input_vrms": (1e-9, 1e3)}


def analyse_folder(captures: Path, *, writer: Any, calibration: Path | None, numbers: dict[str, float | None],
                   band_hz: tuple[float, float] | None, weighting: str | None) -> Path:
    """Analyse a folder of captures (terminated and tone, optional floor and shorted) as ``analyze`` would;
    write results.json, summary.txt, spectra.csv and report.html into a fresh ``analysis`` folder beside
    them, from the result computed here (kept for the page's plots). Returns the results file."""
    from ..check.batch import role_files
    from ..measure.provenance import provenance
    from ..measure.requests import GainMethodRequest, run_gain_method
    from ..report.present_analysis import present
    from ..report.render_text import render_text
    from ..report.spectra_csv import spectra_csv
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
    result = result.with_provenance(provenance(read, root=out))
    path = writer.json(out / "results.json", result.to_dict())
    view = present(result)
    writer.text(out / "summary.txt", render_text(view))
    writer.text(out / "spectra.csv", spectra_csv(result))
    writer.bytes(out / "report.html", _report(view, result))
    keep(path, result)
    return path
