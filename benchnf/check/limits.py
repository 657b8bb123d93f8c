"""Checking one unit's results against a profile: verdicts with margins, uncertainty and hints.

Each limit gives a margin (how far the value is inside the limit, positive when inside, in the figure's
unit; for masks and densities in dB) and, where the results carry one, the figure's expanded (k = 2)
uncertainty U. The decision rule (:mod:`.decision`: simple acceptance, guarded acceptance or the
uncertainty zones of ISO 14253-1; the profile names one, ``--decision-rule`` may choose another) makes the
verdict, and is stated on every check. Without an uncertainty the limit is taken as sharp. The overall
verdict is FAIL if any limit fails, else MARGINAL if any is marginal, else PASS.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..codec import ResultFile, figure
from ..errors import ParameterError
from ..measure.provenance import Provenance
from ..measure.results import FIGURE_UNITS, RELATIVE_UNITS, AnalysisResult
from ..quantity import Quantity
from .decision import Verdict, check_rule, classify
from .diagnosis import diagnose
from .profile import Profile

__all__ = ["LimitVerdict", "CheckConditions", "CheckResult", "check_results", "HINTS"]

#: Where a failed limit usually points (general trade knowledge, worded as suggestions).
HINTS = {
    "gain_db": "gain off: check the gain-setting components, the supply rails and any gain switch",
    "ein_dbu": "raised broadband noise: suspect the input stage (input devices, their bias, the input resistors)",
    "noise_figure_db": "raised broadband noise: suspect the input stage (input devices, their bias)",
    "nf_at_1khz_db": "raised noise at 1 kHz: suspect the input stage",
    "input_density_v_per_rthz": "noise above the mask: the input stage if broadband; a leaky coupling capacitor "
                                "or a noisy resistor if it rises at low frequencies",
    "flicker_corner_hz": "excess 1/f noise: a leaky coupling capacitor, a noisy (carbon) resistor, or a "
                         "degraded input device",
    "ripple": "raised hum at twice mains: supply ripple; check the reservoir and filter capacitors",
    "mains": "raised mains hum: check grounding, lead routing and shielding (never lift a safety earth)",
    "unclassified": "raised unclassified lines: look for switch-mode or digital interference",
    "all": "raised hum and spurs: check the supply and the grounding (never lift a safety earth)",
}


@dataclass(frozen=True)
class LimitVerdict:
    """One limit checked: the measured value and the margin in the limit's unit, U (k = 2) where known."""

    name: str
    measured: float | None
    limit: str
    margin: float | None
    unit: str
    uncertainty: float | None
    verdict: Verdict
    hint: str | None
    value_unit: str = ""  # the unit of `measured`, `lower` and `upper`
    lower: float | None = None
    upper: float | None = None

    def measured_text(self) -> str:
        """The measured value in its unit (``-133.02 dBu``, ``638 nV``)."""
        return Quantity(self.measured, self.value_unit).text() if self.measured is not None else "-"


@dataclass(frozen=True)
class CheckConditions:
    """The conditions the unit was measured under, as its results state them."""

    rs_ohm: float | None
    temperature_k: float | None
    band_hz: tuple[float, float] | None
    weighting: str | None
    detector: str | None
    floor_corrected: bool | None
    sample_rate_hz: float | None


@dataclass(frozen=True)
class CheckResult(ResultFile):
    """A unit against a profile."""

    KIND = "check"

    unit: str
    profile: str
    verdict: Verdict
    conditions: CheckConditions
    limits: tuple[LimitVerdict, ...]
    decision_rule: str = figure(default="zones", enum=["simple", "guarded", "zones"])
    diagnosis: tuple[str, ...] = ()  # the findings, in the order to act on them (.diagnosis)
    provenance: Provenance | None = figure(default=None, omit_if_none=True)

    @property
    def failed(self) -> bool:
        return self.verdict == "FAIL"


def _check_conditions(results: AnalysisResult, profile: Profile) -> None:
    c = profile.conditions
    for key in ("rs_ohm", "weighting", "sample_rate_hz", "temperature_k"):
        if key in c:
            a, b = c[key], getattr(results, key)
            same = math.isclose(float(a), float(b), rel_tol=1e-6) if key != "weighting" else a == b
            if key == "temperature_k":
                same = abs(float(a) - float(b)) <= 5.0
            if not same:
                raise ParameterError(f"the unit was measured with {key} = {b!r} but the profile {profile.name!r} "
                                     f"applies to {a!r}: measure it under the profile's conditions")
    if "band_hz" in c and [float(x) for x in c["band_hz"]] != [float(x) for x in results.band_hz]:
        raise ParameterError(f"the unit was measured over {list(results.band_hz)} Hz but the profile applies to "
                             f"{c['band_hz']} Hz: analyse it with the profile's band")
    if "floor_corrected" in c and bool(c["floor_corrected"]) != results.floor_corrected:
        said = "with" if results.floor_corrected else "without"
        raise ParameterError(f"the unit was analysed {said} the analyzer floor subtracted but the profile "
                             f"{profile.name!r} was made from units analysed "
                             f"{'with' if c['floor_corrected'] else 'without'} it: give the floor capture "
                             f"(--floor) as the profile's units had it, or make the profile again")


