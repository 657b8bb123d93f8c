"""The ITU-R BS.468-4 quasi-peak noise meter: 468 weighting, full-wave rectifier, two stages.

BS.468-4 defines the meter by its response to 5 kHz tone bursts (its
Tables 2 and 3), not by a circuit.  benchnf's meter is a full-wave rectifier
followed by two cascaded peak-charging stages, each a capacitor charged
through an attack resistance while the input exceeds it and always
discharged through a decay resistance:

.. math::

    \\frac{dy}{dt} = \\frac{\\max(x - y, 0)}{\\tau_a} - \\frac{y}{\\tau_d}

The four time constants were fitted (tools/fit_quasipeak.py) so that the
single- and repeated-burst readings fall inside the Recommendation's limits;
the tests check every row of both tables.  The indication is scaled so that
a steady sine reads its RMS value.

The Recommendation specifies the meter, not how to read a fluctuating
indication on noise: benchnf reports the median indication after the meter
has settled, and its 95th percentile beside it.

References
----------
.. [1] ITU-R BS.468-4, "Measurement of audio-frequency noise voltage level in
       sound broadcasting", 1986, sec. 3 and Tables 2 and 3.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import MeasurementError
from .weighting import itu468_response

__all__ = ["QP_TIME_CONSTANTS_S", "QuasiPeakReading", "weighting_fir", "apply_468", "qp_indication",
           "qp_reading", "settling_seconds"]

#: (attack 1, decay 1, attack 2, decay 2) in seconds; fitted, see the module docstring.
QP_TIME_CONSTANTS_S = (0.0015, 0.29, 0.28, 0.28)
_FIR_SECONDS = 0.1


def settling_seconds() -> float:
    """Time the meter needs before its indication of steady noise is representative."""
    return 5.0 * QP_TIME_CONSTANTS_S[3]


def weighting_fir(sample_rate_hz: float, *, normalise_hz: float = 1000.0) -> NDArray[np.float64]:
    """FIR filter with the 468 network's complex response, by frequency sampling.

    The analogue response (magnitude and phase) is sampled on a fine FFT grid up
    to fs/2 and transformed back; the impulse response is kept for 0.1 s (the
    network's response has decayed by then) with a half-Hann taper at its end.
    Unlike a bilinear-transformed IIR it does not sag near Nyquist.
    """
    n = 1 << int(math.ceil(math.log2(_FIR_SECONDS * sample_rate_hz * 4)))
    f = np.fft.rfftfreq(n, 1.0 / sample_rate_hz)
    h = itu468_response(f, normalise_hz=normalise_hz)
    h[0] = 0.0
    ir = np.fft.irfft(h, n)
    keep = int(_FIR_SECONDS * sample_rate_hz)
    taper = np.ones(keep)
    tail = keep // 4
    taper[-tail:] = 0.5 * (1 + np.cos(np.linspace(0, np.pi, tail)))
    return ir[:keep] * taper


def apply_468(samples: ArrayLike, *, sample_rate_hz: float, normalise_hz: float = 1000.0) -> NDArray[np.float64]:
    """The samples through the 468 weighting (FFT convolution, same length)."""
    from scipy import signal
    x = np.asarray(samples, dtype=np.float64)
    return signal.oaconvolve(x, weighting_fir(sample_rate_hz, normalise_hz=normalise_hz))[: x.size]


def _stage(x: list[float], attack: float, decay: float) -> list[float]:
    # Exact discretisation would cost more than it gains at audio rates: forward Euler with
    # per-sample coefficients a = dt/tau_a, d = dt/tau_d (dt << every tau).
    y = 0.0
    out = [0.0] * len(x)
    for i, v in enumerate(x):
        if v > y:
            y += attack * (v - y)
        y -= decay * y
        out[i] = y
    return out


def _steady_gain(sample_rate_hz: float) -> float:
    """Indication of a steady unit-RMS 5 kHz sine, to scale the meter (computed once per rate)."""
    t = np.arange(int(3.0 * sample_rate_hz)) / sample_rate_hz
    raw = _raw_indication(np.sqrt(2) * np.sin(2 * np.pi * 5000.0 * t), sample_rate_hz)
    return float(np.max(raw[-int(0.5 * sample_rate_hz):]))


def _raw_indication(rectifiable: NDArray[np.float64], sample_rate_hz: float) -> NDArray[np.float64]:
    dt = 1.0 / sample_rate_hz
    ta1, td1, ta2, td2 = QP_TIME_CONSTANTS_S
    first = _stage(np.abs(rectifiable).tolist(), dt / ta1, dt / td1)
    return np.asarray(_stage(first, dt / ta2, dt / td2))


_GAIN_CACHE: dict[float, float] = {}


def qp_indication(weighted: ArrayLike, *, sample_rate_hz: float) -> NDArray[np.float64]:
    """Meter indication against time for an already weighted signal (steady sine reads its RMS)."""
    if sample_rate_hz not in _GAIN_CACHE:
        _GAIN_CACHE[sample_rate_hz] = _steady_gain(sample_rate_hz)
    return _raw_indication(np.asarray(weighted, dtype=np.float64), sample_rate_hz) / _GAIN_CACHE[sample_rate_hz]


@dataclass(frozen=True)
class QuasiPeakReading:
    """Quasi-peak reading of noise, in the unit of the samples."""

    median: float
    p95: float
    seconds_used: float


def qp_reading(samples: ArrayLike, *, sample_rate_hz: float, normalise_hz: float = 1000.0) -> QuasiPeakReading:
    """468-weighted quasi-peak reading of a noise capture.

    Raises
    ------
    MeasurementError
        The capture is too short for the meter to settle.
    """
    x = np.asarray(samples, dtype=np.float64)
    need = settling_seconds() + 2.0
    if x.size < need * sample_rate_hz:
        raise MeasurementError(
            f"a quasi-peak reading needs at least {need:.1f} s of capture (the meter settles in "
            f"{settling_seconds():.1f} s, then 2 s are read); this one lasts {x.size / sample_rate_hz:.2f} s")
    ind = qp_indication(apply_468(x - x.mean(), sample_rate_hz=sample_rate_hz, normalise_hz=normalise_hz),
                        sample_rate_hz=sample_rate_hz)
    settled = ind[int(settling_seconds() * sample_rate_hz):]
    return QuasiPeakReading(float(np.median(settled)), float(np.percentile(settled, 95)),
                            settled.size / sample_rate_hz)
