"""The cross-spectrum estimate of a DUT's output noise: two analyzer inputs on one output.

Each input adds its own noise; the averaged co-spectrum of the two channels keeps only what both see (the
DUT, and the analyzer's correlated background, which a recording with both inputs terminated measures and
which is subtracted). Its statistics are :mod:`benchnf.dsp.cross`'s; this module opens the estimate for the
gain-method pipeline and summarises it (averages, the density it resolves, the margin under the channels'
own noise, the time more recording needs for a wanted uncertainty). Equations: docs/cross.md.

References
----------
.. [1] E. Rubiola and F. Vernotte, "The cross-spectrum experimental method", arXiv:1003.0113 (2010).
.. [2] J. S. Bendat and A. G. Piersol, Random Data, 4th ed., Wiley 2010, §9.2 (section from memory) (variance of the co-spectrum).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np
from numpy.typing import NDArray

from ..capture import Capture
from ..dsp.cross import CrossSpectra
from ..dsp.spectrum import Psd
from ..errors import CaptureError, MeasurementError, ParameterError
from ..noise.floor import band_std
from ..noise.uncertainty import Budget

__all__ = ["CrossSetup", "CrossSummary", "CrossOutput", "check_cross_inputs", "shorted_output", "check_multichannel",
           "less_background", "cross_output", "cross_spectra", "summarise_cross", "check_cross_resolved", "advice",
           "second_input_term", "WANTED_U95_DB"]

#: The uncertainty (k=2, of the band's output noise as an amplitude, Welch part) the advice aims at.
WANTED_U95_DB = 0.5


@dataclass(frozen=True)
class CrossSetup:
    """The terminated recording's second channel on the DUT output, optionally the background recording
    (both inputs terminated) as its two channels, and the shorted recording's second channel."""

    other: Capture
    background: tuple[Capture, Capture] | None = None
    shorted_other: Capture | None = None


@dataclass(frozen=True)
class CrossSummary:
    """How the cross-spectrum estimate was made and what it resolves (output-referred)."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {
        "averages": dict(minimum=1), "resolution_floor_v_per_rthz": dict(minimum=0),
        "background_vrms": dict(minimum=0), "background_upper_vrms": dict(minimum=0),
        "seconds_more_for_wanted_u": dict(minimum=0), "wanted_u95_db": dict(exclusiveMinimum=0)}

    channels: tuple[int, int]
    averages: int
    resolution_floor_v_per_rthz: float  # band median of 2 sqrt(Sxx Syy / nu), as a density
    channel_margin_db: float | None  # the DUT's band power over the channels' own (geometric mean); < 0: below
    background_vrms: float | None  # the correlated background in the band (subtracted); None: not resolved
    background_upper_vrms: float | None  # its upper bound (k=2); None without a background recording
    seconds_more_for_wanted_u: float  # more recording for WANTED_U95_DB (0: reached)
    wanted_u95_db: float = WANTED_U95_DB
    second_volts_per_fs: float | None = None  # the second input's calibration


@dataclass(frozen=True)
class CrossOutput:
    """The DUT's output spectrum estimated from the two channels, with what it was made of."""

    dut: Psd
    spectra: CrossSpectra
    background: CrossSpectra | None
    channels: tuple[int, int]
    background_path: str | None
    second_volts_per_fs: float | None = None


def check_cross_inputs(runs: Sequence[Any], *, floor: Any, shorted: Any) -> None:
    """One terminated recording, no floor, and a shorted input (if any) recorded on both channels too."""
    if len(runs) != 1 or not isinstance(runs[0], Capture):
        raise ParameterError("the cross-spectrum estimate takes one terminated recording of two channels: record "
                             "one longer capture rather than repeats, and not a spectrum trace")
    if floor is not None:
        raise ParameterError("--cross needs no --floor: the two inputs' own noise averages away; give the "
                             "analyzer's correlated background (both inputs terminated) with --background")
    if shorted is not None and not isinstance(shorted, Capture):
        raise ParameterError("with --cross the shorted input is a recording of both channels, not a spectrum "
                             "trace: record it as the terminated one")


