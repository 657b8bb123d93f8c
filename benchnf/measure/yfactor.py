"""The Y-factor measurement: hot/cold captures in, DUT noise figure, temperature and gain out.

Strings together the spectra of the hot and cold captures (real audio or
complex IQ), the usable span (IQ: without the DC spike and the band edges),
optional floor subtraction (the receiver's own noise measured with its input
terminated, the audio equivalent of a second-stage correction), the
second-stage correction from a calibration pair, losses, sub-band rows,
repeats and the uncertainty budget.  Equations: :mod:`benchnf.noise.yfactor`
and docs/yfactor.md.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any, Union

import numpy as np
from numpy.typing import NDArray

from ..capture import Capture
from ..dsp.integrate import band_bin_weights
from ..dsp.spectrum import Psd, default_segment_length, pool_psds, welch_iq_psd
from ..dsp.weighting import Band
from ..errors import CaptureError, MeasurementError, ParameterError
from ..io.sigmf_iq import IqCapture
from ..noise.floor import band_relative_std
from ..noise.uncertainty import Budget, propagate
from ..noise.yfactor import (
    EnrTable,
    check_temperature,
    hot_temperature_from_enr,
    join_output_loss,
    loss_noise_factor,
    noise_temperature_from_factor,
    noise_temperature_from_y,
    remove_input_loss,
)
from ..streaming import stream_spectrum
from ..units import T0_K, fs_to_dbfs, power_db

__all__ = ["HotColdSource", "Loss", "YRow", "YFactorResult", "analyze_yfactor", "SCHEMA_VERSION"]

SCHEMA_VERSION = "1"
Source = Union[Capture, IqCapture]
_COMPRESSION_DBFS = -15.0


@dataclass(frozen=True)
class HotColdSource:
    """The hot and cold source: a noise diode's ENR table, or two temperatures.

    Attributes
    ----------
    enr : EnrTable, optional
        Noise source; its cold temperature is ``enr.cold_k`` unless `t_cold_k` is given.
    t_hot_k, t_cold_k : float, optional
        Two-temperature method (a resistor in boiling water and in ice water,
        a termination at room temperature and in liquid nitrogen...).
    enr_uncertainty_db : float
        Standard uncertainty of the ENR, dB (the table's, else 0.1 dB).
    temperature_uncertainty_k : float
        Standard uncertainty of each physical temperature, K.
    """

    enr: EnrTable | None = None
    t_hot_k: float | None = None
    t_cold_k: float | None = None
    enr_uncertainty_db: float | None = None
    temperature_uncertainty_k: float = 0.5

    def __post_init__(self) -> None:
        if (self.enr is None) == (self.t_hot_k is None):
            raise ParameterError("give either an ENR (--enr-db or --enr-table) or a hot temperature "
                                 "(--t-hot-k / --t-hot-c), not both or neither")
        if self.t_hot_k is not None:
            check_temperature(self.t_hot_k, "the hot temperature")
            if self.t_cold_k is None:
                raise ParameterError("the two-temperature method needs the cold temperature too "
                                     "(--t-cold-k or --t-cold-c)")
        if self.t_cold_k is not None:
            check_temperature(self.t_cold_k, "the cold temperature")
        if self.t_hot_k is not None and self.t_cold_k is not None and self.t_hot_k <= self.t_cold_k:
            raise ParameterError(f"the hot temperature ({self.t_hot_k:g} K) must exceed the cold one "
                                 f"({self.t_cold_k:g} K)")

    @property
    def method(self) -> str:
        return "enr" if self.enr is not None else "two-temperature"

    @property
    def cold_k(self) -> float:
        if self.t_cold_k is not None:
            return self.t_cold_k
        return self.enr.cold_k if self.enr is not None else T0_K

    def enr_u_db(self) -> float:
        if self.enr_uncertainty_db is not None:
            return self.enr_uncertainty_db
        if self.enr is not None and self.enr.enr_uncertainty_db is not None:
            return float(self.enr.enr_uncertainty_db)
        return 0.1

    def hot_k(self, frequency_hz: float) -> float:
        if self.t_hot_k is not None:
            return self.t_hot_k
        return float(hot_temperature_from_enr(self.enr.at(np.array([frequency_hz]))[0]))  # type: ignore[union-attr]


@dataclass(frozen=True)
class Loss:
    """A matched loss (cable, pad) in dB at a physical temperature in K."""

    loss_db: float
    temperature_k: float = T0_K

    def __post_init__(self) -> None:
        loss_noise_factor(self.loss_db, self.temperature_k)  # validates


@dataclass(frozen=True)
class YRow:
    """Figures over one sub-band (or spot)."""

    freq_hz: float
    y_factor_db: float | None
    noise_figure_db: float | None
    noise_temperature_k: float | None
    gain_db: float | None
    noise_figure_expanded_db: float | None

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class YFactorResult:
    """Everything the Y-factor measurement found, with its conditions."""

    method: str
    noise_figure_db: float
    noise_temperature_k: float
    gain_db: float | None
    y_factor_db: float
    second_stage_corrected: bool
    floor_subtracted: bool
    system_noise_figure_db: float
    receiver_noise_figure_db: float | None
    t_hot_k: float
    t_cold_k: float
    enr_db: float | None
    band_hz: tuple[float, float]
    centre_hz: float | None
    excluded: dict[str, Any]
    loss_before: dict[str, float] | None
    loss_after: dict[str, float] | None
    rows: tuple[YRow, ...]
    spots: tuple[YRow, ...]
    uncertainty: dict[str, Any]
    repeats: dict[str, Any] | None
    rbw_hz: float
    n_averages: int
    files: dict[str, Any]
    notes: tuple[str, ...]
    budgets: dict[str, Budget] = field(repr=False, compare=False)

    def to_dict(self) -> dict[str, Any]:
        from .._json import json_safe
        out: dict[str, Any] = {"schema_version": SCHEMA_VERSION, "kind": "yfactor"}
        for key, value in self.__dict__.items():
            if key == "budgets":
                continue
            if key in ("rows", "spots"):
                value = [r.to_dict() for r in value]
            elif isinstance(value, tuple):
                value = list(value)
            out[key] = value
        return json_safe(out)


# ----------------------------------------------------------------------------------------
def _spectrum(src: Source, seg: int, progress: Callable[[int], None] | None) -> tuple[Psd, float]:
    """PSD in full-scale units (a ratio method needs no volts) and the RMS level in dBFS."""
    if isinstance(src, IqCapture):
        power = [0.0, 0]

        def note(block):
            power[0] += float(np.sum(block.real ** 2 + block.imag ** 2))
            power[1] += block.size
            if progress is not None:
                progress(block.size)

        psd = welch_iq_psd(src.blocks(), sample_rate_hz=src.sample_rate_hz, segment_length=seg,
                           centre_hz=src.centre_hz, on_block=note)
        if power[0] == 0:
            raise CaptureError(f"{src.label} is silent (every sample is zero)")
        # IQ full scale: |z| = 1, so a full-scale complex sine has power 1 (0 dBFS).
        return psd, float(10 * math.log10(power[0] / power[1]))
    acc, stats = stream_spectrum(src, segment_length=seg, progress=progress)
    stats.check_noise()
    return acc.result(), float(fs_to_dbfs(stats.rms_fs))


def _usable_mask(f: NDArray[np.float64], src: Source, dc_exclude_hz: float | None,
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
    excluded.update({"dc_spike_hz": [src.centre_hz - dc, src.centre_hz + dc],
                     "edges_hz": [[src.centre_hz - span / 2, lo], [hi, src.centre_hz + span / 2]]})
    return mask


def _subbands(band: Band, n: int) -> list[Band]:
    if band.low_hz > 0 and band.high_hz / band.low_hz > 10:
        edges = np.geomspace(band.low_hz, band.high_hz, n + 1)
    else:
        edges = np.linspace(band.low_hz, band.high_hz, n + 1)
    return [Band(float(a), float(b)) for a, b in zip(edges[:-1], edges[1:])]


@dataclass
class _Powers:
    """Band powers and their relative Welch scatter."""

    hot: float
    cold: float
    u_hot: float
    u_cold: float
    cal_hot: float | None = None
    cal_cold: float | None = None
    u_cal_hot: float = 0.0
    u_cal_cold: float = 0.0


def _band_powers(w, p_hot, p_cold, p_floor, p_ch, p_cc) -> _Powers:
    def one(p: Psd | None):
        if p is None:
            return None, 0.0
        s = p.psd_per_hz - (p_floor.psd_per_hz if p_floor is not None else 0.0)
        enbw = p.enbw_hz / p.bin_width_hz
        raw = float(np.dot(w, p.psd_per_hz))
        value = float(np.dot(w, s))
        rel = band_relative_std(w, p.psd_per_hz, dof=p.dof, enbw_bins=enbw) * raw / value if value > 0 else math.inf
        if p_floor is not None:
            fl = float(np.dot(w, p_floor.psd_per_hz))
            rel = math.hypot(rel * value, band_relative_std(w, p_floor.psd_per_hz, dof=p_floor.dof,
                                                            enbw_bins=enbw) * fl) / value if value > 0 else math.inf
        return value, rel

    h, uh = one(p_hot)
    c, uc = one(p_cold)
    ch, uch = one(p_ch)
    cc, ucc = one(p_cc)
    return _Powers(h, c, uh, uc, ch, cc, uch, ucc)  # type: ignore[arg-type]


class _Model:
    """The whole chain of equations for one (sub-)band, as a function of its inputs (for the budget)."""

    def __init__(self, source: HotColdSource, f_centre: float, loss_before: Loss | None,
                 loss_after: Loss | None, corrected: bool) -> None:
        self.source, self.f, self.lb, self.la, self.corrected = source, f_centre, loss_before, loss_after, corrected
        self.enr0 = (float(source.enr.at(np.array([f_centre]))[0]) if source.enr is not None else None)

    def factors(self, *, hot, cold, cal_hot=None, cal_cold=None, enr_db=None, t_hot=None, t_cold=None):
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
            if self.la is not None:
                f2_eff = float(join_output_loss(f2, self.la.loss_db, self.la.temperature_k))
                g1 = g1 * 10 ** (self.la.loss_db / 10)
            f1 = f12 - (f2_eff - 1) / g1
        if self.lb is not None:
            f1 = float(remove_input_loss(f1, self.lb.loss_db, self.lb.temperature_k))
            if g1 is not None:
                g1 = g1 * 10 ** (self.lb.loss_db / 10)
        return y12, f12, f2, g1, f1

    def nf_db(self, **kw) -> float:
        f1 = self.factors(**kw)[4]
        if not f1 > 0:
            raise ValueError("noise factor <= 0")
        return 10 * math.log10(f1)

    def gain_db(self, **kw) -> float:
        g1 = self.factors(**kw)[3]
        if not g1 or g1 <= 0:
            raise ValueError("gain <= 0")
        return 10 * math.log10(g1)


def _inputs(pw: _Powers, source: HotColdSource, corrected: bool) -> dict[str, tuple[float, float, str]]:
    inp = {"hot": (pw.hot, pw.hot * pw.u_hot, "Welch scatter of the hot band power"),
           "cold": (pw.cold, pw.cold * pw.u_cold, "Welch scatter of the cold band power")}
    if corrected:
        inp["cal_hot"] = (pw.cal_hot, pw.cal_hot * pw.u_cal_hot, "Welch scatter, calibration pair hot")
        inp["cal_cold"] = (pw.cal_cold, pw.cal_cold * pw.u_cal_cold, "Welch scatter, calibration pair cold")
    if source.enr is not None:
        inp["enr_db"] = (None, source.enr_u_db(), f"ENR standard uncertainty {source.enr_u_db():g} dB")  # type: ignore[assignment]
    else:
        inp["t_hot"] = (source.t_hot_k, source.temperature_uncertainty_k,
                        f"hot temperature +/-{source.temperature_uncertainty_k:g} K (standard)")
    inp["t_cold"] = (source.cold_k, source.temperature_uncertainty_k,
                     f"cold temperature +/-{source.temperature_uncertainty_k:g} K (standard)")
    return inp


def _evaluate(model: _Model, pw: _Powers, source: HotColdSource, corrected: bool):
    inp = _inputs(pw, source, corrected)
    if "enr_db" in inp:
        inp["enr_db"] = (model.enr0, inp["enr_db"][1], inp["enr_db"][2])
    nf = propagate(model.nf_db, inp, quantity="noise_figure_db")
    gain = propagate(model.gain_db, inp, quantity="gain_db") if corrected else None
    return nf, gain


def _open_segments(hot, cold) -> tuple[list[Source], list[Source]]:
    hot = list(hot) if isinstance(hot, (list, tuple)) else [hot]
    cold = list(cold) if isinstance(cold, (list, tuple)) else [cold]
    if not hot or not cold:
        raise ParameterError("give at least one hot and one cold capture")
    if len(hot) != len(cold):
        raise ParameterError(f"{len(hot)} hot and {len(cold)} cold captures: give them in pairs")
    return hot, cold


def analyze_yfactor(*, hot: Source | Sequence[Source], cold: Source | Sequence[Source], source: HotColdSource,
                    cal_hot: Source | None = None, cal_cold: Source | None = None, floor: Source | None = None,
                    band: Band | None = None, segment_length: int | None = None, n_rows: int = 16,
                    spot_hz: Sequence[float] = (), loss_before: Loss | None = None,
                    loss_after: Loss | None = None, dc_exclude_hz: float | None = None,
                    edge_fraction: float = 0.1,
                    progress: Callable[[int], None] | None = None) -> YFactorResult:
    """Noise figure, noise temperature and gain of a DUT by the Y-factor method.

    Parameters
    ----------
    hot, cold : capture or sequence of captures
        The DUT (and receiver) with the source hot and cold; several pairs
        (in order) give scatter and drift.  Real audio (:class:`Capture`) or
        complex IQ (:class:`IqCapture`).
    source : HotColdSource
        ENR table or the two temperatures.
    cal_hot, cal_cold : optional
        The source straight into the receiver: enables the second-stage
        correction and gives the DUT's gain.
    floor : optional
        The receiver alone with its input terminated: subtracted from every
        spectrum in linear power (for receivers whose own noise is known
        this way, like a sound card).
    band : Band, optional
        Band for the headline figures (default: the usable span; for real
        captures 20 Hz-20 kHz or up to fs/2).
    n_rows : int
        Sub-bands for the per-frequency rows.
    spot_hz : sequence of float
        Spot frequencies (each evaluated over one row's width).
    loss_before, loss_after : Loss, optional
        Matched losses between source and DUT, and between DUT and receiver.
    dc_exclude_hz, edge_fraction :
        IQ only: half-width excluded around the centre (default the larger of
        3 bins and 0.5 % of the span) and the fraction of each half-span
        excluded at the edges (0.1).

    Raises
    ------
    BenchError
        Mismatched captures (rate, centre frequency, kind), Y <= 1, an ENR table
        not covering the band, impossible temperatures.

    References
    ----------
    .. [1] See :mod:`benchnf.noise.yfactor`.
    """
    hot_l, cold_l = _open_segments(hot, cold)
    corrected = cal_hot is not None or cal_cold is not None
    if corrected and (cal_hot is None or cal_cold is None):
        raise ParameterError("the calibration pair needs both --cal-hot and --cal-cold")
    first = hot_l[0]
    everything = [*hot_l, *cold_l, cal_hot, cal_cold, floor]
    for item in everything:
        if item is None:
            continue
        if type(item) is not type(first):
            raise CaptureError("mix of IQ and real captures: record every state the same way")
        if item.sample_rate_hz != first.sample_rate_hz:
            raise CaptureError(f"{item.label} was recorded at {item.sample_rate_hz:g} Hz but {first.label} at "
                               f"{first.sample_rate_hz:g} Hz: record every state at one rate")
        if isinstance(item, IqCapture) and item.centre_hz != first.centre_hz:
            raise CaptureError(f"{item.label} is centred at {item.centre_hz:g} Hz but {first.label} at "
                               f"{first.centre_hz:g} Hz: keep the receiver tuned to one frequency")
    fs = first.sample_rate_hz
    seg = int(segment_length) if segment_length else (
        min(4096, max(256, 1 << int(math.log2(fs / 500)))) if isinstance(first, IqCapture)
        else default_segment_length(fs) // 4)
    notes: list[str] = []
    hot_ps, cold_ps = [], []
    for h, c in zip(hot_l, cold_l):
        ph, lvl = _spectrum(h, seg, progress)
        pc, _ = _spectrum(c, seg, progress)
        hot_ps.append(ph)
        cold_ps.append(pc)
        if lvl > _COMPRESSION_DBFS:
            notes.append(f"{h.label} reaches {lvl:.1f} dBFS: the receiver or the DUT may be compressing, "
                         f"which lowers Y and raises the NF read; lower the gain or use a lower-ENR source")
    p_hot, p_cold = pool_psds(hot_ps), pool_psds(cold_ps)
    p_ch = _spectrum(cal_hot, seg, progress)[0] if cal_hot is not None else None
    p_cc = _spectrum(cal_cold, seg, progress)[0] if cal_cold is not None else None
    p_floor = _spectrum(floor, seg, progress)[0] if floor is not None else None
    f = p_hot.frequency_hz
    excluded: dict[str, Any] = {}
    usable = _usable_mask(f, first, dc_exclude_hz, edge_fraction, excluded)
    if band is None:
        if isinstance(first, IqCapture):
            band = Band(float(f[usable][0]), float(f[usable][-1]))
        else:
            band = Band(20.0, min(20_000.0, fs / 2 * 0.9))
    if not isinstance(first, IqCapture):
        band.check_within(fs)
    elif band.low_hz < f[0] or band.high_hz > f[-1]:
        raise ParameterError(f"band {band.label()} lies outside the recording's span "
                             f"{f[0]:g}-{f[-1]:g} Hz")
    if source.enr is not None:
        source.enr.at(np.array([band.low_hz, band.high_hz]))  # refuse a table that does not cover it

    def evaluate(b: Band):
        w = band_bin_weights(f, b) * usable
        if not np.any(w > 0):
            return None
        pw = _band_powers(w, p_hot, p_cold, p_floor, p_ch, p_cc)
        centre = math.sqrt(b.low_hz * b.high_hz) if b.low_hz > 0 else (b.low_hz + b.high_hz) / 2
        model = _Model(source, centre, loss_before, loss_after, corrected)
        return pw, model

    head = evaluate(band)
    if head is None:
        raise ParameterError(f"no usable bin lies in the band {band.label()}")
    pw, model = head
    if not (pw.hot > 0 and pw.cold > 0):
        raise MeasurementError("the hot or cold power is not above the subtracted floor")
    y12, f12, f2, g1, f1 = model.factors(hot=pw.hot, cold=pw.cold, cal_hot=pw.cal_hot, cal_cold=pw.cal_cold)
    u_y = math.hypot(pw.u_hot, pw.u_cold)
    if y12 - 1 < 3 * u_y * y12:
        notes.append(f"Y = {10 * math.log10(y12):.3f} dB is hardly resolved (its scatter is {100 * u_y:.2f} % "
                     f"of Y): the NF is far above the ENR; use a higher-ENR source or record longer")
    nf_budget, gain_budget = _evaluate(model, pw, source, corrected)
    if f1 < 1.0:
        notes.append("the corrected noise factor came out below 1 (0 dB): check the ENR, the temperatures "
                     "and the calibration pair")
    rows = []
    for sub in _subbands(band, n_rows):
        rows.append(_row(evaluate(sub), source, corrected, sub))
    spots = []
    width = band.width_hz / n_rows
    for fs_hz in spot_hz:
        spot = Band(max(fs_hz - width / 2, 0.0), fs_hz + width / 2)
        spots.append(_row(evaluate(spot), source, corrected, spot, label=fs_hz))
    repeats = None
    if len(hot_ps) > 1:
        nfs = []
        w = band_bin_weights(f, band) * usable
        for ph, pc in zip(hot_ps, cold_ps):
            pwr = _band_powers(w, ph, pc, p_floor, p_ch, p_cc)
            try:
                nfs.append(model.nf_db(hot=pwr.hot, cold=pwr.cold, cal_hot=pwr.cal_hot, cal_cold=pwr.cal_cold))
            except (ValueError, ArithmeticError):
                nfs.append(math.nan)
        arr = np.array(nfs)
        slope = float(np.polyfit(np.arange(arr.size), arr, 1)[0]) if np.all(np.isfinite(arr)) else math.nan
        repeats = {"n": len(nfs), "noise_figure_db": nfs, "noise_figure_std_db": float(np.nanstd(arr, ddof=1)),
                   "noise_figure_drift_db_per_pair": slope}
        if math.isfinite(slope) and abs(slope) * (arr.size - 1) > 2 * max(float(np.nanstd(arr, ddof=1)), 1e-9):
            notes.append(f"the noise figure drifts by {slope:+.3f} dB per hot/cold pair: let the source and "
                         f"the DUT settle")
    if not corrected and floor is None:
        notes.append("no calibration pair: the figures are of the DUT and the receiver together (system "
                     "noise figure); give --cal-hot/--cal-cold for the DUT alone and its gain")
    elif not corrected:
        notes.append("the receiver's own noise was removed by subtracting its floor in linear power; "
                     "without a calibration pair there is no gain figure")
    budgets = {"noise_figure_db": nf_budget}
    if gain_budget is not None:
        budgets["gain_db"] = gain_budget
    th = model.source.hot_k(model.f)
    return YFactorResult(
        method=source.method,
        noise_figure_db=10 * math.log10(f1) if f1 > 0 else math.nan,
        noise_temperature_k=float(noise_temperature_from_factor(f1)),
        gain_db=10 * math.log10(g1) if g1 and g1 > 0 else None,
        y_factor_db=float(power_db(y12)),
        second_stage_corrected=corrected,
        floor_subtracted=floor is not None,
        system_noise_figure_db=10 * math.log10(f12) if f12 > 0 else math.nan,
        receiver_noise_figure_db=10 * math.log10(f2) if f2 and f2 > 0 else None,
        t_hot_k=th,
        t_cold_k=source.cold_k,
        enr_db=model.enr0,
        band_hz=(band.low_hz, band.high_hz),
        centre_hz=first.centre_hz if isinstance(first, IqCapture) else None,
        excluded=excluded,
        loss_before=loss_before.__dict__ if loss_before else None,
        loss_after=loss_after.__dict__ if loss_after else None,
        rows=tuple(rows),
        spots=tuple(spots),
        uncertainty={"coverage_factor": 2.0, **{k: b.expanded_db for k, b in budgets.items()},
                     "budgets": {k: b.to_dict() for k, b in budgets.items()}},
        repeats=repeats,
        rbw_hz=p_hot.enbw_hz,
        n_averages=p_hot.n_averages,
        files={"hot": [_p(h) for h in hot_l], "cold": [_p(c) for c in cold_l], "cal_hot": _p(cal_hot),
               "cal_cold": _p(cal_cold), "floor": _p(floor)},
        notes=tuple(notes),
        budgets=budgets,
    )


def _p(x: Any) -> str | None:
    path = getattr(x, "path", None)
    if path is None:
        return None
    start = getattr(x, "start", 0)
    return f"{path}" + (f"@{start}" if start else "")


def _row(evaluated, source: HotColdSource, corrected: bool, b: Band, label: float | None = None) -> YRow:
    centre = label if label is not None else (math.sqrt(b.low_hz * b.high_hz) if b.low_hz > 0
                                              else (b.low_hz + b.high_hz) / 2)
    if evaluated is None:
        return YRow(centre, None, None, None, None, None)
    pw, model = evaluated
    try:
        y12, _f12, _f2, g1, f1 = model.factors(hot=pw.hot, cold=pw.cold, cal_hot=pw.cal_hot,
                                               cal_cold=pw.cal_cold)
        nf, _gain = _evaluate(model, pw, source, corrected)
    except (ValueError, ArithmeticError):
        return YRow(centre, None, None, None, None, None)
    return YRow(centre, float(power_db(y12)), 10 * math.log10(f1) if f1 > 0 else None,
                float(noise_temperature_from_factor(f1)), 10 * math.log10(g1) if g1 and g1 > 0 else None,
                nf.expanded_db)
