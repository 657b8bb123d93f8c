"""Uncertainty budgets for EIN, noise figure and gain, after the GUM.

Each input quantity's standard uncertainty is propagated to the result with
its sensitivity coefficient (first-order Taylor series, GUM 5.1.2); the
contributions are independent and combine in quadrature; the expanded
uncertainty uses coverage factor k = 2 (about 95 % for a normal
distribution).  User-stated limits (meter accuracy, tone level, resistor
tolerance, temperature) are taken as rectangular distributions: standard
uncertainty = half-width / sqrt(3) (GUM 4.3.7).

Models (see docs/method.md, section 7):

* Band power of the DUT, ``P = P_m - P_f``: ``u(P)^2 = (P_m u_m)^2 + (P_f u_f)^2``
  with ``u_m``, ``u_f`` the relative Welch scatter of the measured and floor
  band powers.  Near the floor ``P`` is small and ``u(P)/P`` grows without bound.
* EIN^2 = P / G^2 with G proportional to k_cal^a / V_tone^b: a = 1, b = 1 for
  a one-channel tone (so the calibration cancels), a = 0, b = 0 for a
  two-channel tone, and EIN proportional to k_cal for a stated gain.
* F = 1 + EIN^2 / N0 - T / T0, N0 = 4 k T0 Rs B_W: ``dF/dT = -1/T0``,
  ``dF/dRs = -(EIN^2/N0) / Rs``.

References
----------
.. [1] JCGM 100:2008, "Evaluation of measurement data - Guide to the
       expression of uncertainty in measurement" (GUM).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..errors import ParameterError

__all__ = ["propagate", "StatedUncertainty", "Contribution", "Budget", "Uncertainty", "power_rel_to_db",
           "amplitude_rel_to_db", "dut_power_rel_std", "ein_budget", "nf_budget", "gain_budget", "output_noise_budget",
           "welch_dof"]

_DB_PER_NEPER_POWER = 10.0 / math.log(10.0)


def power_rel_to_db(u_rel: float) -> float:
    """Relative standard uncertainty of a power quantity to dB (10 lg): ``4.343 u``."""
    return _DB_PER_NEPER_POWER * u_rel


def amplitude_rel_to_db(u_rel: float) -> float:
    """Relative standard uncertainty of an amplitude quantity to dB (20 lg): ``8.686 u``."""
    return 2.0 * _DB_PER_NEPER_POWER * u_rel


@dataclass(frozen=True)
class StatedUncertainty:
    """Half-widths of the user-stated limits (rectangular distributions).

    The defaults are printed with every budget: a true-RMS meter within 1 %
    of reading at 50-640 Hz, a tone level known to 1 %, a resistor within
    1 %, and its temperature within 2 K.
    """

    calibration_pct: float = 1.0
    tone_level_pct: float = 1.0
    resistor_pct: float = 1.0
    temperature_k: float = 2.0

    def __post_init__(self) -> None:
        for name, value in self.__dict__.items():
            if not (math.isfinite(value) and value >= 0):
                raise ParameterError(f"{name}={value!r} must be a number >= 0")

    @staticmethod
    def _std(half_width: float) -> float:
        return half_width / math.sqrt(3.0)

    @property
    def u_calibration_rel(self) -> float:
        return self._std(self.calibration_pct / 100)

    @property
    def u_tone_level_rel(self) -> float:
        return self._std(self.tone_level_pct / 100)

    @property
    def u_resistor_rel(self) -> float:
        return self._std(self.resistor_pct / 100)

    @property
    def u_temperature_k(self) -> float:
        return self._std(self.temperature_k)

    def describe(self) -> str:
        return (f"stated limits (rectangular): calibration +/-{self.calibration_pct:g} %, tone level "
                f"+/-{self.tone_level_pct:g} %, resistor +/-{self.resistor_pct:g} %, temperature "
                f"+/-{self.temperature_k:g} K")


@dataclass(frozen=True)
class Contribution:
    """One line of a budget: its standard uncertainty in dB of the result."""

    name: str
    u_db: float
    note: str
    dof: float = math.inf  # degrees of freedom: a random (Welch) part's from its scatter, stated limits infinite

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "u_db": _finite(self.u_db), "note": self.note,
                "dof": self.dof if math.isfinite(self.dof) else None}


@dataclass(frozen=True)
class Budget:
    """An uncertainty budget of one result in dB."""

    quantity: str
    value_db: float
    contributions: tuple[Contribution, ...]
    coverage_factor: float = 2.0

    @property
    def combined_db(self) -> float:
        """Combined standard uncertainty, dB."""
        return math.sqrt(sum(c.u_db ** 2 for c in self.contributions))

    @property
    def expanded_db(self) -> float:
        """Expanded uncertainty (k = 2), dB half-width."""
        return self.coverage_factor * self.combined_db

    @property
    def effective_dof(self) -> float:
        """Welch-Satterthwaite: ``u_c^4 / sum(u_i^4 / nu_i)`` (GUM G.4.1); infinite when no part is random."""
        denom = sum(c.u_db ** 4 / c.dof for c in self.contributions if math.isfinite(c.dof) and c.dof > 0)
        return self.combined_db ** 4 / denom if denom > 0 else math.inf

    def to_dict(self) -> dict[str, Any]:
        nu = self.effective_dof
        return {"quantity": self.quantity, "value_db": _finite(self.value_db),
                "combined_standard_db": _finite(self.combined_db), "expanded_db": _finite(self.expanded_db),
                "coverage_factor": self.coverage_factor, "effective_dof": nu if math.isfinite(nu) else None,
                "contributions": [c.to_dict() for c in self.contributions]}

    @classmethod
    def from_dict(cls, data: dict[str, Any], *, where: str) -> "Budget":
        """The budget again from :meth:`to_dict`'s form (the combined and expanded values are recomputed)."""
        from ..codec import from_data
        rows = from_data(list[dict[str, Any]], data.get("contributions"), where, "contributions")
        contributions = tuple(Contribution(from_data(str, c.get("name"), where, "contributions.name"),
                                           _inf(from_data(float | None, c.get("u_db"), where, "contributions.u_db")),
                                           from_data(str, c.get("note", ""), where, "contributions.note"),
                                           _inf(from_data(float | None, c.get("dof"), where, "contributions.dof")))
                              for c in rows)
        return cls(from_data(str, data.get("quantity"), where, "quantity"),
                   from_data(float, data.get("value_db"), where, "value_db"), contributions,
                   from_data(float, data.get("coverage_factor", 2.0), where, "coverage_factor"))

    @staticmethod
    def data_schema() -> dict[str, Any]:
        number = {"type": ["number", "null"]}
        row = {"type": "object", "required": ["name", "u_db"], "properties": {
            "name": {"type": "string"}, "u_db": number, "note": {"type": "string"}, "dof": number}}
        return {"type": "object", "required": ["quantity", "value_db", "contributions"], "properties": {
            "quantity": {"type": "string"}, "value_db": number, "combined_standard_db": number,
            "expanded_db": number, "coverage_factor": {"type": "number", "exclusiveMinimum": 0},
            "effective_dof": number, "contributions": {"type": "array", "items": row}}}


