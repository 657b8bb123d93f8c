"""Results as the desk shows them: the one view of each result (:mod:`benchnf.report`), as JSON for the page.

A results file is read as its typed result (validated by its schema, :func:`benchnf.registry.read_result`) and
presented by its measurement's registered presentation, so the desk shows the same figures, units, digits
and U as the command line. A gain-method result's spectra come from the result the desk computed itself
(kept in memory), else from re-running its request on the captures it names: each name resolved relative to
the results file and inside the desk's folder (anything else is refused and the page says why), accepted
only when the re-run reproduces the stored EIN.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from .folder import DeskFolder

__all__ = ["result_view"]


def _present(result: Any, kind: str, *, spectra_of: Any = None) -> dict[str, Any]:
    from .. import registry
    view = registry.measurement(kind).part("present")(spectra_of if spectra_of is not None else result)
    return view.to_data()


def result_view(path: Path, name: str, folder: DeskFolder) -> dict[str, Any]:
    """What the desk shows of one results file: the view, its downloads, exports and where it came from."""
    from ..registry import read_result
    result = read_result(path)
    kind = result.KIND
    out: dict[str, Any]
    exports: list[str] = []
    if kind == "analysis":
        from ..errors import BenchError
        from .analysis import with_spectra
        try:
            out = _present(result, kind, spectra_of=with_spectra(path, result, folder))
            exports = ["csv", "html"]
        except (BenchError, OSError, ValueError) as err:
            out = _present(result, kind)
            out["notes"].append(f"spectra not shown: {err}")
            exports = ["html"]
    else:
        out = _present(result, kind)
        exports = ["html"]
    out.update(kind=kind, name=name, downloads=_downloads(path, name), exports=exports,
               provenance=result.provenance.created_utc if result.provenance is not None else None)
    return out


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
