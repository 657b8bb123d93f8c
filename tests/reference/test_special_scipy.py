"""The chi-square quantiles, the normal quantile and the digamma the bench path computes by hand
(benchnf/dsp/special.py, written out so that an analysis need not import scipy.special) against scipy
(PyPI), the reference implementation: scipy.stats.chi2.sf/isf/median, scipy.stats.norm.isf and
scipy.special.digamma."""

import pytest

from benchnf.dsp.special import chi2_isf, chi2_median, chi2_sf, digamma, normal_isf

stats = pytest.importorskip("scipy.stats")
special = pytest.importorskip("scipy.special")

# Degrees of freedom met on the bench: a few averages, a 10 s capture (108), a band sum (3e5), and more.
NU = [1.0, 2.0, 3.892, 10.0, 57.0, 108.09981515711645, 1000.0, 311528.9]


@pytest.mark.parametrize("nu", NU)
@pytest.mark.parametrize("p", [0.5, 0.975, 0.025, 1e-3, 1.2e-7, 1e-12, 0.9999])
def test_chi2_quantile_matches_scipy(nu, p):
    assert chi2_isf(p, nu) == pytest.approx(stats.chi2.isf(p, nu), rel=1e-11)


@pytest.mark.parametrize("nu", NU)
@pytest.mark.parametrize("ratio", [0.1, 0.5, 1.0, 1.5, 3.0])
def test_chi2_survival_matches_scipy(nu, ratio):
    want = stats.chi2.sf(ratio * nu, nu)
    if want > 1e-290:
        assert chi2_sf(ratio * nu, nu) == pytest.approx(want, rel=1e-11)


@pytest.mark.parametrize("nu", NU)
def test_chi2_median_matches_scipy(nu):
    assert chi2_median(nu) == pytest.approx(stats.chi2.median(nu), rel=1e-12)


@pytest.mark.parametrize("x", [0.01, 0.5, 1.0, 2.5, 5.5, 28.5, 54.05, 155764.5])
def test_digamma_matches_scipy(x):
    assert digamma(x) == pytest.approx(float(special.digamma(x)), rel=1e-14, abs=1e-15)


@pytest.mark.parametrize("p", [1e-12, 1e-5, 8.06e-4, 0.02, 0.025, 0.3, 0.5, 0.9, 0.99, 1 - 1e-6])
def test_normal_quantile_matches_scipy_in_both_tails(p):
    # Acklam's rational form is good to about 1.2e-9 relative (its stated accuracy), both tails and centre
    assert normal_isf(p) == pytest.approx(float(stats.norm.isf(p)), rel=2e-9, abs=1e-12)


def test_quantiles_outside_their_domain_are_refused():
    with pytest.raises(ValueError):
        chi2_isf(0.0, 10.0)
    with pytest.raises(ValueError):
        digamma(-1.0)
