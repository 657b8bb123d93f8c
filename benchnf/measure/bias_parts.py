"""Candidate input devices side by side: a small TOML the user writes (docs/bias.md; benchnf ships no
catalogue of any maker's parts), each part at its best current for the source, ranked by that NF."""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import ParameterError
from ..noise.devices import DeviceTable, device_from_table
from .bias_result import BiasResult, Curve, PartRow

if TYPE_CHECKING:
    from .bias import BiasRequest

__all__ = ["PartsFile", "load_parts", "rank_parts"]


@dataclass(frozen=True)
class _PartTable(DeviceTable):
    name: str | None = None
    notes: str | None = None


@dataclass(frozen=True)
class PartsFile:
    """The shape of a candidate-parts file: ``[[part]]`` tables with a name, a kind and the model's values."""

    part: tuple[_PartTable, ...]
    notes: str | None = None


def load_parts(path: Path, *, count: int, temperature_k: float) -> list[tuple[str, Any, bool]]:
    """(name, device, current stated) per part; the device at a placeholder current where none is stated."""
    from ..codec import check_shape
    from ..io.toml_file import read_toml
    where = f"parts file {path}"
    shape = check_shape(PartsFile, read_toml(path, "parts file"), where)
    if not shape.part:
        raise ParameterError(f"{where} has no [[part]] tables")
    out = []
    for i, table in enumerate(shape.part, 1):
        if not table.name:
            raise ParameterError(f"{where}, part {i}: give it a name")
        current = "ic_a" if table.kind == "bjt" else "id_a"
        given = getattr(table, current) is not None
        if not given:
            placeholder = 1e-3 if table.kind == "bjt" or table.idss_a is None else table.idss_a / 4
            table = replace(table, **{current: placeholder})
        try:
            out.append((table.name, device_from_table(table, temperature_k=temperature_k, count=count), given))
        except ParameterError as err:
            raise ParameterError(f"{where}, part {i} ({table.name}): {err}") from None
    return out


def rank_parts(req: "BiasRequest", common: dict[str, Any]) -> BiasResult:
    """Each part at its best current for the source (and at its stated current), best first, with each
    part's NF against current for the plot."""
    from ..noise.devices import device_current
    from ..quantity import Quantity
    from .bias import current_range, figure_at, optimum, source_of
    if req.parts is None:
        raise ParameterError("bias parts needs the parts file (PARTS.toml)")
    source = source_of(req)
    rows, curves = [], []
    for name, device, given in load_parts(req.parts, count=req.count, temperature_k=req.temperature_k):
        best = optimum(device, source, req)
        at_best = device.at_current(best.ic_a).noise(req.frequency_hz)
        now = device_current(device)
        rows.append(PartRow(name, device.kind, 0, best.ic_a, best.noise_figure_db, best.ic_range_a,
                            float(at_best.en[0]), float(at_best.in_[0]), now if given else None,
                            figure_at(device, source, req.frequency_hz) if given else None))
        currents = np.geomspace(*current_range(device, req.current_range_a), 61)
        curves.append(Curve(name, tuple(currents.tolist()),
                            tuple(figure_at(device.at_current(float(i)), source, req.frequency_hz) for i in currents)))
    order = sorted(range(len(rows)), key=lambda k: rows[k].best_noise_figure_db)
    ranked = tuple(PartRow(**{**rows[k].__dict__, "rank": r}) for r, k in enumerate(order, 1))
    return BiasResult(**common, device=None, en_v_per_rthz=None, in_a_per_rthz=None, correlation=None, ropt_ohm=None,
                      nfmin_db=None, noise_figure_db=None, band_noise_figure_db=None, ein_dbu=None,
                      nf_vs_current=tuple(curves[k] for k in order), parts=ranked,
                      notes=(f"each part at its best current for Rs {req.rs_ohm:g} ohm at {req.frequency_hz:g} Hz, "
                             f"searched from {Quantity(req.current_range_a[0], 'A').text()} to "
                             f"{Quantity(req.current_range_a[1], 'A').text()}; parts as the "
                             f"file states them (benchnf ships no catalogue)",))
