"""The few special functions the bench path needs, in plain Python: chi-square quantiles and the digamma.

Why by hand: ``scipy.special`` and ``scipy.stats`` take 130-230 ms to import here, more than a whole
10-second gain-method analysis computes; these few functions are standard numerics and are checked against
scipy itself in the tests (tests/reference/test_special_scipy.py), to 1e-12 relative.

The chi-square survival function of nu degrees of freedom is the regularized upper incomplete gamma function,
``Q(nu/2, x/2)``, evaluated by its series (x < a + 1) or its continued fraction (Lentz's method) as in
Press et al., Numerical Recipes, 3rd ed., sec. 6.2; the quantile inverts it by Newton's method on its
logarithm from the Wilson-Hilferty start. The digamma is the asymptotic series after the recurrence
``psi(x) = psi(x + 1) - 1/x`` (Abramowitz and Stegun, 6.3.5 and 6.3.18).

>>> round(chi2_median(2.0), 12)  # 2 ln 2
1.38629436112
"""

from __future__ import annotations

import math

__all__ = ["chi2_sf", "chi2_isf", "chi2_median", "digamma", "normal_isf"]

_EPS = 1e-16
_TINY = 1e-300


def _log_prefactor(a: float, x: float) -> float:
    """ln(x^a e^-x / Gamma(a)); for large a through Stirling's series about x = a, where the plain sum of
    terms of size a ln a would cancel to a few digits (Temme's form; Abramowitz and Stegun 6.1.41)."""
    if a < 10.0:
        return -x + a * math.log(x) - math.lgamma(a)
    t = x / a - 1.0
    inv = 1.0 / a
    stirling = inv * (1 / 12 - inv * inv * (1 / 360 - inv * inv * (1 / 1260 - inv * inv / 1680)))
    return a * (math.log1p(t) - t) + 0.5 * math.log(a / (2.0 * math.pi)) - stirling


def _lower_series(a: float, x: float) -> float:
    """P(a, x) by its series, for x < a + 1."""
    term = total = 1.0 / a
    ap = a
    for _ in range(10_000):
        ap += 1.0
        term *= x / ap
        total += term
        if abs(term) < abs(total) * _EPS:
            break
    return total * math.exp(_log_prefactor(a, x))


def _upper_fraction(a: float, x: float) -> float:
    """Q(a, x) by its continued fraction (modified Lentz), for x >= a + 1."""
    b = x + 1.0 - a
    c = 1.0 / _TINY
    d = 1.0 / b
    h = d
    for i in range(1, 10_000):
        an = -i * (i - a)
        b += 2.0
        d = an * d + b
        d = _TINY if abs(d) < _TINY else d
        c = b + an / c
        c = _TINY if abs(c) < _TINY else c
        d = 1.0 / d
        delta = d * c
        h *= delta
        if abs(delta - 1.0) < _EPS:
            break
    return math.exp(_log_prefactor(a, x)) * h


def chi2_sf(x: float, nu: float) -> float:
    """P(X > x) for a chi-square variable of `nu` degrees of freedom."""
    if x <= 0:
        return 1.0
    a, y = nu / 2.0, x / 2.0
    return 1.0 - _lower_series(a, y) if y < a + 1.0 else _upper_fraction(a, y)


def _chi2_log_pdf(x: float, nu: float) -> float:
    return _log_prefactor(nu / 2.0, x / 2.0) - math.log(x)


def chi2_isf(p: float, nu: float) -> float:
    """The x with P(X > x) = p, for 0 < p < 1 (the inverse survival function): Newton's method on ln Q inside a
    bracket that bisection keeps, from the Wilson-Hilferty start."""
    if not (0.0 < p < 1.0 and nu > 0):
        raise ValueError(f"chi2_isf needs 0 < p < 1 and nu > 0, not p={p!r}, nu={nu!r}")
    z = normal_isf(p)
    h = 2.0 / (9.0 * nu)
    x = max(nu * (1.0 - h + z * math.sqrt(h)) ** 3, 1e-6 * nu)  # Wilson-Hilferty
    lo, hi = 0.0, x
    while chi2_sf(hi, nu) > p:  # widen until the quantile is bracketed
        lo, hi = hi, hi * 2.0 + 1.0
    target = math.log(p)
    for _ in range(400):
        q = chi2_sf(x, nu)
        if q > p:
            lo = max(lo, x)
        else:
            hi = min(hi, x)
        log_pdf = _chi2_log_pdf(x, nu)
        new = (lo + hi) / 2.0
        if q > 0.0 and log_pdf > -700.0:
            newton = x + (math.log(q) - target) * q / math.exp(log_pdf)  # ln Q falls by pdf/Q per unit x
            if lo < newton < hi:
                new = newton
        if abs(new - x) <= 2e-16 * x or hi - lo <= 2e-16 * hi:
            return new
        x = new
    return x


def normal_isf(p: float) -> float:
    """The standard normal's upper quantile z(p), P(Z > z) = p (Acklam's rational form, relative error ~1e-9)."""
    a = (-3.969683028665376e+01, 2.209460984245205e+02, -2.759285104469687e+02, 1.383577518672690e+02,
         -3.066479806614716e+01, 2.506628277459239e+00)
    b = (-5.447609879822406e+01, 1.615858368580409e+02, -1.556989798598866e+02, 6.680131188771972e+01,
         -1.328068155288572e+01)
    c = (-7.784894002430293e-03, -3.223964580411365e-01, -2.400758277161838e+00, -2.549732539343734e+00,
         4.374664141464968e+00, 2.938163982698783e+00)
    d = (7.784695709041462e-03, 3.224671290700398e-01, 2.445134137142996e+00, 3.754408661907416e+00)
    q_low = 1.0 - p  # the lower-tail probability of the same quantile
    if q_low < 0.02425:
        t = math.sqrt(-2.0 * math.log(q_low))
        return (((((c[0] * t + c[1]) * t + c[2]) * t + c[3]) * t + c[4]) * t + c[5]) / \
            ((((d[0] * t + d[1]) * t + d[2]) * t + d[3]) * t + 1.0)
    if q_low > 1.0 - 0.02425:
        t = math.sqrt(-2.0 * math.log(p))
        return -(((((c[0] * t + c[1]) * t + c[2]) * t + c[3]) * t + c[4]) * t + c[5]) / \
            ((((d[0] * t + d[1]) * t + d[2]) * t + d[3]) * t + 1.0)
    t = q_low - 0.5
    r = t * t
    return (((((a[0] * r + a[1]) * r + a[2]) * r + a[3]) * r + a[4]) * r + a[5]) * t / \
        (((((b[0] * r + b[1]) * r + b[2]) * r + b[3]) * r + b[4]) * r + 1.0)


def chi2_median(nu: float) -> float:
    """The median of a chi-square variable of `nu` degrees of freedom."""
    return chi2_isf(0.5, nu)


def digamma(x: float) -> float:
    """psi(x), the logarithmic derivative of the gamma function, for x > 0."""
    if not x > 0:
        raise ValueError(f"digamma is used here for x > 0 only, not {x!r}")
    shift = 0.0
    while x < 16.0:
        shift -= 1.0 / x
        x += 1.0
    inv2 = 1.0 / (x * x)
    series = inv2 * (1 / 12 - inv2 * (1 / 120 - inv2 * (1 / 252 - inv2 * (1 / 240 - inv2 * (1 / 132 - inv2 * (
        691 / 32760 - inv2 / 12))))))
    return shift + math.log(x) - 0.5 / x - series