def _scalar(results: AnalysisResult, lim: Any, rule: str) -> LimitVerdict:
    value = results.figure(lim.key)
    unit = FIGURE_UNITS[lim.key][0]
    u = results.figure_u(lim.key)
    text = _limit_text(lim.min, lim.max, unit, value)
    if value is None:
        return LimitVerdict(lim.key, None, text, None, "", u, "FAIL",
                            f"the results carry no {lim.key}: the analysis could not resolve it", unit, lim.min, lim.max)
    relative = unit in RELATIVE_UNITS  # compared as a ratio in dB, as their uncertainty is stated
    margins = []
    if lim.max is not None:
        margins.append(20 * math.log10(lim.max / value) if relative else lim.max - value)
    if lim.min is not None:
        margins.append(20 * math.log10(value / lim.min) if relative else value - lim.min)
    margin = min(margins)
    verdict = classify(margin, u, rule)
    margin_unit = "dB" if relative or unit in ("dBu", "dBV") else unit
    return LimitVerdict(lim.key, float(value), text, margin, margin_unit, u, verdict,
                        HINTS.get(lim.key) if verdict != "PASS" else None, unit, lim.min, lim.max)


def _mask(results: AnalysisResult, mask: Any, rule: str) -> LimitVerdict:
    rank = {"PASS": 0, "MARGINAL": 1, "FAIL": 2}
    unit = "dB" if mask.quantity == "noise_figure_db" else "V/√Hz"
    worst_row: tuple[int, float, float, float, float | None] | None = None
    for s in results.spot:
        v = getattr(s, mask.quantity)
        at = mask.at(s.freq_hz)
        if at is None or v is None or not math.isfinite(v):
            continue
        margin = (at - v) if mask.quantity == "noise_figure_db" else 20 * math.log10(at / v)
        u = s.input_density_expanded_db if mask.quantity != "noise_figure_db" else s.noise_figure_expanded_db
        key = (rank[classify(margin, u, rule)], -margin)
        if worst_row is None or key > (worst_row[0], -worst_row[1]):
            worst_row = (key[0], margin, s.freq_hz, float(v), u)
    if worst_row is None:
        return LimitVerdict(f"mask {mask.quantity}", None, "mask", None, "dB", None, "FAIL",
                            "no spot value lies inside the mask's span", unit)
    _r, margin, f_worst, value, u = worst_row
    verdict = classify(margin, u, rule)
    at = mask.at(f_worst) or math.nan  # a worst point lies inside the mask's span
    return LimitVerdict(f"mask {mask.quantity} (worst at {f_worst:g} Hz)", value, f"max {Quantity(at, unit).text()}",
                        margin, "dB", u, verdict, HINTS["input_density_v_per_rthz"] if verdict != "PASS" else None,
                        unit, None, at)


def _hum(results: AnalysisResult, h: Any, rule: str) -> LimitVerdict:
    level = math.sqrt(sum(sp.output_vrms ** 2 for sp in results.spurs if h.family in ("all", sp.family)))
    margin = 20 * math.log10(h.max_output_vrms / level) if level > 0 else math.inf
    verdict = classify(margin, None, rule)
    return LimitVerdict(f"hum {h.family}", level, f"max {_in_unit_of(h.max_output_vrms, level, 'V')}",
                        margin if math.isfinite(margin) else 99.0, "dB", None, verdict,
                        HINTS[h.family] if verdict != "PASS" else None, "V", None, h.max_output_vrms)


def check_results(results: AnalysisResult, profile: Profile, *, unit: str = "unit",
                  decision_rule: str | None = None) -> CheckResult:
    """Check a unit's gain-method result against a profile, by `decision_rule` (default: the profile's).

    Raises
    ------
    ParameterError
        Other measurement conditions than the profile's; an unknown decision rule.
    """
    rule = check_rule(decision_rule or profile.decision_rule)
    _check_conditions(results, profile)
    verdicts = ([_scalar(results, lim, rule) for lim in profile.limits]
                + [_mask(results, m, rule) for m in profile.masks] + [_hum(results, h, rule) for h in profile.hum])
    overall: Verdict = ("FAIL" if any(v.verdict == "FAIL" for v in verdicts) else
                        "MARGINAL" if any(v.verdict == "MARGINAL" for v in verdicts) else "PASS")
    r = results
    cond = CheckConditions(r.rs_ohm, r.temperature_k, r.band_hz, r.weighting, r.detector, r.floor_corrected,
                           r.sample_rate_hz)
    findings = diagnose(verdicts, r.spurs, r.attribution, r.attribution_all)
    return CheckResult(unit, profile.name, overall, cond, tuple(verdicts), rule, findings)


def _in_unit_of(limit: float, measured: float | None, unit: str) -> str:
    """A limit in the display unit of the measured value (``max 1840 nV`` beside ``582 nV``)."""
    shown = Quantity(measured, unit).unit_text() if measured else None
    return Quantity(limit, unit, display=shown or None).text()


def _limit_text(lower: float | None, upper: float | None, unit: str, measured: float | None = None) -> str:
    """A limit in the measured value's unit and digits: ``max -134.70 dBu``, ``39.00 dB to 41.00 dB``."""
    def q(x: float) -> str:
        return _in_unit_of(x, measured, unit)
    if lower is not None and upper is not None:
        return f"{q(lower)} to {q(upper)}"
    return f"max {q(upper)}" if upper is not None else f"min {q(lower)}"  # type: ignore[arg-type]
