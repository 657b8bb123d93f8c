"""Profiles: the limits of a known-good unit, in a TOML file of our own (docs/check.md).

A profile holds the measurement conditions it applies to and its limits:
scalar limits on any numeric figure of the results JSON (``min``, ``max`` or
``target`` with ``tolerance``), an upper mask on a spot quantity against
frequency (interpolated on log frequency), and hum limits per line family.
Profiles are validated when loaded: unknown keys, unknown figures and
impossible limits are refused.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import ParameterError
from ..measure.results import SCALAR_FIGURES
from .decision import check_rule

__all__ = ["PROFILE_SCHEMA", "ScalarLimit", "Mask", "HumLimit", "Profile", "ProfileOrigin", "load_profile",
           "profile_from_data", "SCALAR_KEYS", "MASK_QUANTITIES"]

PROFILE_SCHEMA = "benchnf.profile/1"

#: Figures of a gain-method result a scalar limit may name.
SCALAR_KEYS = SCALAR_FIGURES
#: Spot quantities a mask may bound.
MASK_QUANTITIES = ("input_density_v_per_rthz", "output_density_v_per_rthz", "noise_figure_db")


def _finite(value: Any, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise ParameterError(f"{what} must be a finite number, not {value!r}")
    return float(value)


@dataclass(frozen=True)
class ScalarLimit:
    """A limit on one figure: min, max, or target +/- tolerance."""

    key: str
    min: float | None = None
    max: float | None = None
    note: str = ""

    def __post_init__(self) -> None:
        if self.key not in SCALAR_KEYS:
            raise ParameterError(f"limit on {self.key!r}: not a figure benchnf reports (one of "
                                 f"{', '.join(SCALAR_KEYS)})")
        if self.min is None and self.max is None:
            raise ParameterError(f"limit on {self.key!r} has neither min, max nor target")
        if self.min is not None and self.max is not None and self.min > self.max:
            raise ParameterError(f"limit on {self.key!r}: min {self.min:g} exceeds max {self.max:g}")

    def to_data(self) -> dict[str, Any]:
        """The limit as a TOML table (target/tolerance for a two-sided limit)."""
        out: dict[str, Any] = {"key": self.key}
        if self.min is not None and self.max is not None:
            out.update(target=(self.min + self.max) / 2, tolerance=(self.max - self.min) / 2)
        elif self.min is not None:
            out["min"] = self.min
        else:
            out["max"] = self.max
        if self.note:
            out["note"] = self.note
        return out


@dataclass(frozen=True)
class Mask:
    """An upper mask on a spot quantity, interpolated on log frequency (and log value for densities)."""

    quantity: str
    frequency_hz: tuple[float, ...]
    limit: tuple[float, ...]
    note: str = ""

    def __post_init__(self) -> None:
        if self.quantity not in MASK_QUANTITIES:
            raise ParameterError(f"mask on {self.quantity!r}: one of {', '.join(MASK_QUANTITIES)}")
        f = np.asarray(self.frequency_hz)
        if f.size < 2 or np.any(f <= 0) or np.any(np.diff(f) <= 0):
            raise ParameterError("mask points need at least two increasing frequencies above 0 Hz")
        if self.quantity != "noise_figure_db" and np.any(np.asarray(self.limit) <= 0):
            raise ParameterError(f"mask on {self.quantity}: limits must be > 0")

    def at(self, frequency_hz: float) -> float | None:
        """The mask's limit at a frequency (None outside its span)."""
        f = np.log10(np.asarray(self.frequency_hz))
        x = math.log10(frequency_hz)
        if x < f[0] - 1e-9 or x > f[-1] + 1e-9:
            return None
        v = np.asarray(self.limit)
        if self.quantity == "noise_figure_db":
            return float(np.interp(x, f, v))
        return float(10 ** np.interp(x, f, np.log10(v)))


@dataclass(frozen=True)
class HumLimit:
    """Maximum RMS of one line family at the output (all its lines together)."""

    family: str
    max_output_vrms: float
    note: str = ""

    def __post_init__(self) -> None:
        if self.family not in ("mains", "ripple", "unclassified", "all"):
            raise ParameterError(f"hum family {self.family!r}: one of mains, ripple, unclassified, all")
        if not self.max_output_vrms > 0:
            raise ParameterError(f"hum limit for {self.family}: max_output_vrms must be > 0")


