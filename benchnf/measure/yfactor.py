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
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..dsp.integrate import band_bin_weights
from ..dsp.spectrum import Psd, default_segment_length, pool_psds
from ..dsp.weighting import Band
from ..errors import CaptureError, MeasurementError, ParameterError
from ..io.sigmf_iq import IqCapture
from ..noise.uncertainty import Budget, Uncertainty
from ..noise.yfactor import (
    EnrTable,
    check_temperature,
    hot_temperature_from_enr,
    noise_temperature_from_factor,
)
from ..units import T0_K, power_db
from .physics import check_noise_factor
from .yfactor_checks import Y_CAUSES, check_calibration_pair, compression_notes, receiver_notes, refuse_quantisation
from .yfactor_passive import PassiveStage, side_loss
from .yfactor_result import YExcluded, YFactorResult, YFiles, YPassive, YRepeats, YRow
from .yfactor_model import (
    Model,
    Powers,
    Source,
    band_powers,
    evaluate_budgets,
    open_pairs,
    other_budgets,
    quantisation_density,
    state_spectrum,
    subbands,
    usable_mask,
)

__all__ = ["HotColdSource", "PassiveStage", "StateSpectra", "analyze_yfactor", "yfactor_of_spectra", "pair_figures",
           "SCHEMA_VERSION"]

SCHEMA_VERSION = "1"


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


