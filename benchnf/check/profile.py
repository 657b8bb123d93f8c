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
from ..measure.results import SCALAR_FIGURES, AnalysisResult

__all__ = ["PROFILE_SCHEMA", "ScalarLimit", "Mask", "HumLimit", "Profile", "load_profile", "profile_from_results",
           "SCALAR_KEYS", "MASK_QUANTITIES"]

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
class Profile:
    """The conditions and limits of a known-good unit."""

    name: str
    conditions: dict[str, Any]
    limits: tuple[ScalarLimit, ...] = ()
    masks: tuple[Mask, ...] = ()
    hum: tuple[HumLimit, ...] = ()
    notes: str = ""
    source: str = field(default="", compare=False)

    def to_toml(self) -> str:
        """The profile as TOML, written by a TOML writer (tomli-w), so any name or note round-trips through
        :func:`load_profile`."""
        import tomli_w
        data: dict[str, Any] = {"schema": PROFILE_SCHEMA, "name": self.name}
        if self.notes:
            data["notes"] = self.notes
        data["conditions"] = {k: (list(v) if isinstance(v, tuple) else v) for k, v in sorted(self.conditions.items())}
        data["limit"] = [lim.to_data() for lim in self.limits]
        data["mask"] = [{"quantity": m.quantity, "points": [[f, v] for f, v in zip(m.frequency_hz, m.limit)]}
                        for m in self.masks]
        data["hum"] = [{"family": h.family, "max_output_vrms": h.max_output_vrms} for h in self.hum]
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
    return Profile(shape.name if shape.name is not None else Path(path).stem, cond, tuple(limits), tuple(masks),
                   tuple(hum), shape.notes, str(path))


#: A mask point needs a one-third-octave band this many spectrum bins wide: over fewer, a spot value's own
#: scatter (relative std about sqrt(2 / (nu * bins))) makes good units read MARGINAL at random.
MIN_MASK_BINS = 10
_THIRD_OCTAVE_WIDTH = 10 ** (1 / 20) - 10 ** (-1 / 20)  # band width over centre frequency, 0.2316


def _lowest_mask_hz(results: list[AnalysisResult]) -> float:
    """The lowest spot frequency whose band holds MIN_MASK_BINS bins in every good unit's spectrum."""
    widths = [r.sample_rate_hz / r.segment_length for r in results]
    return MIN_MASK_BINS * max(widths) / _THIRD_OCTAVE_WIDTH if widths else 0.0


# The figures a profile sets limits on; a result that carries one must carry a number.
_PROFILED = ("gain_db", "ein_dbu", "noise_figure_db", "nf_at_1khz_db")


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


def profile_from_results(results: list[AnalysisResult], *, margin_db: float = 1.0, name: str = "known good",
                         spread_k: float = 3.0) -> Profile:
    """Make a profile from the results of one or more known-good units.

    Each limit is the worst good value moved out by `margin_db` (and, where
    several units are given, by `spread_k` standard deviations of their
    spread): gain as target +/- tolerance, EIN and noise figures as maxima,
    an upper mask on the input-referred spot density, hum per family, and the
    1/f corner as a maximum.  The conditions are the units' own and must agree.
    """
    if not results:
        raise ParameterError("give at least one known-good results JSON")
    if not (math.isfinite(margin_db) and margin_db >= 0):
        raise ParameterError(f"--margin-db {margin_db!r} must be >= 0")
    cond = _conditions_of(results)
    for i, r in enumerate(results, 1):
        for key in _PROFILED:
            if r.figure(key) is None and not (key == "nf_at_1khz_db" and getattr(r, key) is None):
                raise ParameterError(f"results {i}: {key} is not a number, so the profile would lack "
                                     f"its limit: measure that unit again")

    def values(key):
        return np.array([v for r in results if (v := r.figure(key)) is not None], dtype=float)

    def spread(v):
        return spread_k * float(np.std(v, ddof=1)) if v.size > 1 else 0.0

    limits = []
    g = values("gain_db")
    if g.size:
        tol = margin_db + spread(g)
        limits.append(ScalarLimit("gain_db", float(g.mean()) - tol, float(g.mean()) + tol,
                                  "known-good mean +/- margin"))
    for key in ("ein_dbu", "noise_figure_db", "nf_at_1khz_db"):
        v = values(key)
        if v.size:
            limits.append(ScalarLimit(key, None, float(v.max()) + margin_db + spread(v), "worst good + margin"))
    v = values("flicker_corner_hz")
    if v.size:
        limits.append(ScalarLimit("flicker_corner_hz", None, float(v.max()) * 10 ** (margin_db / 10) * 1.5,
                                  "worst good corner x 1.5 x margin"))
    masks = []
    # Each good spot value moved up by its own expanded uncertainty (the good unit's value is itself a
    # measurement), then by the margin.
    spots = [{s.freq_hz: (s.input_density_v_per_rthz * 10 ** ((s.input_density_expanded_db or 0.0) / 20)
                          if s.input_density_v_per_rthz else None) for s in r.spot} for r in results]
    freqs = sorted(set.intersection(*(set(k for k, v in s.items() if v) for s in spots))) if spots else []
    freqs = [f for f in freqs if f >= _lowest_mask_hz(results)]
    if len(freqs) >= 2:
        worst = [max(v for s in spots if (v := s[f]) is not None) * 10 ** (margin_db / 20) for f in freqs]
        masks.append(Mask("input_density_v_per_rthz", tuple(float(f) for f in freqs), tuple(worst),
                          "worst good spot density + its uncertainty + margin"))
    hum = []
    noise = values("output_noise_vrms")
    for family in ("mains", "ripple"):
        levels = [math.sqrt(sum(sp.output_vrms ** 2 for sp in r.spurs if sp.family == family)) for r in results]
        top = max(levels) if levels else 0.0
        if top > 0:
            hum.append(HumLimit(family, top * 2 * 10 ** (margin_db / 20), "worst good x 2 + margin"))
        elif noise.size:
            # No such lines on the good units: allow none stronger than 20 dB below the broadband noise.
            hum.append(HumLimit(family, float(noise.min()) * 0.1 * 10 ** (margin_db / 20),
                                "good units had none: 20 dB below the output noise + margin"))
    return Profile(name, cond, tuple(limits), tuple(masks), tuple(hum),
                   f"made from {len(results)} known-good unit(s) with {margin_db:g} dB margin")
