"""The equations of the Y-factor measurement for one band: state spectra, band powers, the model of the
whole chain (second-stage correction, losses) and its uncertainty budget. Used by
:mod:`benchnf.measure.yfactor`; equations in :mod:`benchnf.noise.yfactor` and docs/yfactor.md."""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Union

import numpy as np
from numpy.typing import NDArray

from ..capture import Capture
from ..dsp.spectrum import Psd, welch_iq_psd
from ..dsp.weighting import Band
from ..errors import CaptureError, ParameterError
from ..io.sigmf_iq import IqCapture
from ..noise.floor import band_relative_std
from ..noise.uncertainty import Budget, propagate, welch_dof
from ..noise.yfactor import hot_temperature_from_enr, join_output_loss, noise_temperature_from_y, remove_input_loss
from ..streaming import stream_spectrum
from ..units import T0_K, fs_to_dbfs

__all__ = ["Source", "Loudness", "state_spectrum", "usable_mask", "subbands", "Powers", "band_powers", "Model",
           "budget_inputs", "evaluate_budgets", "open_pairs"]

Source = Union[Capture, IqCapture]


@dataclass(frozen=True)
class Loudness:
    """How loud a state is: its RMS level in dBFS and, for integer IQ, the fraction of its I and Q values at
    the converter's rails (None where the samples have no rails: floating point, audio)."""

    level_dbfs: float
    at_rails: float | None = None


def state_spectrum(src: Source, seg: int, progress: Callable[[int], None] | None) -> tuple[Psd, Loudness]:
    """PSD in full-scale units (a ratio method needs no volts) and how loud the state is."""
    if isinstance(src, IqCapture):
        rails = src.rails
        power, count, railed = [0.0], [0], [0]

        def note(block):
            power[0] += float(np.sum(block.real ** 2 + block.imag ** 2))
            count[0] += block.size
            if rails is not None:
                parts = np.concatenate([block.real, block.imag])
                railed[0] += int(np.count_nonzero((parts <= rails[0] + 1e-9) | (parts >= rails[1] - 1e-9)))
            if progress is not None:
                progress(block.size)

        psd = welch_iq_psd(src.blocks(), sample_rate_hz=src.sample_rate_hz, segment_length=seg,
                           centre_hz=src.centre_hz, on_block=note)
        if power[0] == 0:
            raise CaptureError(f"{src.label} is silent (every sample is zero)")
        # IQ full scale: |z| = 1, so a full-scale complex sine has power 1 (0 dBFS).
        return psd, Loudness(float(10 * math.log10(power[0] / count[0])),
                             railed[0] / (2 * count[0]) if rails is not None else None)
    acc, stats = stream_spectrum(src, segment_length=seg, progress=progress)
    stats.check_noise()
    return acc.result(), Loudness(float(fs_to_dbfs(stats.rms_fs)))


def usable_mask(f: NDArray[np.float64], src: Source, dc_exclude_hz: float | None,
                 edge_fraction: float, excluded: dict[str, Any]) -> NDArray[np.bool_]:
    if not isinstance(src, IqCapture):
        return np.ones(f.size, dtype=bool)
    if not 0 <= edge_fraction < 0.5:
        raise ParameterError(f"edge fraction {edge_fraction!r} must lie in [0, 0.5)")
    span = src.sample_rate_hz
    df = f[1] - f[0]
    dc = dc_exclude_hz if dc_exclude_hz is not None else max(3 * df, 0.005 * span)
    edge = edge_fraction * span / 2
    lo, hi = src.centre_hz - span / 2 + edge, src.centre_hz + span / 2 - edge
    mask = (np.abs(f - src.centre_hz) > dc) & (f >= lo) & (f <= hi)
    excluded.update({"dc_spike_hz": (src.centre_hz - dc, src.centre_hz + dc),
                     "edges_hz": ((src.centre_hz - span / 2, lo), (hi, src.centre_hz + span / 2))})
    return mask


def subbands(band: Band, n: int) -> list[Band]:
    if band.low_hz > 0 and band.high_hz / band.low_hz > 10:
        edges = np.geomspace(band.low_hz, band.high_hz, n + 1)
    else:
        edges = np.linspace(band.low_hz, band.high_hz, n + 1)
    return [Band(float(a), float(b)) for a, b in zip(edges[:-1], edges[1:])]


