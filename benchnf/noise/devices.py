"""The input device's own noise: a bipolar or field-effect transistor at its operating point, as an en-in two-port.

Bipolar transistor (low-frequency hybrid-pi model with the SPICE Gummel-Poon DC currents).  With
``R0 = rbb' + RE`` (base spreading resistance and emitter degeneration), base current shot and flicker
noise ``S_b = 2 q Ib + KF Ib^AF / f`` and collector shot noise ``S_c = 2 q Ic``, the noise referred to a
voltage source in series with the input is, for a source resistance Rs (``Rt = Rs + R0``),

.. math::

    v_{eq} = v_{Rs} + v_{R0} + i_b R_t + i_c \\left(\\frac{1}{g_m} + \\frac{R_t}{\\beta}\\right)

so that, in the en-in form ``e_{ni}^2 = e_n^2 + 2 C R_s + i_n^2 R_s^2 + 4kTR_s`` (C = rho en in),

.. math::

    e_n^2 &= 4kTR_0 + S_b R_0^2 + S_c \\left(\\frac{1}{g_m} + \\frac{R_0}{\\beta}\\right)^2 \\\\
    i_n^2 &= S_b + S_c / \\beta^2 \\\\
    C &= S_b R_0 + S_c \\left(\\frac{1}{g_m} + \\frac{R_0}{\\beta}\\right) / \\beta

with ``gm = Ic / Vt``, ``Vt = kT/q`` and ``beta = Ic / Ib``.  Dropping the small terms gives the textbook
``en^2 = 4kT(rbb' + RE + 1/(2 gm))``, ``in^2 = 2 q Ic / beta``.  The Early effect raises beta at the
collector-base voltage ``Vcb = Vce - Vbe``: ``beta = BF (1 + Vcb / VAF)`` (the Gummel-Poon forward term,
``Ic = IS exp(Vbe/Vt) (1 - Vbc/VAF)``, ``Ib = IS/BF exp(Vbe/Vt)``).

Field-effect transistor (JFET, or a long-channel MOSFET with its own gamma): drain current thermal noise
``4kT gamma gm`` (gamma = 2/3 in saturation, as SPICE takes it), drain flicker ``KF Id^AF / f`` and gate
leakage shot noise ``2 q Ig``; with a source resistance RS in series with the source lead,

.. math::

    e_n^2 = 4kT\\left(\\frac{\\gamma}{g_m} + R_S\\right) + \\frac{KF\\, I_d^{AF}}{f g_m^2} + 2qI_g R_S^2,\\qquad
    i_n^2 = 2 q I_g,\\qquad C = 2 q I_g R_S

with ``gm = 2 sqrt(IDSS Id) / |Vp|`` (square law) or a stated gm scaled as ``sqrt(Id)``.

N equal devices in parallel, each at the stated current: ``en^2/N``, ``in^2 N``, C unchanged.  A step-up
transformer of turns ratio n with winding resistance Rw (referred to its secondary) shows the device the
source ``n^2 Rs + Rw``; the noise factor against the source Rs at T0 is then

.. math::

    F = 1 + \\frac{4kT_w R_w + e_n^2 + 2 C R' + i_n^2 R'^2}{4 k T_0 n^2 R_s},\\qquad R' = n^2 R_s + R_w

References
----------
.. [1] C. D. Motchenbacher and J. A. Connelly, "Low-Noise Electronic System Design", Wiley 1993 (the noise
       models of the bipolar and the field-effect transistor; transformer coupling) -- chapters from memory.
.. [2] ngspice manual, the BJT (Gummel-Poon) and JFET models and their noise sources (thermal noise of the
       resistances, shot noise 2qI of the junction currents, flicker noise KF I^AF / f; JFET drain noise
       8kT gm / 3).
.. [3] IEEE Std 161 (noise factor referred to T0 = 290 K).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import ParameterError
from ..units import BOLTZMANN_J_PER_K, ELEMENTARY_CHARGE_C, T0_K

__all__ = ["Bjt", "Fet", "Device", "DeviceNoise", "DeviceTable", "Source", "noise_factor", "input_density_v2",
           "Optimum", "best_current", "device_current", "make_device", "device_from_table", "ASSUMED_VBE_V"]

#: Base-emitter voltage assumed for the Early correction when IS is not stated (common practice for a small
#: silicon transistor at around 1 mA).
ASSUMED_VBE_V = 0.65


def _positive(name: str, value: float | None, *, allow_zero: bool = False) -> None:
    if value is None:
        return
    ok = math.isfinite(value) and (value >= 0 if allow_zero else value > 0)
    if not ok:
        raise ParameterError(f"{name} {value!r} must be {'>= 0' if allow_zero else '> 0'}")


@dataclass(frozen=True)
class DeviceNoise:
    """en (V/√Hz), in (A/√Hz) and their correlated part C = rho en in (V·A/Hz) against frequency."""

    frequency_hz: NDArray[np.float64]
    en2: NDArray[np.float64]
    in2: NDArray[np.float64]
    cross: NDArray[np.float64]

    @property
    def en(self) -> NDArray[np.float64]:
        return np.sqrt(self.en2)

    @property
    def in_(self) -> NDArray[np.float64]:
        return np.sqrt(self.in2)

    @property
    def correlation(self) -> NDArray[np.float64]:
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(self.en2 * self.in2 > 0, self.cross / np.sqrt(self.en2 * self.in2), 0.0)


@dataclass(frozen=True, kw_only=True)
class _Operating:
    """What every device model states besides its own parameters: flicker noise (KF/AF in the SPICE
    convention, or a corner frequency), how many equal devices in parallel, and its temperature."""

    kf: float = 0.0
    af: float = 1.0
    corner_hz: float | None = None
    count: int = 1
    temperature_k: float = T0_K

    def __post_init__(self) -> None:
        for name in ("temperature_k", "corner_hz", "af"):
            _positive(name, getattr(self, name))
        _positive("kf", self.kf, allow_zero=True)
        if self.count < 1:
            raise ParameterError(f"count {self.count} must be 1 or more devices")
        if self.kf > 0 and self.corner_hz is not None:
            raise ParameterError("state the flicker noise as KF/AF or as a corner frequency, not both")


@dataclass(frozen=True)
class Bjt(_Operating):
    """A bipolar transistor at its operating point (per device; `count` equal devices in parallel).

    `beta` is the forward current gain BF; with `vaf_v` and `vce_v` it is raised by the Early effect.
    Base-current flicker noise is ``KF Ib^AF / f`` (`kf`, `af`, SPICE convention) or, instead, stated by
    the corner frequency of in (`corner_hz`).
    """

    ic_a: float
    beta: float
    rbb_ohm: float
    re_ohm: float = 0.0
    vaf_v: float | None = None
    vce_v: float | None = None
    is_a: float | None = None
    kind: Literal["bjt"] = "bjt"

    def __post_init__(self) -> None:
        super().__post_init__()
        for name in ("ic_a", "beta", "vaf_v", "is_a"):
            _positive(name, getattr(self, name))
        for name in ("rbb_ohm", "re_ohm", "vce_v"):
            _positive(name, getattr(self, name), allow_zero=True)

    @property
    def thermal_voltage_v(self) -> float:
        return BOLTZMANN_J_PER_K * self.temperature_k / ELEMENTARY_CHARGE_C

    @property
    def vbe_v(self) -> float:
        """Vbe at Ic from IS (with the Early factor), or the assumed 0.65 V without IS."""
        if self.is_a is None:
            return ASSUMED_VBE_V
        vbe = ASSUMED_VBE_V
        for _ in range(20):
            vbe = self.thermal_voltage_v * math.log(self.ic_a / (self.is_a * self._early(vbe)))
        return vbe

    def _early(self, vbe: float) -> float:
        if self.vaf_v is None or self.vce_v is None:
            return 1.0
        return 1.0 + (self.vce_v - vbe) / self.vaf_v

    @property
    def beta_effective(self) -> float:
        """Ic/Ib at the operating point: BF (1 + Vcb/VAF)."""
        return self.beta * self._early(self.vbe_v)

    @property
    def gm_s(self) -> float:
        return self.ic_a / self.thermal_voltage_v

    def at_current(self, current_a: float) -> "Bjt":
        return replace(self, ic_a=current_a)

    def noise(self, frequency_hz: ArrayLike) -> DeviceNoise:
        """en, in and C of the stage (all `count` devices) at `frequency_hz`."""
        f = np.atleast_1d(np.asarray(frequency_hz, dtype=np.float64))
        q, four_kt = ELEMENTARY_CHARGE_C, 4 * BOLTZMANN_J_PER_K * self.temperature_k
        beta = self.beta_effective
        ib = self.ic_a / beta
        s_b = 2 * q * ib + self.kf * ib ** self.af / f
        if self.corner_hz is not None:
            s_b = s_b * (1 + self.corner_hz / f)
        s_c = 2 * q * self.ic_a
        r0 = self.rbb_ohm + self.re_ohm
        k_c = 1 / self.gm_s + r0 / beta
        en2 = four_kt * r0 + s_b * r0 ** 2 + s_c * k_c ** 2
        in2 = s_b + s_c / beta ** 2
        cross = s_b * r0 + s_c * k_c / beta
        return DeviceNoise(f, en2 / self.count, in2 * self.count, cross)


@dataclass(frozen=True)
class Fet(_Operating):
    """A field-effect transistor at its drain current (per device; `count` in parallel).

    gm comes from `gm_s` (stated at `id_a`, scaled as sqrt(Id) at other currents) or from IDSS and Vp
    (square law). Drain flicker noise ``KF Id^AF / f`` (SPICE) or the corner frequency of en (`corner_hz`).
    """

    id_a: float
    gm_s: float | None = None
    idss_a: float | None = None
    vp_v: float | None = None
    gamma: float = 2.0 / 3.0
    ig_a: float = 0.0
    rs_ohm: float = 0.0
    kind: Literal["jfet"] = "jfet"
    gm_at_a: float | None = None  # the current a stated gm belongs to (set from id_a when not given)

    def __post_init__(self) -> None:
        super().__post_init__()
        for name in ("id_a", "gm_s", "idss_a", "gamma", "gm_at_a"):
            _positive(name, getattr(self, name))
        for name in ("ig_a", "rs_ohm"):
            _positive(name, getattr(self, name), allow_zero=True)
        if self.vp_v is not None and not (math.isfinite(self.vp_v) and self.vp_v != 0):
            raise ParameterError(f"vp_v {self.vp_v!r} must be a non-zero voltage")
        if self.gm_s is None and (self.idss_a is None or self.vp_v is None):
            raise ParameterError("a field-effect transistor needs its gm, or IDSS and Vp to compute it")
        if self.gm_s is not None and self.idss_a is not None:
            raise ParameterError("state gm or IDSS and Vp, not both")
        if self.idss_a is not None and self.id_a > self.idss_a * (1 + 1e-9):
            raise ParameterError(f"Id {self.id_a:g} A is above IDSS {self.idss_a:g} A: a JFET cannot run there")
        if self.gm_s is not None and self.gm_at_a is None:
            object.__setattr__(self, "gm_at_a", self.id_a)

    @property
    def transconductance_s(self) -> float:
        if self.gm_s is not None:
            return self.gm_s * math.sqrt(self.id_a / (self.gm_at_a or self.id_a))
        idss, vp = self.idss_a, self.vp_v
        if idss is None or vp is None:  # refused on construction; kept for the type checker
            raise ParameterError("a field-effect transistor needs its gm, or IDSS and Vp to compute it")
        return 2 * math.sqrt(idss * self.id_a) / abs(vp)

    def at_current(self, current_a: float) -> "Fet":
        return replace(self, id_a=current_a)

    def noise(self, frequency_hz: ArrayLike) -> DeviceNoise:
        f = np.atleast_1d(np.asarray(frequency_hz, dtype=np.float64))
        four_kt = 4 * BOLTZMANN_J_PER_K * self.temperature_k
        gm = self.transconductance_s
        white = four_kt * (self.gamma / gm + self.rs_ohm)
        flicker = self.kf * self.id_a ** self.af / (f * gm ** 2)
        if self.corner_hz is not None:
            flicker = flicker + four_kt * self.gamma / gm * self.corner_hz / f
        s_g = 2 * ELEMENTARY_CHARGE_C * self.ig_a
        en2 = white + flicker + s_g * self.rs_ohm ** 2
        in2 = np.full_like(f, s_g)
        cross = np.full_like(f, s_g * self.rs_ohm)
        return DeviceNoise(f, en2 / self.count, in2 * self.count, cross)


Device = Bjt | Fet


def device_current(device: Device) -> float:
    return device.ic_a if isinstance(device, Bjt) else device.id_a


@dataclass(frozen=True)
class Source:
    """The source the stage sees: resistance Rs at T0 for the noise figure, optionally through a step-up
    transformer of turns ratio n (secondary/primary) with winding resistance Rw referred to the secondary
    at `winding_temperature_k`."""

    rs_ohm: float
    turns: float = 1.0
    winding_ohm: float = 0.0
    winding_temperature_k: float = T0_K

    def __post_init__(self) -> None:
        _positive("source resistance", self.rs_ohm)
        _positive("turns ratio", self.turns)
        _positive("winding resistance", self.winding_ohm, allow_zero=True)

    @property
    def seen_ohm(self) -> float:
        """The resistance the device sees: n^2 Rs + Rw."""
        return self.turns ** 2 * self.rs_ohm + self.winding_ohm

    def with_rs(self, rs_ohm: float) -> "Source":
        return replace(self, rs_ohm=rs_ohm)


def _excess(noise: DeviceNoise, source: Source) -> NDArray[np.float64]:
    """The device's (and winding's) noise at the device input, V^2/Hz, for this source."""
    r = source.seen_ohm
    winding = 4 * BOLTZMANN_J_PER_K * source.winding_temperature_k * source.winding_ohm
    return winding + noise.en2 + 2 * noise.cross * r + noise.in2 * r * r


def noise_factor(noise: DeviceNoise, source: Source) -> NDArray[np.float64]:
    """F against frequency for this source (referred to the source at T0)."""
    return 1 + _excess(noise, source) / (4 * BOLTZMANN_J_PER_K * T0_K * source.turns ** 2 * source.rs_ohm)


def input_density_v2(noise: DeviceNoise, source: Source, *, temperature_k: float) -> NDArray[np.float64]:
    """The total noise referred to the source's terminals (source at `temperature_k` included), V^2/Hz."""
    return 4 * BOLTZMANN_J_PER_K * temperature_k * source.rs_ohm + _excess(noise, source) / source.turns ** 2