@dataclass(frozen=True)
class ProfileOrigin:
    """How a profile was made from known-good units: how many, which, the tolerance interval's coverage and
    confidence and its factors, the extra margin, and the figures left without a limit (and why)."""

    units: int
    serials: tuple[str, ...]
    coverage: float
    confidence: float
    k1: float
    k2: float
    margin_db: float = 0.0
    not_limited: tuple[str, ...] = ()

    def describe(self) -> str:
        text = (f"made from {self.units} known-good units ({', '.join(self.serials)}): normal tolerance limits "
                f"(ISO 16269-6) containing {100 * self.coverage:g} % of good units with {100 * self.confidence:g} % "
                f"confidence (k1 = {self.k1:.3f} one-sided, k2 = {self.k2:.3f} two-sided), each moved out by "
                f"the figure's largest U (k=2)" + (f" and a margin of {self.margin_db:g} dB" if self.margin_db else ""))
        if self.not_limited:
            text += f"; no limit on {', '.join(self.not_limited)}"
        return text

    def to_data(self) -> dict[str, Any]:
        data: dict[str, Any] = {"units": self.units, "serials": list(self.serials), "coverage": self.coverage,
                                "confidence": self.confidence, "k1": self.k1, "k2": self.k2,
                                "margin_db": self.margin_db}
        if self.not_limited:
            data["not_limited"] = list(self.not_limited)
        return data


@dataclass(frozen=True)
class Profile:
    """The conditions and limits of known-good units, how they were made and the decision rule to apply."""

    name: str
    conditions: dict[str, Any]
    limits: tuple[ScalarLimit, ...] = ()
    masks: tuple[Mask, ...] = ()
    hum: tuple[HumLimit, ...] = ()
    notes: str = ""
    source: str = field(default="", compare=False)
    origin: ProfileOrigin | None = None
    decision_rule: str = "zones"

    def to_toml(self) -> str:
        """The profile as TOML, written by a TOML writer (tomli-w), so any name or note round-trips through
        :func:`load_profile`."""
        import tomli_w
        data: dict[str, Any] = {"schema": PROFILE_SCHEMA, "name": self.name}
        if self.notes:
            data["notes"] = self.notes
        data["decision_rule"] = self.decision_rule
        if self.origin is not None:
            data["made_from"] = self.origin.to_data()
        data["conditions"] = {k: (list(v) if isinstance(v, tuple) else v) for k, v in sorted(self.conditions.items())}
        data["limit"] = [lim.to_data() for lim in self.limits]
        data["mask"] = [{"quantity": m.quantity, "points": [[f, v] for f, v in zip(m.frequency_hz, m.limit)],
                         **({"note": m.note} if m.note else {})} for m in self.masks]
        data["hum"] = [{"family": h.family, "max_output_vrms": h.max_output_vrms, **({"note": h.note} if h.note else {})}
                       for h in self.hum]
        return tomli_w.dumps({k: v for k, v in data.items() if v != []})


def load_profile(path: str | Path) -> Profile:
    """Read and validate a profile file."""
    from ..io.toml_file import read_toml
    return profile_from_data(read_toml(path, "profile"), where=Path(path))


@dataclass(frozen=True)
class _LimitTable:
    key: str
    min: float | None = None
    max: float | None = None
    target: float | None = None
    tolerance: float | None = None
    note: str = ""


@dataclass(frozen=True)
class _MaskTable:
    points: tuple[tuple[float, float], ...]
    quantity: str = "input_density_v_per_rthz"
    note: str = ""


@dataclass(frozen=True)
class _HumTable:
    family: str
    max_output_vrms: float
    note: str = ""


@dataclass(frozen=True)
class _Conditions:
    rs_ohm: float | None = None
    band_hz: tuple[float, float] | None = None
    weighting: str | None = None
    sample_rate_hz: float | None = None
    gain_setting: str | None = None
    temperature_k: float | None = None
    floor_corrected: bool | None = None


@dataclass(frozen=True)
class ProfileFile:
    """The shape of a profile file (TOML): every key, its kind (the profile's JSON Schema is made from it)."""

    schema: str
    name: str | None = None
    notes: str = ""
    decision_rule: str = "zones"
    made_from: ProfileOrigin | None = None
    conditions: _Conditions = _Conditions()
    limit: tuple[_LimitTable, ...] = ()
    mask: tuple[_MaskTable, ...] = ()
    hum: tuple[_HumTable, ...] = ()


def _limit(lim: _LimitTable, where: str) -> ScalarLimit:
    lo, hi = (_finite(lim.min, "min") if lim.min is not None else None,
              _finite(lim.max, "max") if lim.max is not None else None)
    if lim.target is not None:
        if lo is not None or hi is not None:
            raise ParameterError(f"{where}: give target/tolerance or min/max, not both")
        if lim.tolerance is None or not _finite(lim.tolerance, "tolerance") >= 0:
            raise ParameterError(f"{where}: a target needs a tolerance >= 0")
        lo, hi = _finite(lim.target, "target") - lim.tolerance, lim.target + lim.tolerance
    return ScalarLimit(lim.key, lo, hi, lim.note)


