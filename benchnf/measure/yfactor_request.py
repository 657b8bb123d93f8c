"""What a user asks of a Y-factor measurement, resolved: hot/cold states opened the same way (SigMF IQ,
two-channel audio as I/Q, or one real audio channel), the source from an ENR or two temperatures, and
the passive stages around the DUT. Every front end builds a :class:`YFactorRequest` and calls :func:`resolve_yfactor`."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import ParameterError

__all__ = ["YFactorRequest", "hot_cold_source", "passive_stages", "open_state", "resolve_yfactor", "run_yfactor"]

_ZERO_C_K = 273.15


@dataclass(frozen=True)
class YFactorRequest:
    """Paths and stated values of a Y-factor measurement; None means not stated."""

    hot: tuple[Path, ...] = ()
    cold: tuple[Path, ...] = ()
    annotated: Path | None = None
    switched: Path | None = None  # one recording with the source switched on and off
    switch_block_s: float | None = None
    switch_guard_s: float = 0.05
    switch_shortest_s: float = 0.2
    cal_hot: Path | None = None
    cal_cold: Path | None = None
    floor: Path | None = None
    enr_db: float | None = None
    enr_table: Path | None = None
    t_hot_k: float | None = None
    t_hot_c: float | None = None
    t_cold_k: float | None = None
    t_cold_c: float | None = None
    enr_uncertainty_db: float | None = None
    temperature_uncertainty_k: float = 0.5
    source_side: tuple[tuple[float, float], ...] = ()  # passive stages (dB, K) source -> DUT, in order
    receiver_side: tuple[tuple[float, float], ...] = ()  # passive stages (dB, K) DUT -> receiver, in order
    chain: Path | None = None  # a chain file: passive stages around one active stage (the DUT)
    band_hz: tuple[float, float] | None = None
    spot_hz: tuple[float, ...] = ()
    rows: int = 16
    segment_length: int | None = None
    iq: bool = False
    centre_hz: float | None = None
    channel: int = 0
    dc_exclude_hz: float | None = None
    edge_fraction: float = 0.1


def open_state(path: Path | None, *, iq: bool = False, centre_hz: float | None = None, channel: int = 0) -> Any:
    """A hot/cold capture: SigMF IQ, two-channel audio as I/Q (`iq`), or a real audio channel."""
    if path is None:
        return None
    from ..io.opener import input_kind, open_input
    if iq and input_kind(path) == "audio" and centre_hz is None:
        raise ParameterError("--iq needs the receiver's centre frequency: give --centre-hz F")
    return open_input(path, channel=channel, iq_centre_hz=centre_hz if iq else None)


def _kelvin(k: float | None, c: float | None) -> float | None:
    return k if k is not None else (c + _ZERO_C_K if c is not None else None)


def _states(req: YFactorRequest) -> tuple[list[Any], list[Any], Any]:
    """The hot and cold captures, paired, and the switching they were found by (None unless --switched)."""
    def one(p: Path) -> Any:
        return open_state(p, iq=req.iq, centre_hz=req.centre_hz, channel=req.channel)
    given = [n for n, v in (("--hot/--cold", req.hot or req.cold), ("--annotated", req.annotated),
                            ("--switched", req.switched)) if v]
    if len(given) > 1:
        raise ParameterError(f"give the states one way: {' or '.join(given)}, not both")
    if req.switched is not None:
        from .yfactor_switched import SwitchSettings, cut_states
        return cut_states(one(req.switched), SwitchSettings(req.switch_block_s, req.switch_guard_s,
                                                            req.switch_shortest_s))
    if req.annotated is not None:
        rec = one(req.annotated)
        if not getattr(rec, "segments", ()):
            raise ParameterError(f"{req.annotated} has no annotations labelled hot and cold")
        return rec.segment("hot"), rec.segment("cold"), None
    if not req.hot or not req.cold:
        raise ParameterError("give --hot and --cold captures (or one --annotated or --switched recording)")
    return [one(p) for p in req.hot], [one(p) for p in req.cold], None


def hot_cold_source(req: YFactorRequest) -> Any:
    """The noise source the request states: an ENR (constant or a table) or two temperatures."""
    from ..noise.yfactor import EnrTable, load_enr_table
    from .yfactor import HotColdSource
    enr = EnrTable.constant(req.enr_db) if req.enr_db is not None else (
        load_enr_table(req.enr_table) if req.enr_table is not None else None)
    return HotColdSource(enr=enr, t_hot_k=_kelvin(req.t_hot_k, req.t_hot_c), t_cold_k=_kelvin(req.t_cold_k, req.t_cold_c),
                         enr_uncertainty_db=req.enr_uncertainty_db,
                         temperature_uncertainty_k=req.temperature_uncertainty_k)


def passive_stages(req: YFactorRequest) -> tuple[Any, ...]:
    """The passive stages around the DUT, from the chain file or the --source-side/--receiver-side values."""
    from .yfactor_passive import passives_from_chain, passives_from_options
    if req.chain is not None:
        if req.source_side or req.receiver_side:
            raise ParameterError("give the passive stages one way: --chain FILE, or --source-side/--receiver-side")
        return passives_from_chain(req.chain)
    return passives_from_options(req.source_side, req.receiver_side)


def resolve_yfactor(req: YFactorRequest) -> dict[str, Any]:
    """Open every state and build the source and losses; the keyword arguments of analyze_yfactor."""
    from ..dsp.weighting import Band
    hot, cold, switching = _states(req)
    source = hot_cold_source(req)
    enr = source.enr

    def state(p: Path | None) -> Any:
        return open_state(p, iq=req.iq, centre_hz=req.centre_hz, channel=req.channel)
    from .assumptions import COLD_ASSUMED
    cold_assumed = enr is not None and not enr.cold_stated and source.t_cold_k is None
    return dict(assumptions=(COLD_ASSUMED,) if cold_assumed else (), hot=hot, cold=cold, source=source,
                switching=switching,
                cal_hot=state(req.cal_hot), cal_cold=state(req.cal_cold),
                floor=state(req.floor), band=Band(*req.band_hz) if req.band_hz else None,
                segment_length=req.segment_length, n_rows=req.rows, spot_hz=req.spot_hz,
                passives=passive_stages(req),
                dc_exclude_hz=req.dc_exclude_hz, edge_fraction=req.edge_fraction)


def run_yfactor(req: YFactorRequest, *, progress: Any = None) -> Any:
    """Resolve the request and run the Y-factor analysis; the frozen YFactorResult."""
    from .yfactor import analyze_yfactor
    return analyze_yfactor(**resolve_yfactor(req), progress=progress)
