"""What a user asks of a gain-method analysis, from any front end, resolved into validated inputs.

The command line (``analyze``), ``batch``, a guided plan (``measure``) and the demo all describe their
analysis as a :class:`GainMethodRequest` (paths and stated values) and call :func:`run_gain_method`,
so they resolve files, sidecars, calibration and profile conditions by the same rule
(:mod:`benchnf.measure.inputs`) and give the same figure.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from ..dsp.weighting import DEFAULT_BAND_HZ
from ..errors import ParameterError
from ..io.opener import TraceReading, input_kind, open_input
from .assumptions import temperature_assumed
from .inputs import OTHER_CONDITIONS, agree, distinct_files, open_calibrated

__all__ = ["GainMethodRequest", "resolve_gain_method", "run_gain_method", "request_from_result", "DEFAULT_BAND_HZ"]

DEFAULT_TEMPERATURE_K = 290.0


@dataclass(frozen=True)
class GainMethodRequest:
    """Everything a user can state for a gain-method analysis; None means "not stated here".

    `conditions` are a profile's (``rs_ohm``, ``temperature_k``, ``band_hz``, ``weighting``): they take part
    in the agreement rule like any other place. `calibration` is a path or a Calibration.
    """

    terminated: tuple[Path, ...]
    floor: Path | None = None
    shorted: Path | None = None
    tone: Path | None = None
    tone_input_vrms: float | None = None
    tone_input_channel: int | None = None
    tone_hz: float | None = None
    gain_db: float | None = None
    gain_frequency_hz: float = 1000.0
    response: Path | None = None
    response_channels: tuple[int, int] = (0, 1)
    zin_ohm: float | None = None
    rs_ohm: float | None = None
    temperature_k: float | None = None
    band_hz: tuple[float, float] | None = None
    weighting: str | None = None
    detector: str = "rms"
    channel: int | None = None
    volts_per_fs: float | None = None
    calibration: Any = None
    conditions: Mapping[str, Any] = field(default_factory=dict)
    condition_source: str = "the profile's conditions"
    trace: TraceReading = TraceReading()
    accept_dropouts: bool = False
    segment_length: int | None = None
    mains_hz: float | None = None
    flicker_range_hz: tuple[float, float] | None = None
    flicker_free_slope: bool = False
    stated: Any = None
    reference_output_vrms: float | None = None
    band_above_mains: bool = False
    cross: bool = False
    cross_channels: tuple[int, int] | None = None
    background: Path | None = None
    references: tuple[tuple[int, str], ...] = ()  # (channel, name) of the terminated recording
    cross_calibration: Any = None  # the second cross input's calibration (path or Calibration)
    cross_volts_per_fs: float | None = None


def _calibration(req: GainMethodRequest) -> tuple[Any, str]:
    if req.calibration is None or not isinstance(req.calibration, (str, Path)):
        return req.calibration, "the calibration"
    from ..calibration import Calibration
    return Calibration.load(req.calibration), f"calibration {req.calibration}"


def _opener(req: GainMethodRequest, cal: Any, cal_name: str, tolerance_pct: float):
    def open_one(path: Path | None, condition: str | None, channel: int | None = None) -> Any:
        if path is None:
            return None
        if input_kind(path) == "trace":  # instrument CSV is in volts already: no sound-card calibration applies
            return open_input(path, trace=req.trace)
        return open_calibrated(Path(path), condition=condition, channel=req.channel if channel is None else channel,
                               volts_per_fs=req.volts_per_fs,
                               calibration=cal, calibration_name=cal_name, tolerance_pct=tolerance_pct,
                               accept_dropouts=req.accept_dropouts)
    return open_one


def resolve_gain_method(req: GainMethodRequest) -> dict[str, Any]:
    """Open every capture and resolve every stated value; the keyword arguments of analyze_gain_method."""
    from ..dsp.weighting import Band
    from ..noise.uncertainty import StatedUncertainty
    from .gain import GainSetup
    from .together import captures_together
    if not req.terminated:
        raise ParameterError("give at least one terminated capture")
    req = _cross_channel(req)
    distinct_files(list(req.terminated), "terminated repeats")
    distinct_files([*req.terminated, *(c for c in (req.floor, req.shorted, req.background) if c is not None)],
                   "as terminated, floor, shorted or background", OTHER_CONDITIONS)
    stated = req.stated if req.stated is not None else StatedUncertainty()
    cal, cal_name = _calibration(req)
    open_one = _opener(req, cal, cal_name, stated.calibration_pct)
    runs = [open_one(t, "terminated") for t in req.terminated]
    meta = getattr(runs[0], "metadata", {})
    side = f"the sidecar of {Path(req.terminated[0]).name}"
    cond, where = req.conditions, req.condition_source
    rs = agree("source resistance", [("the stated --rs", req.rs_ohm), (side, meta.get("rs_ohm")),
                                     (where, cond.get("rs_ohm"))], unit=" ohm",
               fix="check the resistor, the sidecar and the profile: they must describe one measurement")
    if rs is None:
        raise ParameterError("give the source resistance with --rs OHM (the terminated capture's sidecar does "
                             "not state it)")
    t_sources = [("the stated --temperature-k", req.temperature_k), (side, meta.get("temperature_k")),
                 (where, cond.get("temperature_k"))]
    temperature = agree("source temperature", t_sources, default=DEFAULT_TEMPERATURE_K, unit=" K")
    assumptions = [] if any(v is not None for _, v in t_sources) else [temperature_assumed(DEFAULT_TEMPERATURE_K)]
    band = agree("band", [("the stated band", req.band_hz), (where, cond.get("band_hz"))], default=DEFAULT_BAND_HZ,
                 unit=" Hz")
    weighting = agree("weighting", [("the stated --weighting", req.weighting), (where, cond.get("weighting"))],
                      default="none")
    tone = open_one(req.tone, "tone")
    vin = req.tone_input_vrms
    if tone is not None and req.tone_input_channel is None:
        vin = agree("tone level at the source", [("--tone-input-vrms", req.tone_input_vrms),
                                                 (f"the sidecar of {Path(req.tone).name}",  # type: ignore[arg-type]
                                                  tone.metadata.get("tone_input_vrms"))], rel_tol=1e-6, unit=" V")
    response = None
    if req.response is not None:
        response = open_input(req.response, channel=req.response_channels[1])
    gain = GainSetup(tone=tone, tone_input_vrms=vin, tone_input_channel=req.tone_input_channel,
                     tone_frequency_hz=req.tone_hz, gain_db=req.gain_db, gain_frequency_hz=req.gain_frequency_hz,
                     response=response, response_channels=(req.response_channels[0], req.response_channels[1]),
                     zin_ohm=req.zin_ohm)
    if req.flicker_range_hz is not None and req.flicker_range_hz[0] >= req.flicker_range_hz[1]:
        raise ParameterError(f"--flicker-range {req.flicker_range_hz[0]:g} {req.flicker_range_hz[1]:g}: the low "
                             f"edge must be below the high edge")
    alike, steps = captures_together({"terminated": runs[0], **{f"repeat {i}": r for i, r in enumerate(runs[1:], 2)},
                                      "floor": open_one(req.floor, "floor"), "shorted": open_one(req.shorted, "shorted"),
                                      "tone": tone})
    runs = [alike["terminated"], *(alike[f"repeat {i}"] for i in range(2, len(runs) + 1))]
    gain = replace(gain, tone=alike["tone"])
    assumptions += steps
    return dict(terminated=runs, floor=alike["floor"], shorted=alike["shorted"],
                gain=gain, rs_ohm=float(rs), temperature_k=float(temperature), band=Band(*band), weighting=weighting,
                detector=req.detector, segment_length=req.segment_length, mains_hz=req.mains_hz,
                flicker_range_hz=req.flicker_range_hz, flicker_free_slope=req.flicker_free_slope, stated=stated,
                reference_output_vrms=req.reference_output_vrms, band_above_mains=req.band_above_mains,
                assumptions=tuple(assumptions), cross=_cross_setup(req, open_one),
                references=_references(req))


def _references(req: GainMethodRequest) -> tuple[Any, ...]:
    """The reference channels of the terminated recording (their scale does not matter: coherence is a ratio)."""
    if not req.references:
        return ()
    from .attribution import Reference
    names = [name for _c, name in req.references]
    if len(set(names)) != len(names) or len({c for c, _n in req.references}) != len(names):
        raise ParameterError("each --reference-channel needs its own channel and its own name")
    if len(req.terminated) != 1:
        raise ParameterError("--reference-channel takes one terminated recording holding the references too")
    return tuple(Reference(open_input(req.terminated[0], channel=c, accept_dropouts=req.accept_dropouts), name)
                 for c, name in req.references)


def _sidecar_states(req: GainMethodRequest, channel: int) -> bool:
    """Whether the terminated recording's sidecar states this input's own calibration (per channel)."""
    from ..io.sidecar import read_sidecar
    per = read_sidecar(Path(req.terminated[0])).get("channel_volts_per_fs") or {}
    return str(channel) in per


def _cross_channel(req: GainMethodRequest) -> GainMethodRequest:
    """With --cross the terminated (and tone) captures are read on the first of the two channels."""
    if not req.cross:
        if (req.cross_channels is not None or req.background is not None or req.cross_calibration is not None
                or req.cross_volts_per_fs is not None):
            raise ParameterError("--cross-channels, --background and the second input's calibration belong to the "
                                 "cross-spectrum estimate: add --cross")
        return req
    a, b = req.cross_channels if req.cross_channels is not None else (req.channel or 0, 1 if req.channel != 1 else 0)
    if req.channel is not None and req.channel != a:
        raise ParameterError(f"--channel {req.channel} and --cross-channels {a},{b} disagree: the terminated and tone "
                             f"captures are read on the first cross channel; give one of them")
    return replace(req, channel=a, cross_channels=(a, b))


def _cross_setup(req: GainMethodRequest, open_one: Callable[..., Any]) -> Any:
    """The second channel of the terminated recording and the background's two channels."""
    if not req.cross:
        return None
    from .cross_estimate import CrossSetup
    a, b = req.cross_channels  # type: ignore[misc]
    if len(req.terminated) != 1:
        raise ParameterError("--cross takes one terminated recording (both channels on the DUT output): record one "
                             "longer capture rather than repeats")
    if req.cross_calibration is None and req.cross_volts_per_fs is None and not _sidecar_states(req, b):
        raise ParameterError("--cross needs each input's calibration: calibrate the second input too and give it "
                             "with --cross-calibration CAL.json, or state --cross-volts-per-fs V (or record with "
                             "--input-calibration, so that the sidecar states each input's)")
    second = replace(req, calibration=req.cross_calibration, volts_per_fs=req.cross_volts_per_fs)
    cal_b, name_b = _calibration(second)
    open_b = _opener(second, cal_b, name_b.replace("calibration", "second input's calibration", 1), 1.0)
    background = ((open_one(req.background, "floor", a), open_b(req.background, "floor", b))  # inputs terminated
                  if req.background is not None else None)
    shorted = open_b(req.shorted, "shorted", b) if req.shorted is not None else None
    return CrossSetup(other=open_b(req.terminated[0], "terminated", b), background=background,
                      shorted_other=shorted)


