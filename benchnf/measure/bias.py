"""``benchnf bias``: the input device at its operating point, for a source (the equations and their sources
are in :mod:`benchnf.noise.devices`).

Spot figures at one frequency (default 1 kHz); band figures over the band with the weighting, from

.. math::

    F_{band} = \\frac{\\int W(f)\\,[4kT_0 R_s n^2 + e_{x}^2(f)]\\,df}{\\int W(f)\\, 4kT_0 R_s n^2\\, df},\\qquad
    EIN = \\sqrt{\\int W(f)\\,[4kTR_s + e_{x}^2(f)/n^2]\\,df}

(``e_x^2``: the device's and winding's noise at the device input for the source; W the weighting's power
gain, 1 without one; IEEE Std 161 for the noise factor, the band form being its average over the band).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

import numpy as np

from ..errors import ParameterError
from ..noise.devices import ASSUMED_VBE_V, Bjt, Device, DeviceNoise, Fet, Source, best_current, device_current, \
    input_density_v2, make_device, noise_factor
from ..units import T0_K, vrms_to_dbu
from .bias_result import BiasResult, Curve, DeviceStated, NoiseSpectrum, Optimum

__all__ = ["BiasRequest", "run_bias", "figure_at", "SOURCES_SHOWN_OHM", "DEFAULT_CURRENT_RANGE_A"]

#: The sources drawn in the NF-against-current plot: from moving-coil cartridges (tens of ohms) to
#: moving-magnet ones (tens of kilohms) (common practice).
SOURCES_SHOWN_OHM = (20.0, 200.0, 2000.0, 47000.0)
DEFAULT_CURRENT_RANGE_A = (10e-6, 10e-3)


@dataclass(frozen=True)
class BiasRequest:
    """What a user states: the device kind and its parameters (by :class:`Bjt`/:class:`Fet` field name), the
    source, the figures' frequency, band and weighting, and what else to do."""

    kind: Literal["bjt", "jfet", "parts"]
    rs_ohm: float
    parameters: tuple[tuple[str, float], ...] = ()
    temperature_k: float = T0_K
    frequency_hz: float = 1000.0
    band_hz: tuple[float, float] = (20.0, 20_000.0)
    weighting: str = "none"
    turns: float = 1.0
    winding_ohm: float = 0.0
    count: int = 1
    optimise: bool = False
    current_range_a: tuple[float, float] = DEFAULT_CURRENT_RANGE_A
    from_eni: Path | None = None
    parts: Path | None = None


def source_of(req: BiasRequest, rs_ohm: float | None = None) -> Source:
    return Source(req.rs_ohm if rs_ohm is None else rs_ohm, req.turns, req.winding_ohm)


def figure_at(device: Device, source: Source, frequency_hz: float) -> float:
    """Spot NF (dB) of `device` for `source` at one frequency."""
    return float(10 * np.log10(noise_factor(device.noise(frequency_hz), source)[0]))


def _band_grid(band: tuple[float, float]) -> np.ndarray:
    lo, hi = band
    if not 0 < lo < hi:
        raise ParameterError(f"band {lo:g}-{hi:g} Hz: the device model's figures need 0 < low < high (1/f noise "
                             f"has no finite integral down to 0 Hz)")
    return np.geomspace(lo, hi, 2001)


def band_figures(noise: DeviceNoise, source: Source, *, weighting: str, temperature_k: float) -> tuple[float, float]:
    """(band NF in dB, EIN in dBu) over the frequencies of `noise` (a band grid), weighted."""
    from scipy.integrate import trapezoid

    from ..dsp.weighting import weighting_power_gain
    f = noise.frequency_hz
    w = weighting_power_gain(weighting, f)
    f_band = noise_factor(noise, source)
    nf = 10 * math.log10(float(trapezoid(w * f_band, f) / trapezoid(w, f)))
    ein = float(vrms_to_dbu(math.sqrt(float(trapezoid(w * input_density_v2(noise, source, temperature_k=temperature_k),
                                                                f)))))
    return nf, ein


def stated(device: Device) -> DeviceStated:
    """The device as the results file records it."""
    if isinstance(device, Bjt):
        return DeviceStated("bjt", device.ic_a, device.count, beta=device.beta, beta_effective=device.beta_effective,
                            rbb_ohm=device.rbb_ohm, re_ohm=device.re_ohm, vaf_v=device.vaf_v, vce_v=device.vce_v,
                            is_a=device.is_a, kf=device.kf or None, af=device.af if device.kf else None,
                            corner_hz=device.corner_hz)
    return DeviceStated("jfet", device.id_a, device.count, gm_s=device.transconductance_s, idss_a=device.idss_a,
                        vp_v=device.vp_v, gamma=device.gamma, ig_a=device.ig_a, rs_lead_ohm=device.rs_ohm,
                        kf=device.kf or None, af=device.af if device.kf else None, corner_hz=device.corner_hz)


def current_range(device: Device, wanted: tuple[float, float]) -> tuple[float, float]:
    """The searched current range; a JFET's ends below its IDSS."""
    lo, hi = wanted
    if isinstance(device, Fet) and device.idss_a is not None:
        hi = min(hi, device.idss_a)
        if lo >= hi:
            raise ParameterError(f"the current range starts above the JFET's IDSS ({device.idss_a:g} A)")
    return lo, hi