def _finite(x: float) -> float | None:
    return x if math.isfinite(x) else None


def _inf(x: float | None) -> float:
    """A contribution or degrees of freedom written as null stands for an infinite one."""
    return math.inf if x is None or not math.isfinite(x) else x


@dataclass(frozen=True)
class Uncertainty:
    """The uncertainty budgets of a result, keyed by the figure they belong to (``ein_db``, ``gain_db``...).

    ``u["ein_db"]`` is the expanded uncertainty (k = 2) of that figure in dB; :meth:`get` gives None for a
    figure without a budget. Written as ``{"coverage_factor", "stated", <figure>: U, ..., "budgets"}``.
    """

    budgets: dict[str, Budget]
    stated: str | None = None
    coverage_factor: float = 2.0

    def __getitem__(self, key: str) -> float:
        return self.budgets[key].expanded_db

    def __contains__(self, key: object) -> bool:
        return key in self.budgets

    def get(self, key: str) -> float | None:
        """The expanded uncertainty (k = 2, dB) of a figure, or None where it has no budget."""
        b = self.budgets.get(key)
        return b.expanded_db if b is not None and math.isfinite(b.expanded_db) else None

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"coverage_factor": self.coverage_factor}
        if self.stated is not None:
            out["stated"] = self.stated
        out.update({k: _finite(b.expanded_db) for k, b in self.budgets.items()})
        out["budgets"] = {k: b.to_dict() for k, b in self.budgets.items()}
        return out

    @classmethod
    def from_dict(cls, data: dict[str, Any], *, where: str) -> "Uncertainty":
        from ..codec import from_data
        budgets = from_data(dict[str, dict[str, Any]], data.get("budgets", {}), where, "uncertainty.budgets")
        return cls({k: Budget.from_dict(v, where=f"{where} at uncertainty.budgets.{k}") for k, v in budgets.items()},
                   from_data(str | None, data.get("stated"), where, "uncertainty.stated"),
                   from_data(float, data.get("coverage_factor", 2.0), where, "uncertainty.coverage_factor"))

    @staticmethod
    def data_schema() -> dict[str, Any]:
        return {"type": "object", "required": ["coverage_factor", "budgets"],
                "properties": {"coverage_factor": {"type": "number", "exclusiveMinimum": 0},
                               "stated": {"type": "string"},
                               "budgets": {"type": "object", "additionalProperties": Budget.data_schema()}},
                "additionalProperties": {"type": ["number", "null"]}}