@dataclass
class Powers:
    """Band powers and their relative Welch scatter."""

    hot: float
    cold: float
    u_hot: float
    u_cold: float
    cal_hot: float | None = None
    cal_cold: float | None = None
    u_cal_hot: float = 0.0
    u_cal_cold: float = 0.0
    quantisation: float = 0.0  # the receiver's quantisation noise in the band, same units


def quantisation_density(src: Any) -> float:
    """Two-sided density (FS²/Hz) of the quantisation noise of an 8-bit IQ receiver, else 0.

    A uniform quantiser of step Δ adds Δ²/12 to each of I and Q (Bennett 1948; Widrow & Kollár, *Quantization
    Noise*, 2008, ch. 4: valid while the signal spans many steps), spread evenly over the sample rate:
    Δ²/(6 fs). SigMF reads ``cu8``/``ci8`` as (x - 128)/128, so Δ = 1/128 full scale. Wider converters are
    left out: their term is far below the others.
    """
    datatype = str(getattr(src, "metadata", {}).get("datatype", ""))
    if not (isinstance(src, IqCapture) and datatype[:3] in ("cu8", "ci8")):
        return 0.0
    step = 1 / 128
    return step ** 2 / (6 * src.sample_rate_hz)


def band_powers(w, p_hot, p_cold, p_floor, p_ch, p_cc, *, quantum: float = 0.0) -> Powers:
    def one(p: Psd | None):
        if p is None:
            return None, 0.0
        s = p.psd_per_hz - (p_floor.psd_per_hz if p_floor is not None else 0.0)
        kernel = p.correlation_kernel
        raw = float(np.dot(w, p.psd_per_hz))
        value = float(np.dot(w, s))
        rel = band_relative_std(w, p.psd_per_hz, dof=p.dof, correlation=kernel) * raw / value if value > 0 else math.inf
        if p_floor is not None:
            fl = float(np.dot(w, p_floor.psd_per_hz))
            rel = math.hypot(rel * value, band_relative_std(w, p_floor.psd_per_hz, dof=p_floor.dof,
                                                            correlation=kernel) * fl) / value if value > 0 else math.inf
        return value, rel

    h, uh = one(p_hot)
    c, uc = one(p_cold)
    ch, uch = one(p_ch)
    cc, ucc = one(p_cc)
    return Powers(h, c, uh, uc, ch, cc, uch, ucc, quantum * float(np.sum(w)))  # type: ignore[arg-type]


class Model:
    """The whole chain of equations for one (sub-)band, as a function of its inputs (for the budget)."""

    def __init__(self, source: Any, f_centre: float, source_side: Any,
                 receiver_side: Any, corrected: bool) -> None:
        """`source_side`, `receiver_side`: the passive stages on each side of the DUT as one equivalent loss
        each (:func:`benchnf.measure.yfactor_passive.side_loss`), or None."""
        self.source, self.f, self.corrected = source, f_centre, corrected
        self.source_side, self.receiver_side = source_side, receiver_side
        self.enr0 = (float(source.enr.at(np.array([f_centre]))[0]) if source.enr is not None else None)

    def factors(self, *, hot, cold, cal_hot=None, cal_cold=None, enr_db=None, t_hot=None, t_cold=None,
                quantisation=0.0):
        if quantisation:  # a share of the receiver's quantisation noise taken out of every state
            hot, cold = hot - quantisation, cold - quantisation
            if cal_hot is not None:
                cal_hot, cal_cold = cal_hot - quantisation, cal_cold - quantisation
        th = (float(hot_temperature_from_enr(enr_db if enr_db is not None else self.enr0))
              if self.source.enr is not None else (t_hot if t_hot is not None else self.source.t_hot_k))
        tc = t_cold if t_cold is not None else self.source.cold_k
        y12 = hot / cold
        f12 = 1 + float(noise_temperature_from_y(y12, t_hot_k=th, t_cold_k=tc)) / T0_K
        f2 = g1 = None
        f1 = f12
        if self.corrected:
            y2 = cal_hot / cal_cold
            f2 = 1 + float(noise_temperature_from_y(y2, t_hot_k=th, t_cold_k=tc)) / T0_K
            g1 = (hot - cold) / (cal_hot - cal_cold)
            f2_eff = f2
            if self.receiver_side is not None:
                rs = self.receiver_side
                f2_eff = float(join_output_loss(f2, rs.loss_db, rs.temperature_k))
                g1 = g1 * 10 ** (rs.loss_db / 10)
            f1 = f12 - (f2_eff - 1) / g1
        if self.source_side is not None:
            ss = self.source_side
            f1 = float(remove_input_loss(f1, ss.loss_db, ss.temperature_k))
            if g1 is not None:
                g1 = g1 * 10 ** (ss.loss_db / 10)
        return y12, f12, f2, g1, f1

    def nf_db(self, **kw) -> float:
        f1 = self.factors(**kw)[4]
        if not f1 > 0:
            raise ValueError("noise factor <= 0")
        return 10 * math.log10(f1)

    def system_nf_db(self, **kw) -> float:
        """The DUT and the receiver together (before any correction), dB."""
        f12 = self.factors(**kw)[1]
        if not f12 > 0:
            raise ValueError("noise factor <= 0")
        return 10 * math.log10(f12)

    def receiver_nf_db(self, **kw) -> float:
        """The receiver alone, from the calibration pair, dB."""
        f2 = self.factors(**kw)[2]
        if not f2 or f2 <= 0:
            raise ValueError("noise factor <= 0")
        return 10 * math.log10(f2)

    def gain_db(self, **kw) -> float:
        g1 = self.factors(**kw)[3]
        if not g1 or g1 <= 0:
            raise ValueError("gain <= 0")
        return 10 * math.log10(g1)


