"""Statistical tolerance intervals of a normal population, for limits made from known-good units.

From N units with mean ``x̄`` and standard deviation ``s`` (N - 1 in the denominator), the interval
``x̄ ± k2 s`` (two-sided) or the bound ``x̄ + k1 s`` (one-sided) contains at least the fraction `coverage`
of the population with the stated `confidence`. The factors are the exact ones of ISO 16269-6 (the
statistical tolerance intervals standard) for a normal population of unknown mean and variance:

* one-sided: ``k1 = t'_{γ}(N - 1, z_p sqrt(N)) / sqrt(N)``, with ``t'`` the quantile of the noncentral t
  distribution (N - 1 degrees of freedom, noncentrality ``z_p sqrt(N)``) and ``z_p`` the standard normal
  quantile of the coverage p;
* two-sided: the k2 that solves (Odeh and Owen's integral; Wald and Wolfowitz's formulation)

      γ = 2 ∫_0^∞ sqrt(N / 2π) exp(-N z² / 2) Q_χ²(ν r(z)² / k2²; ν) dz,   ν = N - 1,

  where ``r(z)`` solves ``Φ(z + r) - Φ(z - r) = p`` and ``Q_χ²`` is the chi-square survival function.

References
----------
.. [1] ISO 16269-6:2014, Statistical interpretation of data - Part 6: Determination of statistical
       tolerance intervals (the exact factors, from memory of its method; its tables are not reproduced).
.. [2] R. E. Odeh, D. B. Owen, Tables for Normal Tolerance Limits, Sampling Plans and Screening, 1980.
.. [3] NIST/SEMATECH e-Handbook of Statistical Methods, section 7.2.6.3, tolerance intervals for a normal
       distribution.
"""

from __future__ import annotations

import math

__all__ = ["tolerance_factor", "MIN_UNITS"]

#: The fewest known-good units a profile is made from: with two, the spread is one difference and the
#: two-sided 95 %/95 % factor is 36.5; with three it is 9.8, and it falls to 6.3 with four.
MIN_UNITS = 3


def _check(n: int, coverage: float, confidence: float) -> None:
    from ..errors import ParameterError
    if n < 2:
        raise ParameterError(f"a tolerance interval needs at least 2 values, not {n}")
    for name, v in (("coverage", coverage), ("confidence", confidence)):
        if not (math.isfinite(v) and 0.5 <= v < 1.0):
            raise ParameterError(f"the {name} {v!r} must lie in [0.5, 1) (e.g. 0.95)")


def tolerance_factor(n: int, *, coverage: float = 0.95, confidence: float = 0.95, sided: int = 2) -> float:
    """The normal tolerance factor k for N values (see the module's equations).

    Parameters
    ----------
    n : int
        Number of values (units), >= 2.
    coverage : float
        Fraction p of the population the interval contains (0.95).
    confidence : float
        Confidence γ that it does (0.95).
    sided : {1, 2}
        One-sided bound or two-sided interval.

    Returns
    -------
    float
        k, so that ``x̄ + k s`` (one-sided) or ``x̄ ± k s`` (two-sided) is the tolerance limit.
    """
    _check(n, coverage, confidence)
    from scipy import stats
    if sided == 1:
        return float(stats.nct.ppf(confidence, n - 1, stats.norm.isf(1 - coverage) * math.sqrt(n)) / math.sqrt(n))
    if sided != 2:
        raise ValueError(f"sided must be 1 or 2, not {sided!r}")
    return _two_sided(n, coverage, confidence)


def _half_width(z: float, p: float) -> float:
    """r with Φ(z + r) - Φ(z - r) = p: the half-width, about an offset mean z, that holds the fraction p."""
    from scipy import optimize, stats
    hi = abs(z) + float(stats.norm.isf((1 - p) / 2)) + 1.0
    return float(optimize.brentq(lambda r: stats.norm.cdf(z + r) - stats.norm.cdf(z - r) - p, 0.0, hi,
                                 xtol=1e-14, rtol=1e-14))


def _two_sided(n: int, p: float, gamma: float) -> float:
    from scipy import integrate, optimize, stats
    nu = n - 1
    z_max = 10.0 / math.sqrt(n)  # exp(-n z^2 / 2) is below 2e-22 beyond
    zs_r: dict[float, float] = {}

    def r_of(z: float) -> float:
        if z not in zs_r:
            zs_r[z] = _half_width(z, p)
        return zs_r[z]

    def confidence_of(k: float) -> float:
        def integrand(z: float) -> float:
            return (math.sqrt(n / (2 * math.pi)) * math.exp(-n * z * z / 2)
                    * float(stats.chi2.sf(nu * r_of(z) ** 2 / (k * k), nu)))
        value, _err = integrate.quad(integrand, 0.0, z_max, epsabs=1e-13, epsrel=1e-11, limit=200)
        return 2 * value

    start = float(stats.norm.isf((1 - p) / 2)) * math.sqrt(nu * (1 + 1 / n) / stats.chi2.ppf(1 - gamma, nu))
    return float(optimize.brentq(lambda k: confidence_of(k) - gamma, start / 3, start * 3, xtol=1e-12,
                                 rtol=1e-12))