def welch_dof(rel_std: float) -> float:
    """Degrees of freedom of a power estimate with relative standard deviation `rel_std`: a chi-square
    variable of nu degrees of freedom over nu has relative variance 2/nu, so ``nu = 2 / rel_std^2``."""
    return 2.0 / rel_std ** 2 if rel_std > 0 and math.isfinite(rel_std) else math.inf


def dut_power_rel_std(*, measured: float, measured_rel_std: float, floor: float | None,
                      floor_rel_std: float | None) -> float:
    """Relative standard uncertainty of ``P = measured - floor`` from the Welch scatter of each."""
    if floor is None:
        return measured_rel_std
    p = measured - floor
    if not p > 0:
        return math.inf
    return math.hypot(measured * measured_rel_std, floor * (floor_rel_std or 0.0)) / p


def _gain_terms(gain_kind: str, gain_rel_std: float, stated: StatedUncertainty) -> list[tuple[str, float, str]]:
    """Relative uncertainties of the input-referred POWER from the gain's ingredients."""
    terms = [("gain (sine fit)", 2 * gain_rel_std, "fit residual, sigma*sqrt(2/n) per tone")]
    if gain_kind == "tone-1ch":
        terms.append(("tone level at the source", 2 * stated.u_tone_level_rel,
                      f"+/-{stated.tone_level_pct:g} % stated"))
        terms.append(("calibration", 0.0, "cancels: tone and noise share the calibrated input"))
    elif gain_kind in ("tone-2ch", "stated"):
        terms.append(("calibration", 2 * stated.u_calibration_rel,
                      f"+/-{stated.calibration_pct:g} % stated (meter)"))
    else:
        raise ParameterError(f"unknown gain kind {gain_kind!r}")
    return terms


def ein_budget(*, value_db: float, dut_rel_std: float, floor_corrected: bool, gain_kind: str,
               gain_rel_std: float, stated: StatedUncertainty, response_rel_std: float = 0.0) -> Budget:
    """Budget of an EIN (or input-referred band level) in dB."""
    contributions = [Contribution(
        "Welch statistics" + (" with floor subtraction" if floor_corrected else ""),
        power_rel_to_db(dut_rel_std), "scatter of the band power(s), from their degrees of freedom",
        welch_dof(dut_rel_std))]
    for name, u_rel, note in _gain_terms(gain_kind, gain_rel_std, stated):
        contributions.append(Contribution(name, power_rel_to_db(u_rel), note))
    if response_rel_std:
        contributions.append(Contribution("response shape (H1)", power_rel_to_db(2 * response_rel_std),
                                          "from the coherence of the response capture"))
    return Budget("ein_db", value_db, tuple(contributions))