def optimum(device: Device, source: Source, req: BiasRequest) -> Optimum:
    best = best_current(device, lambda d: figure_at(d, source, req.frequency_hz),
                        current_range_a=current_range(device, req.current_range_a))
    return Optimum(best.current_a, best.noise_figure_db, best.current_range_a, best.within_db, best.at_edge)


def _curves(device: Device, req: BiasRequest, chosen_a: float) -> tuple[tuple[Curve, ...], Curve]:
    from ..quantity import Quantity, resistance_text
    lo, hi = current_range(device, req.current_range_a)
    currents = np.geomspace(lo, hi, 61)
    shown = sorted({*SOURCES_SHOWN_OHM, req.rs_ohm})
    by_current = tuple(Curve(f"Rs {resistance_text(rs)}", tuple(currents.tolist()),
                             tuple(figure_at(device.at_current(float(i)), source_of(req, rs), req.frequency_hz)
                                   for i in currents)) for rs in shown)
    rs_grid = np.geomspace(1.0, 1e6, 121)
    at = device.at_current(chosen_a)
    noise = at.noise(req.frequency_hz)
    by_rs = Curve(f"at {Quantity(chosen_a, 'A').text()}", tuple(rs_grid.tolist()),
                  tuple(float(10 * np.log10(noise_factor(noise, source_of(req, float(r)))[0])) for r in rs_grid))
    return by_current, by_rs


def device_figures(device: Device, req: BiasRequest) -> dict[str, Any]:
    """The device's spot and band figures for the request's source (a BiasResult's top-level fields)."""
    from ..noise.twoport import fmin
    source = source_of(req)
    spot = device.noise(req.frequency_hz)
    en, i_n, rho = float(spot.en[0]), float(spot.in_[0]), float(spot.correlation[0])
    band_nf, ein = band_figures(device.noise(_band_grid(req.band_hz)), source, weighting=req.weighting,
                                temperature_k=req.temperature_k)
    freq = np.geomspace(1.0, 100_000.0, 101)
    spec = device.noise(freq)
    return dict(device=stated(device), en_v_per_rthz=en, in_a_per_rthz=i_n, correlation=rho,
                ropt_ohm=en / i_n if i_n > 0 else None,
                nfmin_db=10 * math.log10(fmin(en, i_n, rho)) if i_n > 0 else None,
                noise_figure_db=figure_at(device, source, req.frequency_hz), band_noise_figure_db=band_nf, ein_dbu=ein,
                spectrum=NoiseSpectrum(tuple(freq.tolist()), tuple(spec.en.tolist()), tuple(spec.in_.tolist())))


def _notes(device: Device, req: BiasRequest, figures: dict[str, Any]) -> list[str]:
    from ..quantity import Quantity
    origin = ("the device's parameters are fitted to the sweep's en and in; U where the sweep's U carries over"
              if req.from_eni is not None else "the model's figures are predictions from the stated parameters, "
                                              "without U")
    notes = [f"noise figure referred to the source at T0 = {T0_K:g} K (IEEE Std 161); the device at "
             f"{req.temperature_k:g} K; {origin}",
             "best SNR always comes at the lowest source impedance, not at the Rs of least NF"]
    if isinstance(device, Bjt) and device.is_a is None and device.vaf_v is not None and device.vce_v is not None:
        notes.append(f"Vbe taken as {ASSUMED_VBE_V:g} V for the Early correction (state --is for the model's own)")
    if device.count > 1:
        notes.append(f"{device.count} devices in parallel, each at {Quantity(device_current(device), 'A').text()}")
    if req.turns != 1.0 or req.winding_ohm:
        ropt = figures.get("ropt_ohm")
        match = f"; a ratio of {math.sqrt(ropt / req.rs_ohm):.3g} would show the device its Ropt" if ropt else ""
        notes.append(f"through a 1:{req.turns:g} transformer with {req.winding_ohm:g} ohm of winding resistance: "
                     f"the device sees {source_of(req).seen_ohm:.4g} ohm{match}")
    return notes


def run_bias(req: BiasRequest, *, progress: Any = None) -> BiasResult:
    """The device's figures for the source; the best current; parts ranked; a measured stage explained."""
    common = dict(rs_ohm=req.rs_ohm, temperature_k=req.temperature_k, frequency_hz=req.frequency_hz,
                  band_hz=tuple(req.band_hz), weighting=req.weighting, turns=req.turns, winding_ohm=req.winding_ohm)
    if req.kind == "parts":
        from .bias_parts import rank_parts
        return rank_parts(req, common)
    parameters = dict(req.parameters)
    if req.from_eni is not None and req.kind == "bjt":  # rbb' (and beta, where in was measured) are fitted
        parameters.setdefault("rbb_ohm", 0.0)
        parameters.setdefault("beta", 100.0)
    device = make_device(req.kind, parameters, count=req.count, temperature_k=req.temperature_k)
    explained, best = None, None
    if req.from_eni is not None:
        from .bias_fit import explain
        device, explained, best = explain(device, req)  # the fitted device's best current, with its U
    elif req.optimise:
        best = optimum(device, source_of(req), req)
    figures = device_figures(device, req)
    by_current, by_rs = _curves(device, req, best.ic_a if best else device_current(device))
    return BiasResult(**common, **figures, optimum=best, nf_vs_current=by_current, nf_vs_rs=by_rs,  # type: ignore[arg-type]
                      explained=explained, notes=tuple(_notes(device, req, figures)))