def budget_inputs(pw: Powers, source: Any, corrected: bool) -> dict[str, tuple[Any, ...]]:
    inp: dict[str, tuple[Any, ...]] = {
        "hot": (pw.hot, pw.hot * pw.u_hot, "Welch scatter of the hot band power", welch_dof(pw.u_hot)),
        "cold": (pw.cold, pw.cold * pw.u_cold, "Welch scatter of the cold band power", welch_dof(pw.u_cold))}
    if corrected:
        ch, cc = float(pw.cal_hot), float(pw.cal_cold)  # type: ignore[arg-type]  # a pair is given when corrected
        inp["cal_hot"] = (ch, ch * pw.u_cal_hot, "Welch scatter, calibration pair hot", welch_dof(pw.u_cal_hot))
        inp["cal_cold"] = (cc, cc * pw.u_cal_cold, "Welch scatter, calibration pair cold", welch_dof(pw.u_cal_cold))
    if source.enr is not None:
        inp["enr_db"] = (None, source.enr_u_db(), f"ENR standard uncertainty {source.enr_u_db():g} dB")
    else:
        inp["t_hot"] = (source.t_hot_k, source.temperature_uncertainty_k,
                        f"hot temperature +/-{source.temperature_uncertainty_k:g} K (standard)")
    inp["t_cold"] = (source.cold_k, source.temperature_uncertainty_k,
                     f"cold temperature +/-{source.temperature_uncertainty_k:g} K (standard)")
    if pw.quantisation > 0:  # not corrected: its whole power is the half-width of a rectangle (GUM 4.3.7)
        inp["quantisation"] = (0.0, pw.quantisation / math.sqrt(3),
                               "8-bit quantisation noise, not corrected (rectangular, +/- its whole power)")
    return inp


def evaluate_budgets(model: Model, pw: Powers, source: Any, corrected: bool) -> tuple[Budget, Budget | None]:
    inp = budget_inputs(pw, source, corrected)
    if "enr_db" in inp:
        inp["enr_db"] = (model.enr0, inp["enr_db"][1], inp["enr_db"][2])
    nf = propagate(model.nf_db, inp, quantity="noise_figure_db")
    gain = propagate(model.gain_db, inp, quantity="gain_db") if corrected else None
    return nf, gain


def other_budgets(model: Model, pw: Powers, source: Any, corrected: bool) -> dict[str, Budget]:
    """Budgets of the system noise figure and, with a calibration pair, the receiver's."""
    inp = budget_inputs(pw, source, corrected)
    if "enr_db" in inp:
        inp["enr_db"] = (model.enr0, inp["enr_db"][1], inp["enr_db"][2])
    out = {"system_noise_figure_db": propagate(model.system_nf_db, inp, quantity="system_noise_figure_db")}
    if corrected:
        out["receiver_noise_figure_db"] = propagate(model.receiver_nf_db, inp, quantity="receiver_noise_figure_db")
    return out


def open_pairs(hot, cold) -> tuple[list[Source], list[Source]]:
    hot = list(hot) if isinstance(hot, (list, tuple)) else [hot]
    cold = list(cold) if isinstance(cold, (list, tuple)) else [cold]
    if not hot or not cold:
        raise ParameterError("give at least one hot and one cold capture")
    if len(hot) != len(cold):
        raise ParameterError(f"{len(hot)} hot and {len(cold)} cold captures: give them in pairs")
    return hot, cold