def nf_budget(*, quantity: str, noise_factor: float, excess_over_n0: float, dut_rel_std: float,
              floor_corrected: bool, gain_kind: str, gain_rel_std: float, stated: StatedUncertainty,
              response_rel_std: float = 0.0) -> Budget:
    """Budget of a noise figure in dB.

    Parameters
    ----------
    noise_factor : float
        F (linear).
    excess_over_n0 : float
        ``EIN^2 / N0``: the input-referred power over the T0 source noise.
    """
    from ..units import T0_K
    ratio = excess_over_n0
    contributions = [Contribution(
        "Welch statistics" + (" with floor subtraction" if floor_corrected else ""),
        power_rel_to_db(ratio * dut_rel_std / noise_factor), "scatter of the band power(s)",
        welch_dof(dut_rel_std))]
    for name, u_rel, note in _gain_terms(gain_kind, gain_rel_std, stated):
        contributions.append(Contribution(name, power_rel_to_db(ratio * u_rel / noise_factor), note))
    if response_rel_std:
        contributions.append(Contribution("response shape (H1)",
                                          power_rel_to_db(ratio * 2 * response_rel_std / noise_factor),
                                          "from the coherence of the response capture"))
    contributions.append(Contribution("resistor temperature",
                                      power_rel_to_db(stated.u_temperature_k / T0_K / noise_factor),
                                      f"+/-{stated.temperature_k:g} K stated; dF/dT = -1/T0"))
    contributions.append(Contribution("resistor tolerance",
                                      power_rel_to_db(ratio * stated.u_resistor_rel / noise_factor),
                                      f"+/-{stated.resistor_pct:g} % stated; dF/dRs = -(F - 1 + T/T0)/Rs"))
    return Budget(quantity, 10 * math.log10(noise_factor), tuple(contributions))


def output_noise_budget(*, value_db: float, dut_rel_std: float, floor_corrected: bool,
                        calibration_known: bool, stated: StatedUncertainty) -> Budget:
    """Budget of the output noise level in dB (20 lg of its RMS volts): the band power's Welch statistics
    and, where the capture is in volts through a sound-card calibration, that calibration."""
    contributions = [Contribution(
        "Welch statistics" + (" with floor subtraction" if floor_corrected else ""),
        power_rel_to_db(dut_rel_std), "scatter of the band power(s), from their degrees of freedom",
        welch_dof(dut_rel_std))]
    if calibration_known:
        contributions.append(Contribution("calibration", amplitude_rel_to_db(stated.u_calibration_rel),
                                          f"+/-{stated.calibration_pct:g} % stated (meter)"))
    return Budget("output_noise_db", value_db, tuple(contributions))


def gain_budget(*, value_db: float, gain_kind: str, gain_rel_std: float,
                stated: StatedUncertainty) -> Budget:
    """Budget of the voltage gain in dB."""
    contributions = [Contribution("sine fit", amplitude_rel_to_db(gain_rel_std), "fit residual")]
    if gain_kind == "tone-1ch":
        contributions.append(Contribution("tone level at the source",
                                          amplitude_rel_to_db(stated.u_tone_level_rel),
                                          f"+/-{stated.tone_level_pct:g} % stated"))
        contributions.append(Contribution("calibration", amplitude_rel_to_db(stated.u_calibration_rel),
                                          f"+/-{stated.calibration_pct:g} % stated (meter)"))
    elif gain_kind == "stated":
        contributions.append(Contribution("stated gain", 0.0, "taken as exact; state its uncertainty "
                                          "by measuring it with a tone"))
    return Budget("gain_db", value_db, tuple(contributions))


def propagate(fn, inputs: dict[str, tuple[Any, ...]], *, quantity: str) -> Budget:
    """Budget of ``fn(**values)`` (a result in dB) by central differences, one input at a time.

    Each input is (value, standard uncertainty, note[, degrees of freedom]).  The contribution of
    input i is ``|fn(x_i + u_i) - fn(x_i - u_i)| / 2`` (GUM 5.1.3, the
    sensitivity coefficient evaluated numerically); a step that leaves the
    function's domain counts as an infinite contribution.
    """
    values = {k: v[0] for k, v in inputs.items()}
    centre = float(fn(**values))
    contributions = []
    for name, (value, u, note, *rest) in inputs.items():
        dof = float(rest[0]) if rest else math.inf
        if u == 0:
            contributions.append(Contribution(name, 0.0, note, dof))
            continue
        try:
            up = float(fn(**{**values, name: value + u}))
            down = float(fn(**{**values, name: value - u}))
            c = abs(up - down) / 2.0
        except (ValueError, ZeroDivisionError, ArithmeticError):
            c = math.inf
        contributions.append(Contribution(name, c if math.isfinite(c) else math.inf, note, dof))
    return Budget(quantity, centre, tuple(contributions))