def analyze_yfactor(*, hot: Source | Sequence[Source], cold: Source | Sequence[Source], source: HotColdSource,
                    cal_hot: Source | None = None, cal_cold: Source | None = None, floor: Source | None = None,
                    band: Band | None = None, segment_length: int | None = None, n_rows: int = 16,
                    spot_hz: Sequence[float] = (), passives: Sequence[PassiveStage] = (),
                    dc_exclude_hz: float | None = None,
                    edge_fraction: float = 0.1, assumptions: Sequence[str] = (),
                    progress: Callable[[int], None] | None = None, switching: Any = None) -> YFactorResult:
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
    assumptions : sequence of str
        Notes from the resolution of the inputs (e.g. a cold temperature nobody stated), listed first.
    passives : sequence of PassiveStage
        Matched passive stages (cables, pads) on the source side of the DUT and on its receiver side, in
        signal order: de-embedded (:mod:`benchnf.measure.yfactor_passive`).
    dc_exclude_hz, edge_fraction :
        IQ only: half-width excluded around the centre (default the larger of
        3 bins and 0.5 % of the span) and the fraction of each half-span
        excluded at the edges (0.1).
    switching : Switching, optional
        The states of one switched recording that `hot` and `cold` were cut from: the result then names
        them (``segments``), each pair's figures (``pairs``) and the power trace.

    Raises
    ------
    BenchError
        Mismatched captures (rate, centre frequency, kind), Y <= 1, an ENR table
        not covering the band, impossible temperatures.

    References
    ----------
    .. [1] See :mod:`benchnf.noise.yfactor`.
    """
    hot_l, cold_l = open_pairs(hot, cold)
    corrected = cal_hot is not None or cal_cold is not None
    if corrected and (cal_hot is None or cal_cold is None):
        raise ParameterError("the calibration pair needs both --cal-hot and --cal-cold")
    first = _check_states([*hot_l, *cold_l, cal_hot, cal_cold, floor])
    notes: list[str] = list(assumptions) + receiver_notes([*hot_l, *cold_l, cal_hot, cal_cold, floor])
    sp = _state_spectra(hot_l, cold_l, cal_hot=cal_hot, cal_cold=cal_cold, floor=floor,
                        seg=segment_length_for(first, segment_length), progress=progress, notes=notes)
    files = YFiles(tuple(_p(h) for h in hot_l), tuple(_p(c) for c in cold_l), _p(cal_hot), _p(cal_cold), _p(floor))
    return yfactor_of_spectra(sp, first=first, source=source, band=band, n_rows=n_rows, spot_hz=spot_hz,
                              passives=passives, dc_exclude_hz=dc_exclude_hz,
                              edge_fraction=edge_fraction, files=files, notes=notes, switching=switching)


def yfactor_of_spectra(sp: "StateSpectra", *, first: Source, source: HotColdSource, band: Band | None = None,
                       n_rows: int = 16, spot_hz: Sequence[float] = (),
                       passives: Sequence[PassiveStage] = (), dc_exclude_hz: float | None = None,
                       edge_fraction: float = 0.1, files: YFiles | None = None, notes: list[str] | None = None,
                       switching: Any = None) -> YFactorResult:
    """The Y-factor figures from the states' spectra (:func:`analyze_yfactor` after its spectra; the live
    view's pairs). `first` is a capture of the recording's kind, rate and centre (its samples are not read)."""
    notes = [] if notes is None else notes
    corrected = sp.cal_hot is not None
    f = sp.hot.frequency_hz
    excluded: dict[str, Any] = {}
    usable = usable_mask(f, first, dc_exclude_hz, edge_fraction, excluded)
    band = _headline_band(f, first, band, usable, source)
    quantum = quantisation_density(first)
    source_side, receiver_side = side_loss(passives, "source"), side_loss(passives, "receiver")
    if receiver_side is not None and not corrected:
        raise ParameterError("a passive stage on the receiver side is de-embedded through the receiver's own noise "
                             "figure, which only the calibration pair measures: give --cal-hot/--cal-cold, or leave "
                             "the stage out (it is then part of the system noise figure)")

    def evaluate(b: Band) -> tuple[Powers, Model] | None:
        w = band_bin_weights(f, b) * usable
        if not np.any(w > 0):
            return None
        pw = band_powers(w, sp.hot, sp.cold, sp.floor, sp.cal_hot, sp.cal_cold, quantum=quantum)
        centre = math.sqrt(b.low_hz * b.high_hz) if b.low_hz > 0 else (b.low_hz + b.high_hz) / 2
        return pw, Model(source, centre, source_side, receiver_side, corrected)

    head = _headline(evaluate(band), band, source, corrected, notes)
    rows = tuple(_row(evaluate(sub), source, corrected, sub) for sub in subbands(band, n_rows))
    width = band.width_hz / n_rows
    spots = tuple(_row(evaluate(Band(max(x - width / 2, 0.0), x + width / 2)), source, corrected,
                       Band(max(x - width / 2, 0.0), x + width / 2), label=x) for x in spot_hz)
    w_band = band_bin_weights(f, band) * usable
    figures = []
    if len(sp.hot_runs) > 1 or switching is not None:
        figures = pair_figures(sp, w_band, head.model, source, corrected, quantum)
    repeats = _pair_repeats([nf if nf is not None else math.nan for _y, nf, *_rest in figures], notes)
    if not corrected and sp.floor is None:
        notes.append("no calibration pair: the figures are of the DUT and the receiver together (system "
                     "noise figure); give --cal-hot/--cal-cold for the DUT alone and its gain")
    elif not corrected:
        notes.append("the receiver's own noise was removed by subtracting its floor in linear power; "
                     "without a calibration pair there is no gain figure")
    switched = {}
    if switching is not None:
        from .yfactor_switched import switched_fields
        switched = switched_fields(switching, figures, first.sample_rate_hz)
    return replace(_assemble(head, sp, source=source, corrected=corrected, floor=sp.floor, band=band, first=first,
                             excluded=excluded, passives=passives, rows=rows,
                             spots=spots, repeats=repeats, files=files or YFiles((), ()), notes=notes), **switched)


def pair_figures(sp: "StateSpectra", w: NDArray[np.float64], model: Model, source: HotColdSource, corrected: bool,
                 quantum: float = 0.0) -> list[tuple[float, float | None, float | None, float | None, float | None]]:
    """Y (dB), NF, its U (k = 2), Te and gain of each hot/cold pair on its own."""
    out = []
    for ph, pc in zip(sp.hot_runs, sp.cold_runs):
        pw = band_powers(w, ph, pc, sp.floor, sp.cal_hot, sp.cal_cold, quantum=quantum)
        try:
            y12, _f12, _f2, g1, f1 = model.factors(hot=pw.hot, cold=pw.cold, cal_hot=pw.cal_hot, cal_cold=pw.cal_cold)
            nf_b, _g = evaluate_budgets(model, pw, source, corrected)
            ok = f1 > 0
            out.append((float(power_db(y12)), 10 * math.log10(f1) if ok else None, nf_b.expanded_db if ok else None,
                        float(noise_temperature_from_factor(f1)) if ok else None,
                        10 * math.log10(g1) if g1 and g1 > 0 else None))
        except (ValueError, ArithmeticError):
            out.append((math.nan, None, None, None, None))
    return out


@dataclass(frozen=True)
class StateSpectra:
    """The spectra of every state: each hot/cold pair's, the pairs pooled, and the calibration pair and floor."""

    hot_runs: list[Psd]
    cold_runs: list[Psd]
    hot: Psd
    cold: Psd
    cal_hot: Psd | None
    cal_cold: Psd | None
    floor: Psd | None


