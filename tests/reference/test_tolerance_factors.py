"""The normal tolerance factors benchnf's profiles use (benchnf/check/tolerance.py) against outside values:

* toleranceinterval 1.0.3 (PyPI), whose ``method="exact"`` two-sided factor is the exact one of
  ISO 16269-6 (reference library);
* the two-sided 95 % confidence factors printed in P. M. Berthouex and L. C. Brown, Statistics for
  Environmental Engineers, 2nd ed., Table 21.1 (two decimals; read from the table);
* one-sided 95 %/95 % factors as tabulated in the NIST/SEMATECH e-Handbook, section 7.2.6.3 (from memory).
"""

import pytest

from benchnf.check.tolerance import tolerance_factor

ti = pytest.importorskip("toleranceinterval")


@pytest.mark.parametrize("n", [2, 3, 4, 5, 7, 10, 20, 30, 60])
@pytest.mark.parametrize(("coverage", "confidence"), [(0.95, 0.95), (0.99, 0.95), (0.90, 0.90), (0.95, 0.99)])
def test_two_sided_factor_matches_the_reference_library(n, coverage, confidence):
    want = ti.twoside.normal_factor(n, coverage, confidence, method="exact")
    assert tolerance_factor(n, coverage=coverage, confidence=confidence) == pytest.approx(want, rel=1e-9)


@pytest.mark.parametrize(("n", "p90", "p95", "p99"), [
    (4, 5.37, 6.34, 8.22), (5, 4.29, 5.08, 6.60), (10, 2.86, 3.39, 4.44), (20, 2.32, 2.76, 3.62),
    (30, 2.15, 2.55, 3.35),
])
def test_two_sided_factor_matches_the_printed_table(n, p90, p95, p99):
    for coverage, printed in ((0.90, p90), (0.95, p95), (0.99, p99)):
        assert tolerance_factor(n, coverage=coverage, confidence=0.95) == pytest.approx(printed, abs=0.006)


@pytest.mark.parametrize(("n", "k1"), [(4, 5.144), (5, 4.203), (10, 2.911), (20, 2.396), (30, 2.220)])
def test_one_sided_factor_matches_the_tabulated_values(n, k1):
    assert tolerance_factor(n, sided=1) == pytest.approx(k1, abs=6e-4)  # from memory, 3 decimals


def test_one_sided_bound_matches_the_reference_library():
    import numpy as np
    x = np.array([3.1, 2.9, 3.4, 3.0, 3.2, 2.8])  # INVENTED values
    want = float(np.ravel(ti.oneside.normal(x, 0.95, 0.95))[0])
    got = x.mean() + tolerance_factor(x.size, sided=1) * x.std(ddof=1)
    assert got == pytest.approx(want, rel=1e-9)


def test_impossible_requests_are_refused():
    from benchnf.errors import ParameterError
    with pytest.raises(ParameterError, match="at least 2"):
        tolerance_factor(1)
    with pytest.raises(ParameterError, match="coverage"):
        tolerance_factor(5, coverage=1.0)
