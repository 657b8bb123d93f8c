"""Profiles from a population of known-good units: statistical tolerance limits (ISO 16269-6) of their
spread, each moved out by the figure's expanded uncertainty (docs/check.md, "Making a profile")."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import ParameterError
from ..measure.results import AnalysisResult
from .decision import check_rule
from .profile import HumLimit, Mask, Profile, ProfileOrigin, ScalarLimit

__all__ = ["profile_from_results"]

# The figures a profile may set scalar limits on, each with its kind of limit.
_TWO_SIDED = ("gain_db",)
_UPPER = ("ein_dbu", "noise_figure_db", "nf_at_1khz_db")
_HUM_FAMILIES = ("mains", "ripple")


def _conditions_of(results: list[AnalysisResult]) -> dict[str, Any]:
    """The good units' shared conditions (refused where they differ)."""
    def of(r: AnalysisResult) -> dict[str, Any]:
        return {"rs_ohm": r.rs_ohm, "band_hz": list(r.band_hz), "weighting": r.weighting,
                "sample_rate_hz": r.sample_rate_hz, "floor_corrected": r.floor_corrected}
    cond = of(results[0])
    for r in results[1:]:
        for k, v in of(r).items():
            if v != cond[k]:
                raise ParameterError(f"the known-good units were measured under different conditions "
                                     f"({k}: {cond[k]!r} and {v!r}): make one profile per condition")
    temps = [r.temperature_k for r in results]
    if max(temps) - min(temps) > 5.0:  # checks allow 5 K either side (check/limits.py)
        raise ParameterError(f"the known-good units were measured at {min(temps):g} to {max(temps):g} K: "
                             f"more than 5 K apart; make one profile per temperature")
    cond["temperature_k"] = round(sum(temps) / len(temps), 2)
    return cond


def _check_distinct(results: list[AnalysisResult], serials: list[str]) -> None:
    """Refuse one measurement given twice: it would count as two units and narrow the limits."""
    seen: dict[tuple[Any, ...], str] = {}
    for r, serial in zip(results, serials):
        key = (r.gain_db, r.ein_dbu, r.noise_figure_db, r.output_noise_vrms)
        if key in seen:
            raise ParameterError(f"{seen[key]} and {serial} carry the very same figures: one measurement given "
                                 f"twice would count as two units; give each known-good unit once")
        seen[key] = serial


def _check_possible(results: list[AnalysisResult], serials: list[str]) -> None:
    """Refuse a good unit whose figures physics forbids (a noise figure below 0 dB beyond its U): it would
    set limits no amplifier can meet or that pass any unit."""
    for r, serial in zip(results, serials):
        figures = [("noise figure", r.noise_figure_db, r.figure_u("noise_figure_db")),
                   ("noise figure at 1 kHz", r.nf_at_1khz_db, r.figure_u("nf_at_1khz_db")),
                   *((f"spot noise figure at {s.freq_hz:g} Hz", s.noise_figure_db, s.noise_figure_expanded_db)
                     for s in r.spot)]
        for what, value, u in figures:
            if value is not None and math.isfinite(value) and value + (u or 0.0) < 0:
                raise ParameterError(f"unit {serial}: its {what} is {value:.2f} dB, below 0 dB beyond its U, which "
                                     f"no amplifier gives: the results are wrong (see 'benchnf analyze'), so no "
                                     f"profile is made from them; measure that unit again")


@dataclass(frozen=True)
class _Population:
    """The good units and the tolerance factors their limits use."""

    results: list[AnalysisResult]
    k1: float  # one-sided factor
    k2: float  # two-sided factor
    margin_db: float

    def values(self, key: str) -> tuple[np.ndarray, float] | None:
        """The units' values of a figure and the largest U among them; None unless every unit resolves it."""
        vals = [r.figure(key) for r in self.results]
        if any(v is None for v in vals):
            return None
        us = [r.figure_u(key) for r in self.results]
        return np.array(vals, dtype=float), max((u for u in us if u is not None), default=0.0)

    @staticmethod
    def spread(v: np.ndarray) -> tuple[float, float]:
        return float(v.mean()), float(np.std(v, ddof=1))


def _scalar_limits(pop: _Population, skipped: list[str]) -> list[ScalarLimit]:
    n = len(pop.results)
    limits = []
    for key in (*_TWO_SIDED, *_UPPER):
        got = pop.values(key)
        if got is None:
            unresolved = sum(r.figure(key) is None for r in pop.results)
            skipped.append(f"{key} (not resolved in {unresolved} of {n} units)")
            continue
        (mean, sd), u = pop.spread(got[0]), got[1]
        if key in _TWO_SIDED:
            half = pop.k2 * sd + u + pop.margin_db
            limits.append(ScalarLimit(key, mean - half, mean + half, "mean +/- k2 s + U"))
        else:
            limits.append(ScalarLimit(key, None, mean + pop.k1 * sd + u + pop.margin_db, "mean + k1 s + U"))
    corner = _corner_limit(pop)
    if corner is None:
        unresolved = sum(r.flicker_corner_hz is None for r in pop.results)
        skipped.append(f"flicker_corner_hz (not resolved in {unresolved} of {n} units)")
    else:
        limits.append(corner)
    return limits


