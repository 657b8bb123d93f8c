"""What a user asks of an en/in sweep or a measured stage budget, resolved by the one rule.

Each capture is opened with its calibration resolved (:func:`~benchnf.measure.inputs.open_calibrated`); the
gain of each comes from its tone capture (or a stated gain); source resistance and temperature come from
the user and the sidecars, which must agree (:func:`~benchnf.measure.inputs.agree`).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import ParameterError
from .assumptions import temperature_assumed
from .inputs import agree, open_calibrated
from .requests import DEFAULT_TEMPERATURE_K

__all__ = ["CaptureOptions", "SweepRequest", "BudgetRequest", "run_en_in", "run_budget"]


@dataclass(frozen=True)
class CaptureOptions:
    """How every capture of a request is opened: channel, calibration, tolerance."""

    channel: int | None = None
    volts_per_fs: float | None = None
    calibration: Any = None
    tolerance_pct: float = 1.0

    def open(self, path: Path | None, condition: str | None = None) -> Any:
        if path is None:
            return None
        cal, name = self.calibration, "the calibration"
        if isinstance(cal, (str, Path)):
            from ..calibration import Calibration
            cal, name = Calibration.load(cal), f"calibration {cal}"
        return open_calibrated(Path(path), condition=condition, channel=self.channel, volts_per_fs=self.volts_per_fs,
                               calibration=cal, calibration_name=name, tolerance_pct=self.tolerance_pct)


def _gain(opts: CaptureOptions, tone: Path | None, *, tone_input_vrms: float | None, gain_db: float | None,
          zin_ohm: float | None = None, tone_hz: float | None = None) -> Any:
    """A capture's gain: from its tone capture (level from the user or the tone's sidecar, which agree), or stated."""
    from .gain import GainSetup
    if tone is not None:
        cap = opts.open(tone, "tone")
        vin = agree("tone level at the source", [("--tone-input-vrms", tone_input_vrms),
                                                 (f"the sidecar of {Path(tone).name}",
                                                  cap.metadata.get("tone_input_vrms"))], rel_tol=1e-6, unit=" V")
        return GainSetup(tone=cap, tone_input_vrms=vin, tone_frequency_hz=tone_hz, zin_ohm=zin_ohm)
    if gain_db is None:
        raise ParameterError("give the gain: --tone FILE with --tone-input-vrms, or --gain-db G")
    return GainSetup(gain_db=gain_db, zin_ohm=zin_ohm)


@dataclass(frozen=True)
class SweepRequest:
    """Captures at several source resistances: (file, Rs in ohm, its own tone file or None)."""

    captures: tuple[tuple[Path, float, Path | None], ...]
    tone: Path | None = None
    gain_db: float | None = None
    tone_input_vrms: float | None = None
    zin_ohm: float | None = None
    temperature_k: float | None = None
    floor: Path | None = None
    band_hz: tuple[float, float] = (20.0, 20_000.0)
    segment_length: int | None = None
    options: CaptureOptions = CaptureOptions()


def _sweep_temperatures(caps: list[Any], rs: list[float], stated_k: float | None, names: list[str]) -> list[float]:
    """Each capture's resistor temperature: the sidecars must agree among themselves and with the user.

    A shorted input (Rs = 0) makes no thermal noise, so its temperature does not matter: it takes the
    sweep's common one and is left out of the checks.
    """
    temps = [getattr(c, "metadata", {}).get("temperature_k") if r > 0 else None for c, r in zip(caps, rs)]
    if stated_k is None and len({t for t in temps if t is not None}) == 1:
        common = next(t for t in temps if t is not None)
        temps = [common if r == 0 else t for t, r in zip(temps, rs)]
    stated = {t for t in temps if t is not None}
    if stated_k is not None and len(stated) > 1:
        raise ParameterError("the sweep's sidecars state different temperatures; --temperature-k would hide "
                             "that: remove it, or correct the sidecars")
    if stated_k is None and len(stated) > 1 and None in temps:
        raise ParameterError("some captures of the sweep state their temperature and others do not: state "
                             "it for every capture (sidecar temperature_k) or give --temperature-k")
    return [float(agree("source temperature", [("--temperature-k", stated_k), (f"the sidecar of {n}", t)],
                        default=DEFAULT_TEMPERATURE_K, unit=" K")) for t, n in zip(temps, names)]


def run_en_in(req: SweepRequest, *, progress: Any = None) -> Any:
    """Resolve the sweep and extract en, in (and their correlation), Ropt and NFmin."""
    from ..dsp.weighting import Band
    from .stages import extract_en_in
    caps = [req.options.open(path) for path, _rs, _tone in req.captures]
    temps = _sweep_temperatures(caps, [rs for _p, rs, _t in req.captures], req.temperature_k,
                                [Path(p).name for p, _r, _t in req.captures])
    sweep = [(cap, rs, t, _gain(req.options, tone or req.tone, tone_input_vrms=req.tone_input_vrms,
                                gain_db=req.gain_db, zin_ohm=req.zin_ohm))
             for cap, (_p, rs, tone), t in zip(caps, req.captures, temps)]
    stated = req.temperature_k is not None or any(getattr(c, "metadata", {}).get("temperature_k") is not None
                                                  for c in caps)
    return extract_en_in(sweep=sweep, floor=req.options.open(req.floor, "floor"), band=Band(*req.band_hz),
                         segment_length=req.segment_length,
                         assumptions=() if stated else (temperature_assumed(DEFAULT_TEMPERATURE_K),))


@dataclass(frozen=True)
class BudgetRequest:
    """Noise and tone captures at each stage's output, in chain order, with the chain's part data."""

    taps: tuple[tuple[Path, Path], ...]
    chain: Path | None = None
    tone_input_vrms: float | None = None
    gain_db: float | None = None
    rs_ohm: float | None = None
    temperature_k: float | None = None
    floor: Path | None = None
    band_hz: tuple[float, float] = (400.0, 20_000.0)
    segment_length: int | None = None
    options: CaptureOptions = CaptureOptions()


def run_budget(req: BudgetRequest, *, progress: Any = None) -> Any:
    """Resolve the taps and measure each stage's share against the chain's prediction."""
    from ..dsp.weighting import Band
    from ..noise.cascade import load_chain
    from .stages import measured_budget
    chain = load_chain(req.chain) if req.chain else None
    taps = []
    for i, (noise, tone) in enumerate(req.taps, 1):
        name = chain.stages[i - 1].name if chain is not None and i <= len(chain.stages) else f"tap {i}"
        taps.append((name, req.options.open(noise),
                     _gain(req.options, tone, tone_input_vrms=req.tone_input_vrms, gain_db=req.gain_db)))
    meta = taps[0][1].metadata
    side = f"the sidecar of {Path(req.taps[0][0]).name}"
    in_chain = f"the chain file {Path(req.chain).name}" if req.chain else "the chain file"
    rs = agree("source resistance", [("--rs", req.rs_ohm), (side, meta.get("rs_ohm")),
                                     (in_chain, chain.source_ohm if chain is not None else None)], unit=" ohm")
    if rs is None or not rs > 0:
        raise ParameterError("give the source resistance the chain's input is terminated in: --rs OHM")
    chain_t = chain.temperature_k if chain is not None and chain.temperature_stated else None
    temperature = agree("source temperature", [("--temperature-k", req.temperature_k),
                                               (side, meta.get("temperature_k")), (in_chain, chain_t)],
                        default=DEFAULT_TEMPERATURE_K, unit=" K")
    stated = req.temperature_k is not None or meta.get("temperature_k") is not None or chain_t is not None
    return measured_budget(taps=taps, rs_ohm=float(rs), temperature_k=float(temperature),
                           floor=req.options.open(req.floor, "floor"), chain=chain, band=Band(*req.band_hz),
                           segment_length=req.segment_length,
                           assumptions=() if stated else (temperature_assumed(DEFAULT_TEMPERATURE_K),))
