"""The desk's station study: a gauge R&R of a recorded figure, as `benchnf records grr` presents it."""

from __future__ import annotations

from typing import Any

__all__ = ["gauge_study", "recorded_figures"]


def gauge_study(records_url: str | None, figure: str, by: str) -> dict[str, Any]:
    """A gauge R&R study of a recorded figure, as the view `benchnf records grr` prints."""
    from ..errors import ParameterError
    if not records_url:
        raise ParameterError("the desk has no records store: start it with --records (or BENCHNF_RECORDS)")
    if by not in ("station", "operator"):
        raise ParameterError(f"by {by!r}: station or operator")
    from ..records import connect
    from ..records.grr import gauge_rr, unit_means
    from ..report.present_grr import present_grr
    store = connect(records_url, create=False)
    try:
        rows = store.measured_values(figure, latest_per_serial=False)
        names = store.limit_names()
    finally:
        store.close()
    if not rows:
        raise ParameterError(f"no recorded values of {figure!r}: recorded are {', '.join(names) or 'none'}")
    data = [(r["serial"], r[by] or "-", r["measured"]) for r in rows]
    study = gauge_rr(data, figure_name=figure, by=by)
    return {**present_grr(study, unit_means(data, study)).to_data(), "figures": names}


def recorded_figures(records_url: str | None) -> list[str]:
    """The names of the figures the records hold (empty without a store)."""
    if not records_url:
        return []
    from ..records import connect
    store = connect(records_url, create=False)
    try:
        return store.limit_names()
    finally:
        store.close()
