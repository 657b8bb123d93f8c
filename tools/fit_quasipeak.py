"""Fit the quasi-peak meter's four time constants to ITU-R BS.468-4 Tables 2 and 3.

Prints the fitted constants and the resulting burst readings beside the limits.  The constants
were pasted into benchnf/dsp/quasipeak.py from a run of this script; it is kept as their
provenance.  Run: python tools/fit_quasipeak.py
"""

from __future__ import annotations

import numpy as np
from scipy import optimize

import benchnf.dsp.quasipeak as qp

FS = 48_000.0
# BS.468-4 (transcribed in ../shared/REFERENCES.md): single 5 kHz bursts, reading in % of the
# steady reading (lower, reference, upper); repeated 5 ms bursts (per second, lower, ref, upper).
SINGLE = [(1e-3, 13.5, 17.0, 21.4), (2e-3, 22.4, 26.6, 31.6), (5e-3, 34, 40, 46), (10e-3, 41, 48, 55),
          (20e-3, 44, 52, 60), (50e-3, 50, 59, 68), (100e-3, 58, 68, 78), (200e-3, 68, 80, 92)]
REPEATED = [(2, 43, 48, 53), (10, 72, 77, 82), (100, 94, 97, 100)]


def burst_readings(fs: float = FS) -> tuple[list[float], list[float]]:
    """Readings in % of steady for every row of both tables, with the current constants."""
    qp._GAIN_CACHE.clear()
    single = []
    for dur, *_ in SINGLE:
        t = np.arange(int((dur + 0.3) * fs)) / fs
        x = np.sqrt(2) * np.sin(2 * np.pi * 5000 * t) * (t < dur)
        single.append(100 * float(np.max(qp.qp_indication(x, sample_rate_hz=fs))))
    repeated = []
    for rate, *_ in REPEATED:
        t = np.arange(int(3.0 * fs)) / fs
        gate = (t % (1.0 / rate)) < 5e-3
        x = np.sqrt(2) * np.sin(2 * np.pi * 5000 * t) * gate
        ind = qp.qp_indication(x, sample_rate_hz=fs)
        repeated.append(100 * float(np.max(ind[int(2.0 * fs):])))
    return single, repeated


def main() -> None:
    def cost(log_tau):
        qp.QP_TIME_CONSTANTS_S = tuple(np.exp(log_tau))
        s, r = burst_readings(16_000.0)
        return ([(np.log(v) - np.log(row[2])) / 0.05 for v, row in zip(s, SINGLE)]
                + [(np.log(v) - np.log(row[2])) / 0.02 for v, row in zip(r, REPEATED)])

    start = np.log(qp.QP_TIME_CONSTANTS_S)
    sol = optimize.least_squares(cost, start, diff_step=0.05, max_nfev=200)
    qp.QP_TIME_CONSTANTS_S = tuple(float(f"{v:.2g}") for v in np.exp(sol.x))
    print("fitted time constants (s):", qp.QP_TIME_CONSTANTS_S)
    s, r = burst_readings()
    for v, (dur, lo, ref, hi) in zip(s, SINGLE):
        print(f"single {dur * 1e3:5.0f} ms: {v:5.1f} %  (limits {lo}-{hi}, reference {ref})")
    for v, (rate, lo, ref, hi) in zip(r, REPEATED):
        print(f"repeated {rate:3d}/s   : {v:5.1f} %  (limits {lo}-{hi}, reference {ref})")


if __name__ == "__main__":
    main()