def check_multichannel(*, cross: CrossSetup | None, references: Sequence[Any], detector: str,
                       terminated: Any) -> None:
    """The cross-spectrum and the references each estimate the output from one multi-channel recording."""
    if (cross is not None or references) and detector == "qp":
        raise ParameterError("the quasi-peak meter reads one channel's waveform: it cannot take the cross-spectrum "
                             "or the reference-conditioned estimate; use --detector rms")
    if references and (isinstance(terminated, (list, tuple)) and len(terminated) != 1):
        raise ParameterError("--reference-channel takes one terminated recording that holds the references too, "
                             "not repeats")


def cross_output(run: Capture, cross: CrossSetup, *, segment_length: int,
                 progress: Any = None) -> CrossOutput:
    """The terminated recording's two channels and the background's, as one estimate of the DUT's output."""
    other = cross.other
    spectra = cross_spectra(run, other, segment_length=segment_length, progress=progress)  # type: ignore[arg-type]
    background = None
    if cross.background is not None:
        bx, by = cross.background
        if bx.sample_rate_hz != run.sample_rate_hz:
            raise CaptureError(f"the background {bx.label} was recorded at {bx.sample_rate_hz:g} Hz but "
                               f"{run.label} at {run.sample_rate_hz:g} Hz: record both at one rate")
        background = cross_spectra(bx, by, segment_length=segment_length, progress=progress)
    path = cross.background[0].path if cross.background is not None else None
    return CrossOutput(spectra.dut_psd(background), spectra, background, (run.channel, other.channel),
                       str(path) if path is not None else None, other.volts_per_fs)


def shorted_output(run: Capture, cross: CrossSetup, background: CrossSpectra | None, *, segment_length: int,
                   progress: Any = None) -> Psd:
    """The shorted recording's two channels as one estimate of the DUT's output with its input shorted (its
    voltage noise alone), less the analyzer's correlated background measured once for both recordings."""
    if cross.shorted_other is None:
        raise ParameterError("the shorted recording's second channel was not opened: give --shorted with --cross")
    spectra = cross_spectra(run, cross.shorted_other, segment_length=segment_length, progress=progress)
    return spectra.dut_psd(background)


def less_background(dut: Psd, background: CrossSpectra | None) -> Psd:
    """A co-spectrum estimate less the background's co-spectrum (independent estimates: variances add)."""
    if background is None:
        return dut
    from ..dsp.cross import co_spectrum_psd
    var = dut.bin_variance if dut.bin_variance is not None else np.zeros_like(dut.psd_per_hz)
    return co_spectrum_psd(dut.frequency_hz, dut.psd_per_hz - background.co, var + background.co_variance,
                           sample_rate_hz=dut.sample_rate_hz, segment_length=dut.segment_length, hop=dut.hop,
                           n_averages=dut.n_averages, dof=background.dof)


def cross_spectra(x: Capture, y: Capture, *, segment_length: int, progress: Any = None) -> CrossSpectra:
    """The calibrated auto- and cross-spectra of two channels of one recording, refusing clipped or silent
    channels (as a single-channel noise capture is)."""
    from ..streaming import stream_cross
    vx = x.volts_per_fs_or_raise("the cross-spectrum")
    vy = y.volts_per_fs_or_raise("the cross-spectrum")
    acc, sx, sy = stream_cross(x, y, segment_length=segment_length, progress=progress)
    sx.check_noise()
    sy.check_noise()
    return acc.result(scale_x=vx, scale_y=vy)


def check_cross_resolved(dut: Psd, w: NDArray[np.float64], clean: NDArray[np.float64],
                         variance: NDArray[np.float64], *, what: str) -> None:
    """Refuse a band whose cross-spectrum estimate lies within three standard deviations of zero (the DUT
    is not resolved under the channels' own noise after these averages), saying how much longer to record.

    Raises
    ------
    MeasurementError
    """
    power, std = float(np.dot(w, clean)), band_std(w, variance, dut.correlation_kernel)
    if power > 3.0 * std:
        return
    hop_s = dut.hop / dut.sample_rate_hz
    need = dut.n_averages * (3.0 * std / power) ** 2 if power > 0 else math.inf
    more = (f"record about {_duration((need - dut.n_averages) * hop_s)} more" if math.isfinite(need) else
            "the estimate is at or below zero: check that both inputs see the DUT output, and record longer")
    raise MeasurementError(f"{what}: the DUT is not resolved in the cross-spectrum after {dut.n_averages} averages "
                           f"(band output {power:.3g} ± {3 * std:.2g} V² at 3 sigma); {more}")