def _corner_limit(pop: _Population) -> ScalarLimit | None:
    """The 1/f corner's upper limit, on log frequency (corners spread by ratios), when every unit resolves it."""
    got = pop.values("flicker_corner_hz")
    if got is None:
        return None
    corners = got[0]
    u_log = max(math.log10(1 + (r.figure_u("flicker_corner_hz") or 0.0) / c) for r, c in zip(pop.results, corners))
    mean, sd = pop.spread(np.log10(corners))
    top = 10 ** (mean + pop.k1 * sd + u_log + pop.margin_db / 10)
    return ScalarLimit("flicker_corner_hz", None, top, "mean + k1 s + U on log frequency")


def _mask_of(pop: _Population) -> Mask | None:
    """An upper mask on the input-referred spot density at every spot all units resolve, down to the band's
    lower edge: per spot, mean + k1 s + U on the level in dB."""
    per_unit = [{s.freq_hz: s for s in r.spot if s.input_density_v_per_rthz} for r in pop.results]
    freqs = sorted(set.intersection(*(set(d) for d in per_unit)))
    points = []
    for f in freqs:
        spots = [d[f] for d in per_unit]
        level = np.array([20 * math.log10(s.input_density_v_per_rthz) for s in spots])  # type: ignore[arg-type]
        u = max(s.input_density_expanded_db or 0.0 for s in spots)
        mean, sd = pop.spread(level)
        points.append((float(f), 10 ** ((mean + pop.k1 * sd + u + pop.margin_db) / 20)))
    if len(points) < 2:
        return None
    return Mask("input_density_v_per_rthz", tuple(p[0] for p in points), tuple(p[1] for p in points),
                "per spot: mean + k1 s + U of the level in dB")


def _hum_limits(pop: _Population) -> list[HumLimit]:
    """Per family: mean + k1 s of the level in dB where every good unit shows the lines; twice the worst
    where some do; 20 dB below the quietest output noise where none do."""
    out = []
    noise = [r.output_noise_vrms for r in pop.results if r.output_noise_vrms > 0]
    for family in _HUM_FAMILIES:
        levels = [math.sqrt(sum(sp.output_vrms ** 2 for sp in r.spurs if sp.family == family)) for r in pop.results]
        if all(v > 0 for v in levels):
            mean, sd = pop.spread(np.array([20 * math.log10(v) for v in levels]))
            out.append(HumLimit(family, 10 ** ((mean + pop.k1 * sd + pop.margin_db) / 20), "mean + k1 s in dB"))
        elif any(v > 0 for v in levels):
            out.append(HumLimit(family, max(levels) * 2 * 10 ** (pop.margin_db / 20),
                                "found in some good units only: twice the worst"))
        elif noise:
            out.append(HumLimit(family, min(noise) * 0.1 * 10 ** (pop.margin_db / 20),
                                "good units had none: 20 dB below the output noise"))
    return out


def profile_from_results(results: list[AnalysisResult], *, coverage: float = 0.95, confidence: float = 0.95,
                         margin_db: float = 0.0, name: str = "known good", serials: list[str] | None = None,
                         decision_rule: str = "zones") -> Profile:
    """Make a profile from the results of N >= MIN_UNITS known-good units.

    Each limit is a statistical tolerance limit of the good units (normal population; ISO 16269-6 factors,
    :func:`~benchnf.check.tolerance.tolerance_factor`) moved out by the largest expanded uncertainty U
    (k = 2) among the units' values of that figure, since a unit's reading may lie U from its truth, and by
    an optional `margin_db`:

    * gain: ``mean ± (k2 s + U + margin)``;
    * EIN, noise figure, NF at 1 kHz: ``mean + k1 s + U + margin`` (upper limits);
    * 1/f corner: the same on log frequency, only when every unit resolves one;
    * a mask on the input-referred spot density: per spot, on its level in dB, at every spot frequency all
      units resolve, from the band's lower edge up;
    * hum per family: ``mean + k1 s`` on the level in dB (no U: lines are sharp).

    A figure not resolved in every unit gets no limit (and the profile says so). The conditions are the
    units' own and must agree; a unit whose figures physics forbids is refused.

    References
    ----------
    .. [1] ISO 16269-6:2014, statistical tolerance intervals (see :mod:`benchnf.check.tolerance`).
    """
    from .tolerance import MIN_UNITS, tolerance_factor
    serials = list(serials) if serials is not None else [f"unit {i}" for i in range(1, len(results) + 1)]
    if len(results) < MIN_UNITS:
        raise ParameterError(f"a profile needs at least {MIN_UNITS} known-good units, not {len(results)}: their "
                             f"spread sets the limits (with {MIN_UNITS} the tolerance factor is already 9.8); "
                             f"measure more good units")
    if not (math.isfinite(margin_db) and margin_db >= 0):
        raise ParameterError(f"--margin-db {margin_db!r} must be >= 0")
    check_rule(decision_rule)
    _check_distinct(results, serials)
    cond = _conditions_of(results)
    _check_possible(results, serials)
    n = len(results)
    pop = _Population(results, tolerance_factor(n, coverage=coverage, confidence=confidence, sided=1),
                      tolerance_factor(n, coverage=coverage, confidence=confidence, sided=2), margin_db)
    skipped: list[str] = []
    limits = _scalar_limits(pop, skipped)
    mask = _mask_of(pop)
    origin = ProfileOrigin(n, tuple(serials), coverage, confidence, pop.k1, pop.k2, margin_db, tuple(skipped))
    return Profile(name, cond, tuple(limits), (mask,) if mask else (), tuple(_hum_limits(pop)),
                   origin.describe(), origin=origin, decision_rule=decision_rule)