def run_gain_method(req: GainMethodRequest, *, progress: Any = None) -> Any:
    """Resolve the request and run the gain-method analysis; the frozen AnalysisResult."""
    from .gain_method import analyze_gain_method
    return analyze_gain_method(**resolve_gain_method(req), progress=progress)


def request_from_result(result: Any, *, locate: Callable[[str, str], Path]) -> GainMethodRequest:
    """The request that re-runs a gain-method analysis from its typed result (for its spectra).

    `locate(role, name)` turns a capture's name as the result states it into a path (the desk resolves it
    relative to the results file and inside its folder, and refuses anything else); it raises BenchError
    for a capture that is not there. The conditions are the result's own: volts per full scale, source
    resistance, temperature, band, weighting, detector, segment length.
    """
    from ..errors import BenchError
    named = result.files.paths()
    if "terminated" not in named:
        raise BenchError("the results name no terminated capture")

    def one(role: str) -> Path | None:
        return locate(role, named[role][0]) if role in named else None
    cross = getattr(result, "cross", None)
    return GainMethodRequest(
        cross=cross is not None, cross_channels=tuple(cross.channels) if cross is not None else None,
        references=tuple((a.channel, a.reference) for a in (result.attribution or ())),
        # Without a tone capture the gain was stated: state it again, where it held.
        gain_db=result.gain_db if "tone" not in named else None, gain_frequency_hz=result.gain_frequency_hz,
        cross_volts_per_fs=cross.second_volts_per_fs if cross is not None else None,
        background=one("background"),
        terminated=tuple(locate("terminated", n) for n in named["terminated"]), floor=one("floor"),
        shorted=one("shorted"), tone=one("tone"), response=one("response"), volts_per_fs=result.volts_per_fs,
        rs_ohm=result.rs_ohm, temperature_k=result.temperature_k, band_hz=tuple(result.band_hz),
        weighting=result.weighting, detector=result.detector, segment_length=result.segment_length)