def summarise_cross(out: CrossOutput, w: NDArray[np.float64], clean: NDArray[np.float64],
                    variance: NDArray[np.float64]) -> CrossSummary:
    """Averages, resolution floor, channel margin, background level and the recording still needed."""
    spectra, background, dut, channels = out.spectra, out.background, out.dut, out.channels
    used = w > 0
    kernel = dut.correlation_kernel
    power = float(np.dot(w, clean))
    rel = band_std(w, variance, kernel) / power
    wanted_rel = WANTED_U95_DB / (20.0 / math.log(10.0))  # U(k=2) of an amplitude = 2 * 8.686 * rel / 2 dB
    more = max(dut.n_averages * ((rel / wanted_rel) ** 2 - 1.0), 0.0) * dut.hop / dut.sample_rate_hz
    nx = float(np.dot(w, spectra.s_xx)) - power
    ny = float(np.dot(w, spectra.s_yy)) - power
    margin = 10 * math.log10(power / math.sqrt(nx * ny)) if nx > 0 and ny > 0 else None
    bg = bg_upper = None
    if background is not None:
        bg_power = float(np.dot(w, background.co))
        bg_std = band_std(w, background.co_variance, kernel)
        bg = math.sqrt(bg_power) if bg_power > 2.0 * bg_std else None
        bg_upper = math.sqrt(max(bg_power, 0.0) + 2.0 * bg_std)
    return CrossSummary(channels=channels, averages=spectra.n_averages,
                        resolution_floor_v_per_rthz=float(np.sqrt(np.median(spectra.resolution_floor[used]))),
                        channel_margin_db=margin, background_vrms=bg, background_upper_vrms=bg_upper,
                        seconds_more_for_wanted_u=float(more), second_volts_per_fs=out.second_volts_per_fs)


def _duration(seconds: float) -> str:
    if seconds < 90:
        return f"{max(seconds, 1.0):.0f} s"
    if seconds < 5400:
        return f"{seconds / 60:.0f} min"
    return f"{seconds / 3600:.1f} h"


def advice(summary: CrossSummary) -> str:
    """One line: the recording more that would bring the band figures to the wanted uncertainty."""
    if summary.seconds_more_for_wanted_u <= 0:
        return (f"cross-spectrum: {summary.averages} averages already give ±{summary.wanted_u95_db:g} dB or better "
                f"(k=2, statistics of the estimate)")
    return (f"cross-spectrum: record {_duration(summary.seconds_more_for_wanted_u)} more for "
            f"±{summary.wanted_u95_db:g} dB (k=2, statistics of the estimate) on the band output noise")


def second_input_term(budget: Budget, *, u_calibration_rel: float, calibration_pct: float,
                      sensitivity: float = 1.0) -> Budget:
    """Add the two inputs' calibrations to an input-referred figure's budget where a one-channel tone gives
    the gain: the estimate scales as ``v_A v_B`` and the gain as ``v_A``, so ``v_B / v_A`` no longer cancels
    (two independent meter readings: relative standard uncertainty ``sqrt(2) u_cal`` on the power, times the
    figure's `sensitivity` to that power; for a noise figure ``(EIN^2 / N0) / F``). With a stated or
    two-channel gain the budget's calibration term (``2 u_cal`` on the power) already covers ``sqrt(2) u_cal``.
    """
    from ..noise.uncertainty import Contribution, power_rel_to_db
    term = Contribution("the two inputs' calibrations", power_rel_to_db(math.sqrt(2) * u_calibration_rel * sensitivity),
                        f"v_B / v_A does not cancel in the cross-spectrum; +/-{calibration_pct:g} % stated on each")
    return Budget(budget.quantity, budget.value_db, (*budget.contributions, term))