def profile_from_data(data: dict[str, Any], *, where: str | Path) -> Profile:
    """Validate the parsed TOML of a profile (`where` names it in messages): its shape (ProfileFile), then
    what the values must be (known figures, possible limits, increasing mask points)."""
    from ..codec import check_shape
    path = where
    shape = check_shape(ProfileFile, data, f"profile {path}")
    if shape.schema != PROFILE_SCHEMA:
        raise ParameterError(f"profile {path}: schema {shape.schema!r} is not {PROFILE_SCHEMA!r}")
    c = shape.conditions
    if c.band_hz is not None and not (0 <= _finite(c.band_hz[0], "band") < _finite(c.band_hz[1], "band")):
        raise ParameterError(f"profile {path}: band_hz must be [low, high] with 0 <= low < high")
    if c.rs_ohm is not None and not _finite(c.rs_ohm, "rs_ohm") > 0:
        raise ParameterError(f"profile {path}: rs_ohm must be > 0")
    if c.temperature_k is not None and not _finite(c.temperature_k, "temperature_k") > 0:
        raise ParameterError(f"profile {path}: temperature_k must be above 0 K")
    try:
        limits = [_limit(lim, f"profile {path} limit {i}") for i, lim in enumerate(shape.limit, 1)]
        masks = [Mask(m.quantity, tuple(_finite(f, "mask frequency") for f, _ in m.points),
                      tuple(_finite(v, "mask limit") for _, v in m.points), m.note) for m in shape.mask]
        hum = [HumLimit(h.family, _finite(h.max_output_vrms, "max_output_vrms"), h.note) for h in shape.hum]
    except ParameterError as err:
        text = str(err)
        raise ParameterError(text if text.startswith("profile ") else f"profile {path}: {text}") from None
    if not (limits or masks or hum):
        raise ParameterError(f"profile {path} holds no limits")
    cond = {k: (list(v) if isinstance(v, tuple) else v) for k, v in c.__dict__.items() if v is not None}
    try:
        check_rule(shape.decision_rule)
        _check_satisfiable(limits, masks, cond)
    except ParameterError as err:
        raise ParameterError(f"profile {path}: {err}") from None
    return Profile(shape.name if shape.name is not None else Path(path).stem, cond, tuple(limits), tuple(masks),
                   tuple(hum), shape.notes, str(path), shape.made_from, shape.decision_rule)


def _check_satisfiable(limits: list[ScalarLimit], masks: list[Mask], cond: dict[str, Any]) -> None:
    """Refuse limits no unit can meet: several limits on one figure that exclude each other, a noise figure
    limited below 0 dB, an EIN or density limited below the source resistor's own thermal noise."""
    lows: dict[str, float] = {}
    highs: dict[str, float] = {}
    for lim in limits:
        if lim.min is not None:
            lows[lim.key] = max(lows.get(lim.key, -math.inf), lim.min)
        if lim.max is not None:
            highs[lim.key] = min(highs.get(lim.key, math.inf), lim.max)
        lo, hi = lows.get(lim.key, -math.inf), highs.get(lim.key, math.inf)
        if lo > hi:
            raise ParameterError(f"the limits on {lim.key} ask for at least {lo:g} and at most {hi:g}: no unit can "
                                 f"pass them; correct the profile")
    for key in ("noise_figure_db", "nf_at_1khz_db"):
        if highs.get(key, math.inf) < 0:
            raise ParameterError(f"the limit on {key} is below 0 dB ({highs[key]:g}), which no amplifier reaches")
    for m in masks:
        if m.quantity == "noise_figure_db" and min(m.limit) < 0:
            raise ParameterError("the noise figure mask goes below 0 dB, which no amplifier reaches")
    _check_thermal(highs, masks, cond)


def _check_thermal(highs: dict[str, float], masks: list[Mask], cond: dict[str, Any]) -> None:
    """Limits below the source's own thermal noise (given the profile's Rs, band and temperature)."""
    from ..units import BOLTZMANN_J_PER_K, T0_K
    rs = cond.get("rs_ohm")
    if rs is None:
        return
    density = math.sqrt(4 * BOLTZMANN_J_PER_K * float(cond.get("temperature_k", T0_K)) * float(rs))
    for m in masks:
        if m.quantity == "input_density_v_per_rthz" and min(m.limit) < density:
            raise ParameterError(f"the input density mask goes below {min(m.limit):.3g} V/rtHz, under the "
                                 f"{rs:g} ohm source's own thermal noise ({density:.3g} V/rtHz)")
    band = cond.get("band_hz")
    if "ein_dbu" in highs and band is not None and cond.get("weighting", "none") == "none":
        thermal_dbu = 20 * math.log10(density * math.sqrt(band[1] - band[0]) / math.sqrt(0.6))
        if highs["ein_dbu"] < thermal_dbu:
            raise ParameterError(f"the EIN limit {highs['ein_dbu']:.2f} dBu is below the {rs:g} ohm source's own "
                                 f"thermal noise in the band ({thermal_dbu:.2f} dBu)")
