"""Checking one unit's results against a profile: verdicts with margins, uncertainty and hints.

Each limit gives a margin (how far the value is inside the limit, positive
when inside, in the figure's unit; for masks and densities in dB).  With U the
expanded (k = 2) uncertainty of the figure, where the results carry one:

* margin >= U: PASS;
* -U < margin < U: MARGINAL (within the uncertainty of the limit: neither a
  confident pass nor a proven failure);
* margin <= -U: FAIL.

Without an uncertainty (U unknown) the limit is taken as sharp.  This follows
the idea of the uncertainty zone of ISO 14253-1 (from memory: conformance, or
non-conformance, is proven only when the measured value lies inside, or
outside, the limit by more than the expanded uncertainty).  The overall
verdict is FAIL if any limit fails, else MARGINAL if any is marginal, else PASS.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..errors import ParameterError
from ..units import eng
from .profile import UNCERTAINTY_OF, Profile

__all__ = ["LimitVerdict", "CheckResult", "check_results", "RESULTS_SCHEMA_VERSION", "HINTS"]

RESULTS_SCHEMA_VERSION = "1"

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
    """One limit checked."""

    name: str
    measured: float | None
    limit: str
    margin: float | None
    unit: str
    uncertainty: float | None
    verdict: str
    hint: str | None

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class CheckResult:
    """A unit against a profile."""

    unit: str
    profile: str
    verdict: str
    limits: tuple[LimitVerdict, ...]
    conditions: dict[str, Any]

    @property
    def failed(self) -> bool:
        return self.verdict == "FAIL"

    def to_dict(self) -> dict[str, Any]:
        return {"schema_version": "1", "kind": "check", "unit": self.unit, "profile": self.profile,
                "verdict": self.verdict, "conditions": self.conditions,
                "limits": [v.to_dict() for v in self.limits]}


def _classify(margin: float | None, u: float | None) -> str:
    if margin is None:
        return "FAIL"
    u = u or 0.0
    if margin >= u and margin >= 0:
        return "PASS"
    if margin > -u:
        return "MARGINAL"
    return "FAIL"


def _check_conditions(results: dict[str, Any], profile: Profile) -> None:
    c = profile.conditions
    for key in ("rs_ohm", "weighting", "sample_rate_hz", "temperature_k"):
        if key in c and results.get(key) is not None:
            a, b = c[key], results[key]
            same = math.isclose(float(a), float(b), rel_tol=1e-6) if key != "weighting" else a == b
            if key == "temperature_k":
                same = abs(float(a) - float(b)) <= 5.0
            if not same:
                raise ParameterError(f"the unit was measured with {key} = {b!r} but the profile {profile.name!r} "
                                     f"applies to {a!r}: measure it under the profile's conditions")
    if "band_hz" in c and results.get("band_hz") is not None:
        if [float(x) for x in c["band_hz"]] != [float(x) for x in results["band_hz"]]:
            raise ParameterError(f"the unit was measured over {results['band_hz']} Hz but the profile applies to "
                                 f"{c['band_hz']} Hz: analyse it with the profile's band")
    if "gain_setting" in c and results.get("gain_setting") not in (None, c["gain_setting"]):
        raise ParameterError(f"the unit was measured at gain setting {results.get('gain_setting')!r}, the profile "
                             f"is for {c['gain_setting']!r}")


def check_results(results: dict[str, Any], profile: Profile, *, unit: str = "unit") -> CheckResult:
    """Check an analysis results dict (``benchnf analyze --json``) against a profile.

    Raises
    ------
    ParameterError
        Another schema version, or other measurement conditions.
    """
    if str(results.get("schema_version")) != RESULTS_SCHEMA_VERSION:
        raise ParameterError(f"the results of {unit} have schema_version {results.get('schema_version')!r}; "
                             f"this benchnf checks version {RESULTS_SCHEMA_VERSION}: analyse the unit again")
    _check_conditions(results, profile)
    unc = results.get("uncertainty") or {}
    verdicts = []
    for lim in profile.limits:
        value = results.get(lim.key)
        u = unc.get(UNCERTAINTY_OF.get(lim.key, ""), None)
        u = float(u) if isinstance(u, (int, float)) else None
        if not isinstance(value, (int, float)):
            verdicts.append(LimitVerdict(lim.key, None, _limit_text(lim), None, "", u, "FAIL",
                                         f"the results carry no {lim.key}: the analysis could not resolve it"))
            continue
        margins = []
        if lim.max is not None:
            margins.append(lim.max - value)
        if lim.min is not None:
            margins.append(value - lim.min)
        margin = min(margins)
        verdict = _classify(margin, u)
        verdicts.append(LimitVerdict(lim.key, float(value), _limit_text(lim), margin, _unit(lim.key), u, verdict,
                                     HINTS.get(lim.key) if verdict != "PASS" else None))
    spots = results.get("spot", [])
    rank = {"PASS": 0, "MARGINAL": 1, "FAIL": 2}
    for mask in profile.masks:
        worst_row: tuple[int, float, float, float, float | None] | None = None
        for s in spots:
            v = s.get(mask.quantity)
            at = mask.at(float(s["freq_hz"]))
            if at is None or v is None:
                continue
            margin = (at - v) if mask.quantity == "noise_figure_db" else 20 * math.log10(at / v)
            u = s.get("input_density_expanded_db") if mask.quantity != "noise_figure_db" else None
            key = (rank[_classify(margin, u)], -margin)
            if worst_row is None or key > (worst_row[0], -worst_row[1]):
                worst_row = (key[0], margin, float(s["freq_hz"]), float(v), u)
        if worst_row is None:
            verdicts.append(LimitVerdict(f"mask {mask.quantity}", None, "mask", None, "dB", None, "FAIL",
                                         "no spot value lies inside the mask's span"))
            continue
        _r, margin, f_worst, value, u = worst_row
        verdict = _classify(margin, u)
        at = mask.at(f_worst) or math.nan  # a worst point lies inside the mask's span
        shown = f"mask {at * 1e9:.3g} nV/rtHz" if mask.quantity.endswith("v_per_rthz") else f"mask {at:.4g}"
        verdicts.append(LimitVerdict(f"mask {mask.quantity} (worst at {f_worst:g} Hz)", value, shown, margin, "dB", u,
                                     verdict,
                                     HINTS["input_density_v_per_rthz"] if verdict != "PASS" else None))
    spurs = results.get("spurs", [])
    for h in profile.hum:
        level = math.sqrt(sum(sp["output_vrms"] ** 2 for sp in spurs if h.family in ("all", sp["family"])))
        margin = 20 * math.log10(h.max_output_vrms / level) if level > 0 else math.inf
        verdict = _classify(margin, None)
        verdicts.append(LimitVerdict(f"hum {h.family}", level, f"max {eng(h.max_output_vrms, 'V')}", margin
                                     if math.isfinite(margin) else 99.0, "dB", None, verdict,
                                     HINTS[h.family] if verdict != "PASS" else None))
    overall = ("FAIL" if any(v.verdict == "FAIL" for v in verdicts) else
               "MARGINAL" if any(v.verdict == "MARGINAL" for v in verdicts) else "PASS")
    cond = {k: results.get(k) for k in ("rs_ohm", "temperature_k", "band_hz", "weighting", "detector",
                                         "floor_corrected", "sample_rate_hz")}
    return CheckResult(unit, profile.name, overall, tuple(verdicts), cond)


def _limit_text(lim) -> str:
    if lim.min is not None and lim.max is not None:
        return f"{(lim.min + lim.max) / 2:.4g} +/- {(lim.max - lim.min) / 2:.3g}"
    return f"max {lim.max:.4g}" if lim.max is not None else f"min {lim.min:.4g}"


def _unit(key: str) -> str:
    for suffix, unit in (("_db", "dB"), ("_dbu", "dB"), ("_dbv", "dB"), ("_hz", "Hz"), ("_vrms", "V"),
                         ("_v_per_rthz", "V/rtHz")):
        if key.endswith(suffix):
            return unit
    return ""