@dataclass(frozen=True)
class Optimum:
    """The current of least noise figure, that figure, and the currents within `within_db` of it (clipped to
    the searched range: `at_edge` says when the least figure or the range reaches its end)."""

    current_a: float
    noise_figure_db: float
    current_range_a: tuple[float, float]
    within_db: float
    at_edge: bool


def best_current(device: Device, figure_db: Callable[[Device], float], *,
                 current_range_a: tuple[float, float], within_db: float = 0.1) -> Optimum:
    """The operating current in `current_range_a` that minimises ``figure_db(device at that current)``.

    A grid of 241 currents spaced evenly in log, refined by a bounded scalar search (scipy) around its best
    point; the range within `within_db` is found by root search on each side (the figure is taken to fall
    and rise once, as a transistor's NF against its current does).
    """
    from scipy.optimize import brentq, minimize_scalar
    lo, hi = current_range_a
    if not (0 < lo < hi and math.isfinite(hi)):
        raise ParameterError(f"the current range {lo:g}-{hi:g} A needs 0 < low < high")

    def nf(log_i: float) -> float:
        return float(figure_db(device.at_current(math.exp(log_i))))

    grid = np.linspace(math.log(lo), math.log(hi), 241)
    values = np.array([nf(x) for x in grid])
    k = int(np.argmin(values))
    a, b = grid[max(k - 1, 0)], grid[min(k + 1, grid.size - 1)]
    best = minimize_scalar(nf, bounds=(a, b), method="bounded", options={"xatol": 1e-6})
    x0, f0 = (float(best.x), float(best.fun)) if best.fun <= values[k] else (float(grid[k]), float(values[k]))
    level = f0 + within_db

    def edge(end: float) -> float:
        if nf(end) <= level:
            return end
        return float(brentq(lambda x: nf(x) - level, min(x0, end), max(x0, end), xtol=1e-9))

    low, high = edge(grid[0]), edge(grid[-1])
    at_edge = bool(k in (0, grid.size - 1) or low == grid[0] or high == grid[-1])
    return Optimum(math.exp(x0), f0, (math.exp(low), math.exp(high)), within_db, at_edge)