@dataclass(frozen=True)
class _Headline:
    powers: Powers
    model: Model
    y12: float
    f12: float
    f2: float | None
    g1: float | None
    f1: float
    budgets: dict[str, Budget]


def _check_states(everything: list[Source | None]) -> Source:
    """One kind (IQ or real), one sample rate, one centre frequency; the first state."""
    first = everything[0]
    assert first is not None
    for item in everything:
        if item is None:
            continue
        if type(item) is not type(first):
            raise CaptureError("mix of IQ and real captures: record every state the same way")
        if item.sample_rate_hz != first.sample_rate_hz:
            raise CaptureError(f"{item.label} was recorded at {item.sample_rate_hz:g} Hz but {first.label} at "
                               f"{first.sample_rate_hz:g} Hz: record every state at one rate")
        if isinstance(item, IqCapture) and item.centre_hz != first.centre_hz:  # type: ignore[union-attr]
            raise CaptureError(f"{item.label} is centred at {item.centre_hz:g} Hz but {first.label} at "
                               f"{first.centre_hz:g} Hz: keep the receiver tuned to one frequency")  # type: ignore[union-attr]
    return first


def segment_length_for(first: Source, segment_length: int | None = None) -> int:
    """The Welch segment of a Y-factor state: the one asked for, else about fs/500 for IQ (256 to 4096)."""
    fs = first.sample_rate_hz
    if segment_length:
        return int(segment_length)
    if isinstance(first, IqCapture):
        return min(4096, max(256, 1 << int(math.log2(fs / 500))))
    return default_segment_length(fs) // 4


def _state_spectra(hot_l: list[Source], cold_l: list[Source], *, cal_hot: Source | None, cal_cold: Source | None,
                   floor: Source | None, seg: int, progress: Callable[[int], None] | None,
                   notes: list[str]) -> StateSpectra:
    """Spectra of every state (hot/cold pairs pooled), with a note where a state may compress."""
    hot_ps, cold_ps, loud = [], [], []
    for h, c in zip(hot_l, cold_l):
        ph, lvl = state_spectrum(h, seg, progress)
        pc, _ = state_spectrum(c, seg, progress)
        hot_ps.append(ph)
        cold_ps.append(pc)
        loud.append((h.label, lvl))
    notes += compression_notes(loud)

    def one(x: Source | None) -> Psd | None:
        return state_spectrum(x, seg, progress)[0] if x is not None else None
    p_hot, p_cold = pool_psds(hot_ps), pool_psds(cold_ps)
    return StateSpectra(hot_ps, cold_ps, p_hot, p_cold, one(cal_hot), one(cal_cold), one(floor))


def _headline_band(f: NDArray[np.float64], first: Source, band: Band | None, usable: NDArray[np.bool_],
                   source: HotColdSource) -> Band:
    """The band of the headline figures: the usable span (IQ) or 20 Hz-20 kHz; checked against the data."""
    fs = first.sample_rate_hz
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
    return band


def _headline(evaluated: tuple[Powers, Model] | None, band: Band, source: HotColdSource, corrected: bool,
              notes: list[str]) -> _Headline:
    """The headline band's factors and budgets, with the notes they call for."""
    if evaluated is None:
        raise ParameterError(f"no usable bin lies in the band {band.label()}")
    pw, model = evaluated
    if not (pw.hot > 0 and pw.cold > 0):
        raise MeasurementError("the hot or cold power is not above the subtracted floor")
    if corrected:
        check_calibration_pair(pw)
    y12, f12, f2, g1, f1 = model.factors(hot=pw.hot, cold=pw.cold, cal_hot=pw.cal_hot, cal_cold=pw.cal_cold)
    u_y = math.hypot(pw.u_hot, pw.u_cold)
    if y12 - 1 < 3 * u_y * y12:
        notes.append(f"Y = {10 * math.log10(y12):.3f} dB is hardly resolved (its scatter is {100 * u_y:.2f} % "
                     f"of Y): the NF is far above the ENR; use a higher-ENR source or record longer")
    check_noise_factor(f1, math.inf, what="noise factor", causes=Y_CAUSES)  # > 0 before its logarithm
    nf_budget, gain_budget = evaluate_budgets(model, pw, source, corrected)
    check_noise_factor(f1, nf_budget.expanded_db, what="noise figure", causes=Y_CAUSES)
    refuse_quantisation(nf_budget)
    budgets = {"noise_figure_db": nf_budget}
    if gain_budget is not None:
        budgets["gain_db"] = gain_budget
    budgets.update(other_budgets(model, pw, source, corrected))
    return _Headline(pw, model, y12, f12, f2, g1, f1, budgets)


