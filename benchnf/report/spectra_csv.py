"""The full spectra of a gain-method analysis as CSV, to take away: one row per frequency bin.

Columns carry their unit in the name. ``*_u95_db`` columns are the expanded (k = 2) uncertainty of each
bin from its Welch statistics alone: a bin's power has relative standard deviation sqrt(2/nu) for nu
degrees of freedom (Welch 1967; Bendat and Piersol, Random Data, 4th ed., 2010, ch. 8), the floor's
is subtracted in linear power and its scatter added in quadrature; a cross-spectrum estimate's bins carry
their own variance (docs/cross.md). The bench parts (calibration, gain,
Rs, temperature) are not per bin: they are in the JSON's uncertainty budgets.
"""

from __future__ import annotations

from typing import Any

import io
import math

import numpy as np
from numpy.typing import NDArray

from ..measure.results import AnalysisResult
from ..units import BOLTZMANN_J_PER_K, T0_K

__all__ = ["spectra_csv", "SPECTRA_COLUMNS"]

SPECTRA_COLUMNS = ("frequency_hz", "output_v2_per_hz", "floor_v2_per_hz", "output_corrected_v2_per_hz",
                   "input_v2_per_hz", "input_v_per_rthz", "input_u95_db", "voltage_noise_v2_per_hz",
                   "noise_figure_db", "noise_figure_u95_db", "power_gain")


def _spectra(r: AnalysisResult) -> Any:
    """The result's spectra (in memory only: a result read back from its JSON has none)."""
    from ..errors import BenchError
    if r.spectra is None:
        raise BenchError("this result has no spectra in memory (it was read back from its JSON): analyse the "
                         "captures again to write every bin")
    return r.spectra


def _bin_rel_std(r: AnalysisResult) -> NDArray[np.float64]:
    """Relative standard deviation of each bin's floor-corrected power (inf where not above the floor)."""
    s = _spectra(r)
    if s.output_variance_v4_per_hz2 is not None:  # a cross-spectrum estimate: each bin's own variance
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(s.output_v2_per_hz > 0, np.sqrt(s.output_variance_v4_per_hz2) / s.output_v2_per_hz,
                            np.inf)
    m = s.output_v2_per_hz * math.sqrt(2.0 / r.dof)
    if s.floor_v2_per_hz is None or s.floor_dof is None:
        return np.full(m.shape, math.sqrt(2.0 / r.dof))
    fl = s.floor_v2_per_hz * math.sqrt(2.0 / s.floor_dof)
    p = s.output_v2_per_hz - s.floor_v2_per_hz
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(p > 0, np.hypot(m, fl) / p, np.inf)


def _columns(r: AnalysisResult) -> dict[str, NDArray[np.float64] | None]:
    s = _spectra(r)
    rel = _bin_rel_std(r)
    e2 = s.input_v2_per_hz
    n0 = 4 * BOLTZMANN_J_PER_K * T0_K * r.rs_ohm
    factor = np.power(10.0, s.noise_figure_db / 10)
    with np.errstate(divide="ignore", invalid="ignore"):
        input_u95_db = 20 / math.log(10) * rel  # amplitude dB of k = 2 on a power of relative std rel
        nf_u95_db = 10 / math.log(10) * 2 * rel * e2 / n0 / factor
    return {"frequency_hz": s.frequency_hz, "output_v2_per_hz": s.output_v2_per_hz,
            "floor_v2_per_hz": s.floor_v2_per_hz, "output_corrected_v2_per_hz": s.output_corrected_v2_per_hz,
            "input_v2_per_hz": e2, "input_v_per_rthz": np.sqrt(e2), "input_u95_db": input_u95_db,
            "voltage_noise_v2_per_hz": s.voltage_noise_v2_per_hz, "noise_figure_db": s.noise_figure_db,
            "noise_figure_u95_db": nf_u95_db, "power_gain": s.power_gain}


def _cell(v: float) -> str:
    return format(float(v), ".17g") if math.isfinite(v) else ""


def spectra_csv(r: AnalysisResult) -> str:
    """The CSV text: a few ``#`` lines with the conditions, a header row, one row per bin (empty = no value)."""
    cols = _columns(r)
    out = io.StringIO()
    out.write(f"# benchnf spectra, gain method: Rs {r.rs_ohm:g} ohm at {r.temperature_k:g} K; NF referred to "
              f"T0 = 290 K; densities one-sided and unweighted; RBW {r.rbw_hz:.4g} Hz, {r.dof:.1f} degrees of "
              f"freedom per bin\n")
    out.write("# *_u95_db: expanded (k=2) uncertainty of each bin from its Welch statistics only; the bench "
              "parts are in the JSON budgets. Empty cell: no value (not above the floor, or not measured)\n")
    out.write(",".join(SPECTRA_COLUMNS) + "\n")
    n = _spectra(r).frequency_hz.size
    blank = np.full(n, np.nan)
    arrays = [np.asarray(cols[c] if cols[c] is not None else blank, dtype=np.float64) for c in SPECTRA_COLUMNS]
    for i in range(n):
        out.write(",".join(_cell(a[i]) for a in arrays) + "\n")
    return out.getvalue()
