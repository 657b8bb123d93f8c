"""Noise inputs of a measurement: one rate, one calibration, and a checked Welch spectrum of each.

A noise input is a :class:`~benchnf.capture.Capture` or an instrument trace already in volts
(:class:`~benchnf.dsp.spectrum.Psd`).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any, Union

import numpy as np

from ..capture import Capture
from ..dsp.spectrum import Psd
from ..errors import CaptureError
from ..streaming import stream_spectrum

__all__ = ["NoiseInput", "Progress", "capture_psd", "QUANTISATION_MARGIN_DB", "check_rates", "with_vpfs",
           "label_of", "path_of"]

Progress = Callable[[int], None]
NoiseInput = Union[Capture, Psd]


def capture_psd(capture: NoiseInput, *, segment_length: int, progress: Progress | None = None,
                purpose: str = "noise analysis") -> Psd:
    """Calibrated Hann Welch PSD of a noise capture, refusing clipped or silent ones.

    A :class:`Psd` (e.g. an instrument trace) is returned as it is, if in volts.
    """
    if isinstance(capture, Psd):
        if capture.unit != "V":
            raise CaptureError("a spectrum given directly must be in volts")
        return capture
    vpfs = capture.volts_per_fs_or_raise(purpose)
    acc, stats = stream_spectrum(capture, segment_length=segment_length, progress=progress, energy=False)
    stats.check_noise()
    if acc.n_averages < 2:
        raise CaptureError(f"{capture.label} lasts {capture.duration_s:.3g} s, too short for a "
                           f"noise spectrum with {segment_length}-sample segments: record at least "
                           f"{3 * segment_length / capture.sample_rate_hz:.2g} s")
    psd = acc.result(unit="V", scale=vpfs)
    _refuse_near_quantisation(capture, psd, vpfs)
    return psd


# A noise capture must lie this far above its format's quantisation noise (10 dB: a standard deviation of
# about one step), else rounding, not the signal, sets what the floor subtraction sees.
QUANTISATION_MARGIN_DB = 10.0


def _refuse_near_quantisation(capture: Capture, psd: Psd, vpfs: float) -> None:
    """Refuse a noise capture within QUANTISATION_MARGIN_DB of its integer format's quantisation noise.

    Rounding to steps of q adds white noise of density q^2/(6 fs) one-sided (q^2/12 over fs/2) only
    while the signal spans several steps; below about one step it adds less and not independently of
    the signal (Widrow and Kollar, Quantization Noise, 2008, ch. 4-5), so no correction is honest there.
    """
    if capture.quantum_fs is None:
        return
    q_v = capture.quantum_fs * vpfs
    quant_density = q_v ** 2 / (6.0 * capture.sample_rate_hz)
    level = float(np.median(psd.psd_v2_per_hz[1:-1]))
    excess_db = 10 * math.log10(level / quant_density) if level > 0 else -math.inf
    if excess_db < QUANTISATION_MARGIN_DB:
        bits = round(1 - math.log2(capture.quantum_fs))
        raise CaptureError(f"{capture.label}: its noise is only {excess_db:.1f} dB above the quantisation noise "
                           f"of its {bits}-bit format (at least {QUANTISATION_MARGIN_DB:g} dB is needed): the "
                           f"format cannot resolve it; add gain before the sound card or record in 24-bit")


def check_rates(fs: float, label: str, inputs: dict[str, Any]) -> None:
    """Every capture (spectrum traces have no sample rate to compare) at one rate."""
    for role, item in inputs.items():
        if isinstance(item, Capture) and item.sample_rate_hz != fs:
            raise CaptureError(f"the {role} capture {item.label} was recorded at {item.sample_rate_hz:g} Hz "
                               f"but {label} at {fs:g} Hz: record all captures at one rate")


def with_vpfs(cap: NoiseInput | None, vpfs: float | None, role: str, label: str) -> NoiseInput | None:
    """Give an uncalibrated capture the terminated capture's calibration; refuse a different one."""
    if cap is None or isinstance(cap, Psd):
        return cap
    if cap.volts_per_fs is None:
        return cap.replace(volts_per_fs=vpfs) if vpfs is not None else cap
    step = cap.metadata.get("input_gain_step_db")  # corrected by a stated step (.together): its own on purpose
    if step is not None and vpfs is not None and math.isclose(cap.volts_per_fs, vpfs * 10 ** (-step / 20),
                                                              rel_tol=1e-12):
        return cap
    if vpfs is not None and cap.volts_per_fs != vpfs:
        raise CaptureError(f"the {role} capture has a different calibration ({cap.volts_per_fs:g} "
                           f"V/FS) from {label} ({vpfs:g} V/FS): all noise captures must come from "
                           f"one analyzer input at one gain setting")
    return cap


def label_of(x: NoiseInput) -> str:
    return x.label if isinstance(x, Capture) else "spectrum trace"


def path_of(x: Any) -> str | None:
    p = getattr(x, "path", None)
    return str(p) if p is not None else None