def _pair_repeats(nfs: list[float], notes: list[str]) -> YRepeats | None:
    """Scatter and drift of the NF over repeated hot/cold pairs (each pair's NF, NaN where it has none)."""
    if len(nfs) < 2:
        return None
    arr = np.array(nfs)
    slope = float(np.polyfit(np.arange(arr.size), arr, 1)[0]) if np.all(np.isfinite(arr)) else math.nan
    repeats = YRepeats(len(nfs), tuple(nfs), float(np.nanstd(arr, ddof=1)), slope)
    if math.isfinite(slope) and abs(slope) * (arr.size - 1) > 2 * max(float(np.nanstd(arr, ddof=1)), 1e-9):
        notes.append(f"the noise figure drifts by {slope:+.3f} dB per hot/cold pair: let the source and "
                     f"the DUT settle")
    return repeats


def _assemble(head: _Headline, sp: StateSpectra, *, source: HotColdSource, corrected: bool, floor: Psd | None,
              band: Band, first: Source, excluded: dict[str, Any], passives: Sequence[PassiveStage],
              rows: tuple[YRow, ...], spots: tuple[YRow, ...],
              repeats: YRepeats | None, files: YFiles, notes: list[str]) -> YFactorResult:
    f1, f12, f2, g1, model, budgets = head.f1, head.f12, head.f2, head.g1, head.model, head.budgets
    return YFactorResult(
        method="enr" if source.method == "enr" else "two-temperature",
        noise_figure_db=10 * math.log10(f1) if f1 > 0 else math.nan,
        noise_temperature_k=float(noise_temperature_from_factor(f1)),
        noise_temperature_u95_k=_te_u95(f1, budgets["noise_figure_db"].expanded_db),
        gain_db=10 * math.log10(g1) if g1 and g1 > 0 else None,
        y_factor_db=float(power_db(head.y12)),
        second_stage_corrected=corrected,
        floor_subtracted=floor is not None,
        system_noise_figure_db=10 * math.log10(f12) if f12 > 0 else math.nan,
        receiver_noise_figure_db=10 * math.log10(f2) if f2 and f2 > 0 else None,
        t_hot_k=model.source.hot_k(model.f), t_cold_k=source.cold_k, enr_db=model.enr0,
        band_hz=(band.low_hz, band.high_hz),
        centre_hz=first.centre_hz if isinstance(first, IqCapture) else None,
        excluded=YExcluded(**excluded),
        passive_stages=tuple(YPassive(p.name, p.side, p.loss_db, p.temperature_k) for p in passives),
        rows=rows, spots=spots, uncertainty=Uncertainty(budgets),
        repeats=repeats, rbw_hz=sp.hot.enbw_hz, n_averages=sp.hot.n_averages, files=files,
        notes=tuple(notes))


def _te_u95(noise_factor: float, nf_u95_db: float) -> float | None:
    """U (k = 2) of the noise temperature from the noise figure's: Te = T0 (F - 1), so
    dTe = T0 F ln(10)/10 dNF (first order, GUM 5.1.2)."""
    if not (noise_factor > 0 and math.isfinite(nf_u95_db)):
        return None
    return T0_K * noise_factor * math.log(10) / 10 * nf_u95_db


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
        nf, _gain = evaluate_budgets(model, pw, source, corrected)
    except (ValueError, ArithmeticError):
        return YRow(centre, None, None, None, None, None)
    return YRow(centre, float(power_db(y12)), 10 * math.log10(f1) if f1 > 0 else None,
                float(noise_temperature_from_factor(f1)), 10 * math.log10(g1) if g1 and g1 > 0 else None,
                nf.expanded_db)