def make_device(kind: str, parameters: dict[str, float], *, count: int = 1, temperature_k: float = T0_K) -> Device:
    """A :class:`Bjt` or :class:`Fet` from stated parameters (one line naming what is missing otherwise)."""
    cls = Bjt if kind == "bjt" else Fet
    current = "ic_a" if kind == "bjt" else "id_a"
    need = (current, "beta", "rbb_ohm") if kind == "bjt" else (current,)
    missing = [k for k in need if k not in parameters]
    if missing:
        raise ParameterError(f"the {kind} model needs {', '.join(_OPTIONS.get(k, k) for k in missing)}")
    known = set(cls.__dataclass_fields__) - {"kind", "count", "temperature_k", "gm_at_a"}
    unknown = sorted(set(parameters) - known)
    if unknown:
        raise ParameterError(f"{', '.join(unknown)} is not a parameter of the {kind} model "
                             f"(its parameters: {', '.join(sorted(known))})")
    return cls(**parameters, count=count, temperature_k=temperature_k)  # type: ignore[arg-type]


_OPTIONS = {"ic_a": "--ic (ic_a)", "id_a": "--id (id_a)", "beta": "--beta (beta)", "rbb_ohm": "--rbb (rbb_ohm)"}


@dataclass(frozen=True)
class DeviceTable:
    """A device as a hand-written TOML table states it (a candidate part, a chain file's stage device):
    its kind and the model's values by their field names; `count` devices in parallel."""

    kind: Literal["bjt", "jfet"]
    ic_a: float | None = None
    id_a: float | None = None
    beta: float | None = None
    rbb_ohm: float | None = None
    re_ohm: float | None = None
    vaf_v: float | None = None
    vce_v: float | None = None
    is_a: float | None = None
    gm_s: float | None = None
    idss_a: float | None = None
    vp_v: float | None = None
    gamma: float | None = None
    ig_a: float | None = None
    rs_ohm: float | None = None
    kf: float | None = None
    af: float | None = None
    corner_hz: float | None = None
    count: int | None = None

    def values(self) -> dict[str, float]:
        from dataclasses import fields
        return {f.name: getattr(self, f.name) for f in fields(DeviceTable)
                if getattr(self, f.name) is not None and f.name not in ("kind", "count")}


def device_from_table(table: DeviceTable, *, temperature_k: float, count: int | None = None) -> Device:
    """The device a table states (its own `count` unless one is given)."""
    return make_device(table.kind, table.values(), count=count or table.count or 1, temperature_k=temperature_k)
