"""Amplifier voltage and current noise (en, in) from captures at several source resistances.

With the input terminated in Rs at temperature T (the gain measured through
Rs, so input loading is included), the input-referred density is

.. math:: e_{ni}^2(R_s) = e_n^2 + 2\\rho\\, e_n i_n R_s + i_n^2 R_s^2 + 4kTR_s

Subtracting the known thermal term leaves a polynomial in Rs whose
coefficients are found per frequency by weighted linear least squares:
``[e_n^2, i_n^2]`` from two or more resistances (uncorrelated model), and the
correlation term ``2 rho e_n i_n`` too from three or more.  Then

.. math::

    R_{opt} = e_n / i_n,\\qquad F_{min} = 1 + \\frac{e_n i_n (1 + \\rho)}{2kT_0},\\qquad
    F(R_s) = 1 + \\frac{e_n^2 + 2\\rho e_n i_n R_s + i_n^2 R_s^2}{4kT_0 R_s}

Best SNR always comes at the lowest source impedance, not at Ropt: Ropt only
makes the amplifier's contribution smallest relative to the source's own noise.

References
----------
.. [1] C. D. Motchenbacher and J. A. Connelly, "Low-Noise Electronic System
       Design", Wiley 1993, ch. 2 (the en-in model, Ropt and Fmin).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import MeasurementError, ParameterError
from ..units import BOLTZMANN_J_PER_K, T0_K

__all__ = ["noise_figure_u95_vs_rs", "EnInFit", "fit_en_in", "noise_factor_vs_rs", "ropt_ohm", "fmin"]


def noise_factor_vs_rs(rs_ohm: ArrayLike, *, en_v_per_rthz: float, in_a_per_rthz: float,
                       correlation: float = 0.0) -> NDArray[np.float64]:
    """F(Rs) of the en-in model referred to T0.

    Examples
    --------
    >>> round(10 * math.log10(float(noise_factor_vs_rs(150.0, en_v_per_rthz=1e-9, in_a_per_rthz=1e-12))), 4)
    1.5401
    """
    rs = np.asarray(rs_ohm, dtype=np.float64)
    amp = en_v_per_rthz ** 2 + 2 * correlation * en_v_per_rthz * in_a_per_rthz * rs + (in_a_per_rthz * rs) ** 2
    return 1 + amp / (4 * BOLTZMANN_J_PER_K * T0_K * rs)


def ropt_ohm(en_v_per_rthz: float, in_a_per_rthz: float) -> float:
    """Source resistance of minimum noise figure, en / in."""
    return en_v_per_rthz / in_a_per_rthz if in_a_per_rthz > 0 else math.inf


def noise_figure_u95_vs_rs(rs_ohm: ArrayLike, *, noise_factor: ArrayLike,
                           cov: NDArray[np.float64]) -> NDArray[np.float64]:
    """Expanded (k=2) uncertainty in dB of the model's NF(Rs), from the fit's covariance of
    ``(en^2, in^2[, 2 rho en in])``: ``F - 1 = (c0 + c1 Rs^2 + c2 Rs) / (4 k T0 Rs)`` is linear in c, so
    ``u(F)^2 = g C g^T`` with ``g = (1, Rs^2[, Rs]) / (4 k T0 Rs)`` (GUM 5.1.2)."""
    rs = np.asarray(rs_ohm, dtype=np.float64)
    cols = [np.ones_like(rs), rs ** 2, rs][: cov.shape[0]]
    g = np.stack(cols, axis=-1) / (4 * BOLTZMANN_J_PER_K * T0_K * rs)[:, None]
    u_f = np.sqrt(np.maximum(np.einsum("ni,ij,nj->n", g, cov, g), 0.0))
    return 10 / math.log(10) * 2 * u_f / np.asarray(noise_factor, dtype=np.float64)


def fmin(en_v_per_rthz: float, in_a_per_rthz: float, correlation: float = 0.0) -> float:
    """Minimum noise factor ``1 + en in (1 + rho) / (2 k T0)``."""
    return 1 + en_v_per_rthz * in_a_per_rthz * (1 + correlation) / (2 * BOLTZMANN_J_PER_K * T0_K)


@dataclass(frozen=True)
class EnInFit:
    """en, in (and rho) against frequency, with standard uncertainties."""

    frequency_hz: NDArray[np.float64]
    en_v_per_rthz: NDArray[np.float64]
    in_a_per_rthz: NDArray[np.float64]
    correlation: NDArray[np.float64] | None
    en_std: NDArray[np.float64]
    in_std: NDArray[np.float64]
    rs_ohm: NDArray[np.float64]
    cov: NDArray[np.float64] | None = None  # (n, p, p): covariance of (en^2, in^2[, 2 rho en in]) per frequency

    def at(self, frequency_hz: float) -> dict[str, Any]:
        """Values at the nearest fitted frequency, with Ropt and NFmin and their uncertainties.

        Only what the sweep determines is given; the rest is None, with the reason under ``undetermined``:
        en or in whose k = 2 interval reaches zero (and so Ropt and NFmin, which need both), a correlation whose
        k = 2 interval is wider than +/-1, an Ropt outside the swept resistances (0 ohm counts) and then NFmin,
        which would be an extrapolation beyond the sweep.
        """
        k = int(np.argmin(np.abs(self.frequency_hz - frequency_hz)))
        en, i_n = float(self.en_v_per_rthz[k]), float(self.in_a_per_rthz[k])
        en_std, in_std = float(self.en_std[k]), float(self.in_std[k])
        rho = float(self.correlation[k]) if self.correlation is not None else 0.0
        why = [f"{name} (its k=2 interval reaches zero)" for name, v, u in (("en", en, en_std), ("in", i_n, in_std))
               if not (math.isfinite(v) and math.isfinite(u) and v - 2 * u > 0)]
        derived = (_derived(en, i_n, rho, self.cov[k] if self.cov is not None else None, self.rs_ohm) if not why
                   else {"undetermined": why + ["Ropt and NFmin (they need both en and in)"]})
        return {"freq_hz": float(self.frequency_hz[k]),
                "en_v_per_rthz": None if any(w.startswith("en ") for w in why) else en,
                "in_a_per_rthz": None if any(w.startswith("in ") for w in why) else i_n,
                "en_std_v_per_rthz": en_std if math.isfinite(en_std) else None,
                "in_std_a_per_rthz": in_std if math.isfinite(in_std) else None,
                "correlation": derived.get("correlation", rho if self.correlation is not None and not why else None),
                "correlation_std": derived.get("correlation_std"),
                "ropt_ohm": derived.get("ropt_ohm"), "ropt_u95_ohm": derived.get("ropt_u95_ohm"),
                "nfmin_db": derived.get("nfmin_db"), "nfmin_u95_db": derived.get("nfmin_u95_db"),
                "undetermined": derived.get("undetermined", [])}


def _derived(en: float, i_n: float, rho: float, cov: NDArray[np.float64] | None,
             rs_ohm: NDArray[np.float64]) -> dict[str, Any]:
    """Ropt, NFmin and the correlation with their uncertainties, by the delta method from the fit's covariance
    of ``c = (en^2, in^2[, 2 rho en in])``: ``Ropt = sqrt(c0/c1)``, ``F_min - 1 = (sqrt(c0 c1) + c2/2) / (2kT0)``,
    ``rho = c2 / (2 sqrt(c0 c1))`` (GUM, JCGM 100:2008, 5.1.2)."""
    c0, c1 = en * en, i_n * i_n
    has_rho = cov is not None and cov.shape[0] == 3
    out: dict[str, Any] = {"ropt_ohm": ropt_ohm(en, i_n), "nfmin_db": 10 * math.log10(fmin(en, i_n, rho)),
                           "undetermined": []}
    if cov is None or not np.all(np.isfinite(cov)):
        return out
    ropt_rel_var = 0.25 * (cov[0, 0] / c0 ** 2 + cov[1, 1] / c1 ** 2 - 2 * cov[0, 1] / (c0 * c1))
    out["ropt_u95_ohm"] = 2 * out["ropt_ohm"] * math.sqrt(max(ropt_rel_var, 0.0))
    kt2 = 2 * BOLTZMANN_J_PER_K * T0_K
    g = np.array([0.5 * math.sqrt(c1 / c0), 0.5 * math.sqrt(c0 / c1), 0.5][: cov.shape[0]]) / kt2
    f_min = fmin(en, i_n, rho)
    out["nfmin_u95_db"] = 10 / math.log(10) * 2 * math.sqrt(max(float(g @ cov @ g), 0.0)) / f_min
    if has_rho:
        s = math.sqrt(c0 * c1)
        gr = np.array([-rho / (2 * c0), -rho / (2 * c1), 1 / (2 * s)])
        out["correlation_std"] = math.sqrt(max(float(gr @ cov @ gr), 0.0))
        if 2 * out["correlation_std"] > 1.0:
            out["correlation"] = None
            out["undetermined"].append("correlation (its k=2 interval is wider than +/-1)")
    low, high = float(rs_ohm.min()), float(rs_ohm.max())  # a shorted input (0 ohm) counts as the low end
    if not low <= out["ropt_ohm"] <= high:
        out["undetermined"].append(f"Ropt and NFmin (Ropt, about {out['ropt_ohm']:.3g} ohm, lies outside the swept "
                                   f"{low:g}-{high:g} ohm: sweep across it)")
        out["ropt_ohm"] = out["ropt_u95_ohm"] = out["nfmin_db"] = out["nfmin_u95_db"] = None
    return out


def fit_en_in(rs_ohm: ArrayLike, density_v2_per_hz: ArrayLike, variance: ArrayLike, *,
              temperature_k: ArrayLike, frequency_hz: ArrayLike, with_correlation: bool | None = None) -> EnInFit:
    """Per-frequency weighted least squares for en^2, in^2 (and 2 rho en in).

    Parameters
    ----------
    rs_ohm : array_like, shape (m,)
        Source resistances (0 for a shorted input).
    density_v2_per_hz : array_like, shape (m, n)
        Input-referred density at each Rs and frequency (source noise included).
    variance : array_like, shape (m, n)
        Variance of each density value (from its Welch statistics).
    temperature_k : array_like, shape (m,)
        Each resistor's temperature.
    frequency_hz : array_like, shape (n,)
    with_correlation : bool, optional
        Fit the correlation term (default: when three or more resistances are given).

    Raises
    ------
    ParameterError
        Fewer than two distinct resistances.
    """
    rs = np.asarray(rs_ohm, dtype=np.float64)
    d = np.asarray(density_v2_per_hz, dtype=np.float64)
    var = np.asarray(variance, dtype=np.float64)
    t = np.broadcast_to(np.asarray(temperature_k, dtype=np.float64), rs.shape)
    if np.unique(rs).size < 2:
        raise ParameterError("en and in need captures at two or more different source resistances")
    if np.any(rs < 0):
        raise ParameterError("source resistances must be >= 0 ohm")
    corr = (np.unique(rs).size >= 3) if with_correlation is None else with_correlation
    y = d - 4 * BOLTZMANN_J_PER_K * t[:, None] * rs[:, None]
    cols = [np.ones_like(rs), rs ** 2] + ([rs] if corr else [])
    a = np.column_stack(cols)
    n = d.shape[1]
    coef = np.full((a.shape[1], n), np.nan)
    cov_all = np.full((n, a.shape[1], a.shape[1]), np.nan)
    for j in range(n):
        w = 1.0 / np.sqrt(np.maximum(var[:, j], 1e-300))
        aw = a * w[:, None]
        try:
            sol, *_ = np.linalg.lstsq(aw, y[:, j] * w, rcond=None)
            cov = np.linalg.inv(aw.T @ aw)
        except np.linalg.LinAlgError:
            continue
        coef[:, j] = sol
        cov_all[j] = cov
    cov_diag = np.diagonal(cov_all, axis1=1, axis2=2).T
    en2, in2 = coef[0], coef[1]
    en = np.sqrt(np.where(en2 > 0, en2, np.nan))
    i_n = np.sqrt(np.where(in2 > 0, in2, np.nan))
    with np.errstate(invalid="ignore", divide="ignore"):
        en_std = np.sqrt(cov_diag[0]) / (2 * en)
        in_std = np.sqrt(cov_diag[1]) / (2 * i_n)
        rho = np.clip(coef[2] / (2 * en * i_n), -1, 1) if corr else None
    if np.all(np.isnan(en)):
        raise MeasurementError("no frequency gives a positive en^2: the captures are noisier at low Rs "
                               "than at high Rs, or the gains are wrong")
    return EnInFit(np.asarray(frequency_hz, dtype=np.float64), en, i_n, rho, en_std, in_std, rs, cov_all)
