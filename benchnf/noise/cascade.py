"""Chains of stages: the Friis cascade, the audio (voltage-noise) cascade, and where to spend.

Matched (RF) form, Friis 1944:

.. math::

    F = F_1 + \\frac{F_2 - 1}{G_1} + \\frac{F_3 - 1}{G_1 G_2} + \\dots,\\qquad
    T_e = T_{e1} + \\frac{T_{e2}}{G_1} + \\dots

with G the available power gains.  Stage i's share of the excess noise is
``(F_i - 1) / (G_1 ... G_{i-1}) / (F - 1)``.  A passive stage of loss L at
physical temperature T has ``F = 1 + (L - 1) T / T0`` and ``G = 1/L``.

Audio (voltage) form: each stage i has voltage noise e_n,i and current noise
i_n,i at its input and voltage gain A_i, and sees the previous stage's output
resistance (the source resistance Rs for the first).  Referred to the chain's
input (uncorrelated sources; Motchenbacher and Connelly, ch. 2 and 13):

.. math::

    e_{ni}^2 = 4kTR_s + \\sum_i \\frac{e_{n,i}^2 + (i_{n,i} R_{src,i})^2 + 4kT R_{out,i-1}}
               {(A_1 \\cdots A_{i-1})^2}

with ``R_src,1 = Rs`` and ``R_src,i = R_out,i-1``; the output resistance of a
stage is counted as thermal noise at the next stage's input.  Loading by the
input impedance is not modelled (state the gains as loaded gains).

References
----------
.. [1] H. T. Friis, "Noise figures of radio receivers", Proc. IRE 32(7), 1944.
.. [2] C. D. Motchenbacher and J. A. Connelly, "Low-Noise Electronic System
       Design", Wiley 1993.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Literal

from ..errors import ParameterError
from ..units import BOLTZMANN_J_PER_K, T0_K
from .devices import DeviceTable

__all__ = ["Stage", "Chain", "CascadeResult", "StageShare", "load_chain", "friis", "voltage_cascade",
           "where_to_spend", "device_levers", "what_if", "predict", "stage_with", "WHAT_IF_KEYS"]



@dataclass(frozen=True)
class Stage:
    """One stage of a chain; give what is known, with where it comes from.

    Attributes
    ----------
    name : str
    gain_db : float, optional
        Power gain (RF) or, for the audio form, the voltage gain in dB.
    nf_db, te_k : float, optional
        Noise figure or noise temperature (either).
    loss_db, temperature_k : float, optional
        A passive stage: its loss and physical temperature (gives NF and gain).
    en_v_per_rthz, in_a_per_rthz : float, optional
        Input voltage and current noise densities (audio form).
    output_ohm : float
        Output resistance, seen by the next stage (audio form).
    source : str
        Where the values come from: ``measured``, ``part data``, ``assumed``...
    """

    name: str
    gain_db: float | None = None
    nf_db: float | None = None
    te_k: float | None = None
    loss_db: float | None = None
    temperature_k: float | None = None
    en_v_per_rthz: float | None = None
    in_a_per_rthz: float = 0.0
    output_ohm: float = 0.0
    source: str = "stated"
    device: Any = field(default=None, compare=False, repr=False)  # a noise.devices Bjt/Fet the en and in come from

    def __post_init__(self) -> None:
        if self.loss_db is not None:
            if not (math.isfinite(self.loss_db) and self.loss_db >= 0):
                raise ParameterError(f"stage {self.name!r}: loss_db {self.loss_db!r} must be >= 0")
            if self.gain_db is None:
                object.__setattr__(self, "gain_db", -self.loss_db)
        if self.gain_db is not None and not math.isfinite(self.gain_db):
            raise ParameterError(f"stage {self.name!r}: gain_db must be a finite number")
        if self.nf_db is not None and self.te_k is not None:
            raise ParameterError(f"stage {self.name!r}: give nf_db or te_k, not both")
        if self.nf_db is not None and not self.nf_db >= 0:
            raise ParameterError(f"stage {self.name!r}: nf_db {self.nf_db!r} must be >= 0 dB")
        if self.te_k is not None and not self.te_k >= 0:
            raise ParameterError(f"stage {self.name!r}: te_k {self.te_k!r} must be >= 0 K")
        for key in ("en_v_per_rthz", "in_a_per_rthz", "output_ohm"):
            v = getattr(self, key)
            if v is not None and not (math.isfinite(v) and v >= 0):
                raise ParameterError(f"stage {self.name!r}: {key} {v!r} must be >= 0")

    @property
    def gain(self) -> float:
        """Linear power gain (RF form) or voltage gain squared (audio form)."""
        if self.gain_db is None:
            raise ParameterError(f"stage {self.name!r} has no gain: state gain_db (or loss_db)")
        return 10 ** (self.gain_db / 10)

    @property
    def voltage_gain(self) -> float:
        if self.gain_db is None:
            raise ParameterError(f"stage {self.name!r} has no gain: state gain_db")
        return 10 ** (self.gain_db / 20)

    @property
    def noise_factor(self) -> float:
        """F from nf_db, te_k, or a passive loss at its temperature."""
        if self.nf_db is not None:
            return 10 ** (self.nf_db / 10)
        if self.te_k is not None:
            return 1 + self.te_k / T0_K
        if self.loss_db is not None:
            t = self.temperature_k if self.temperature_k is not None else T0_K
            return 1 + (10 ** (self.loss_db / 10) - 1) * t / T0_K
        raise ParameterError(f"stage {self.name!r} has no noise data: state nf_db, te_k or loss_db")

    @property
    def has_noise_figure(self) -> bool:
        return self.nf_db is not None or self.te_k is not None or self.loss_db is not None


@dataclass(frozen=True)
class Chain:
    """Stages in order, with the source resistance and temperature for the audio form."""

    stages: tuple[Stage, ...]
    source_ohm: float | None = None
    temperature_k: float = T0_K
    name: str = ""
    temperature_stated: bool = field(default=False, compare=False)  # the chain file gave temperature_k

    def __post_init__(self) -> None:
        if not self.stages:
            raise ParameterError("a chain needs at least one [[stage]]")
        if self.source_ohm is not None and not (math.isfinite(self.source_ohm) and self.source_ohm > 0):
            raise ParameterError(f"source_ohm {self.source_ohm!r} must be > 0")

    def replace_stage(self, index: int, stage: Stage) -> "Chain":
        stages = list(self.stages)
        stages[index] = stage
        return replace(self, stages=tuple(stages))


# Plausible ranges of a stage's numbers in a chain file.
_STAGE_RANGES = {"gain_db": (-100.0, 200.0), "nf_db": (0.0, 100.0), "te_k": (0.0, 1e8), "loss_db": (0.0, 100.0),
                 "temperature_k": (0.0, 1e4), "en_v_per_rthz": (0.0, 1e-3), "in_a_per_rthz": (0.0, 1e-3),
                 "output_ohm": (0.0, 1e9)}


def _check_stage_numbers(st: dict[str, Any], where: str) -> None:
    from ..io.toml_file import number
    for key, (low, high) in _STAGE_RANGES.items():
        if key in st and st[key] is not None:
            st[key] = number(st[key], where=where, key=key, low=low, high=high)


@dataclass(frozen=True)
class _StageTable:
    name: str | None = None
    gain_db: float | None = None
    gain_linear: float | None = None
    voltage_gain_db: float | None = None
    nf_db: float | None = None
    te_k: float | None = None
    loss_db: float | None = None
    temperature_k: float | None = None
    en_v_per_rthz: float | None = None
    in_a_per_rthz: float | None = None
    output_ohm: float | None = None
    source: str | None = None
    notes: str | None = None
    device: DeviceTable | None = None


@dataclass(frozen=True)
class ChainFile:
    """The shape of a chain file (TOML, docs/cascade.md)."""

    stage: tuple[_StageTable, ...]
    name: str | None = None
    source_ohm: float | None = None
    temperature_k: float | None = None
    notes: str | None = None


def load_chain(path: str | Path) -> Chain:
    """Read a chain file (TOML, docs/cascade.md): ``[[stage]]`` tables in order."""
    from ..codec import check_shape
    from ..io.toml_file import number, read_toml
    path = Path(path)
    where = f"chain file {path}"
    shape = check_shape(ChainFile, read_toml(path, "chain file"), where)
    if not shape.stage:
        raise ParameterError(f"chain file {path} has no [[stage]] tables")
    tables: list[dict[str, Any]] = []
    for i, table in enumerate(shape.stage, 1):
        st = {k: v for k, v in table.__dict__.items() if v is not None and k != "notes"}
        if "gain_linear" in st:
            g = st.pop("gain_linear")
            if not (math.isfinite(g) and g > 0):
                raise ParameterError(f"{where}, stage {i}: gain_linear {g:g} must be > 0")
            st["gain_db"] = 10 * math.log10(g)
        if "voltage_gain_db" in st:
            st["gain_db"] = st.pop("voltage_gain_db")
        st.setdefault("name", f"stage {i}")
        _check_stage_numbers(st, f"{where}, stage {i}")
        tables.append(st)
    temperature = number(shape.temperature_k if shape.temperature_k is not None else T0_K, where=where,
                         key="temperature_k", low=0.0, high=1e4, low_open=True)
    stages = [Stage(**_with_device(st, temperature, f"{where}, stage {i}")) for i, st in enumerate(tables, 1)]
    source = (number(shape.source_ohm, where=where, key="source_ohm", low=0.0, low_open=True)
              if shape.source_ohm is not None else None)
    return Chain(tuple(stages), source, temperature, shape.name if shape.name is not None else path.stem,
                 temperature_stated=shape.temperature_k is not None)


#: The frequency at which a stage's device gives its en and in to the cascade.
DEVICE_SPOT_HZ = 1000.0


def _with_device(st: dict[str, Any], temperature_k: float, where: str) -> dict[str, Any]:
    """A stage's values with a ``[stage.device]`` table turned into its en and in at 1 kHz (their small
    correlation dropped, as the voltage cascade takes stages uncorrelated)."""
    table = st.get("device")
    if table is None:
        return st
    if st.get("en_v_per_rthz") is not None or st.get("in_a_per_rthz") is not None:
        raise ParameterError(f"{where}: give en and in, or a [stage.device], not both")
    from .devices import device_from_table
    try:
        device = device_from_table(table, temperature_k=temperature_k)
    except ParameterError as err:
        raise ParameterError(f"{where}, device: {err}") from None
    noise = device.noise(DEVICE_SPOT_HZ)
    return {**st, "device": device, "en_v_per_rthz": float(noise.en[0]), "in_a_per_rthz": float(noise.in_[0]),
            "source": st.get("source", f"{table.kind} model")}


@dataclass(frozen=True)
class StageShare:
    """A stage's place in the cascade."""

    name: str
    noise_factor: float
    gain_db: float
    contribution: float
    share_of_excess: float
    cumulative_noise_figure_db: float
    source: str


@dataclass(frozen=True)
class CascadeResult:
    """A predicted cascade: total figures and each stage's share."""

    noise_figure_db: float
    noise_temperature_k: float
    gain_db: float
    form: Literal["friis", "voltage"]
    input_density_v_per_rthz: float | None
    stages: tuple[StageShare, ...]
    notes: tuple[str, ...] = field(default=())


def friis(chain: Chain) -> CascadeResult:
    """Friis cascade of a matched chain (noise factor and noise temperature form).

    Raises
    ------
    ParameterError
        A stage without noise data or gain, or with a gain <= 0 in linear terms.
    """
    gain_before = 1.0
    total = 0.0
    parts = []
    for i, st in enumerate(chain.stages):
        f = st.noise_factor
        contribution = (f - 1.0) / gain_before if i else f - 1.0
        total += contribution
        parts.append((st, f, contribution, 1.0 + total))
        if i < len(chain.stages) - 1:
            gain_before *= st.gain  # needed to refer the next stage
    last = chain.stages[-1]
    total_gain_db = (10 * math.log10(gain_before * last.gain) if last.gain_db is not None else math.nan)
    f_total = 1.0 + total
    excess = f_total - 1.0
    shares = tuple(StageShare(st.name, f, st.gain_db if st.gain_db is not None else math.nan, c,
                              c / excess if excess > 0 else 0.0, 10 * math.log10(cum), st.source)
                   for st, f, c, cum in parts)
    return CascadeResult(10 * math.log10(f_total), excess * T0_K, total_gain_db, "friis", None, shares)


def voltage_cascade(chain: Chain) -> CascadeResult:
    """Input-referred noise of an audio chain (voltage form), and the NF at the chain's Rs."""
    if chain.source_ohm is None:
        raise ParameterError("the audio (voltage) cascade needs source_ohm at the top of the chain file")
    k_t = 4 * BOLTZMANN_J_PER_K * chain.temperature_k
    source = k_t * chain.source_ohm
    gain_before = 1.0
    r_src = chain.source_ohm
    total = 0.0
    parts = []
    for i, st in enumerate(chain.stages):
        if st.en_v_per_rthz is None:
            raise ParameterError(f"stage {st.name!r} has no en_v_per_rthz for the audio cascade")
        own = st.en_v_per_rthz ** 2 + (st.in_a_per_rthz * r_src) ** 2 + (k_t * r_src if i else 0.0)
        contribution = own / gain_before ** 2
        total += contribution
        parts.append((st, contribution, total))
        gain_before *= st.voltage_gain
        r_src = st.output_ohm
    n0 = 4 * BOLTZMANN_J_PER_K * T0_K * chain.source_ohm
    f_total = 1 + total / n0
    shares = tuple(StageShare(st.name, 1 + c / n0, float(st.gain_db), c,  # type: ignore[arg-type]
                              c / total if total > 0 else 0.0,
                              10 * math.log10(1 + cum / n0), st.source) for st, c, cum in parts)
    return CascadeResult(10 * math.log10(f_total), (f_total - 1) * T0_K, 20 * math.log10(gain_before), "voltage",
                         math.sqrt(source + total), shares,
                         (f"NF at Rs = {chain.source_ohm:g} ohm; best SNR always comes at the lowest "
                          f"source impedance, not at the Rs of minimum NF",))


def _predict(chain: Chain) -> CascadeResult:
    if all(s.has_noise_figure for s in chain.stages):
        return friis(chain)
    if all(s.en_v_per_rthz is not None for s in chain.stages):
        return voltage_cascade(chain)
    lacking = next(s for s in chain.stages if not s.has_noise_figure and s.en_v_per_rthz is None) \
        if any(not s.has_noise_figure and s.en_v_per_rthz is None for s in chain.stages) else None
    if lacking is not None:
        raise ParameterError(f"stage {lacking.name!r} has no noise data: state nf_db, te_k, loss_db "
                             f"(Friis form) or en_v_per_rthz (voltage form)")
    raise ParameterError("the chain mixes forms: give every stage a noise figure (nf_db, te_k or loss_db) "
                         "or every stage its en_v_per_rthz")


def where_to_spend(chain: Chain, *, improvement_db: float = 1.0) -> list[tuple[str, float]]:
    """For each stage, how much the chain's NF falls if that stage's own noise falls by `improvement_db`.

    One rule for every stage, active or passive: its own noise power falls by the factor
    ``r = 10^(-improvement_db/10)``. In the Friis form that is its noise temperature,
    ``Te' = r Te`` (so ``F' = 1 + r (F - 1)``, since ``F = 1 + Te/T0``); in the voltage form its en and
    in both fall by ``sqrt(r)``. Nothing is clamped: a quiet stage saves little because its Te is small.

    Returns (stage name, saving in dB), largest saving first.

    References
    ----------
    .. [1] H. T. Friis, "Noise figures of radio receivers", Proc. IRE 32(7), 1944.
    .. [2] IEEE Std 161 (noise factor and effective input noise temperature, F = 1 + Te/T0).
    """
    base = _predict(chain)
    r = 10 ** (-improvement_db / 10)
    out = []
    for i, st in enumerate(chain.stages):
        if base.form == "friis":
            new = replace(st, nf_db=10 * math.log10(1 + r * (st.noise_factor - 1)), te_k=None, loss_db=None,
                          gain_db=st.gain_db)
        else:
            scale = math.sqrt(r)
            new = replace(st, en_v_per_rthz=None if st.en_v_per_rthz is None else st.en_v_per_rthz * scale,
                          in_a_per_rthz=None if st.in_a_per_rthz is None else st.in_a_per_rthz * scale)
        out.append((st.name, base.noise_figure_db - _predict(chain.replace_stage(i, new)).noise_figure_db))
    return sorted(out, key=lambda x: x[1], reverse=True)


def device_levers(chain: Chain) -> list[tuple[str, float]]:
    """What the first stage's device would buy: the chain's NF saving (dB) if its rbb' were halved, its beta
    doubled (bipolar) or its gm doubled (FET), twice as many devices were in parallel, or it ran at its best
    current for the chain's source (searched from 10 uA to 30 mA). Empty when the first stage has no device.

    Returns (what changes, saving in dB), largest saving first.
    """
    first = chain.stages[0]
    device = first.device
    if device is None or chain.source_ohm is None:
        return []
    from .devices import Bjt, Source, best_current, device_current, noise_factor
    base = _predict(chain).noise_figure_db

    def nf_with(d: Any) -> float:
        n = d.noise(DEVICE_SPOT_HZ)
        stage = replace(first, en_v_per_rthz=float(n.en[0]), in_a_per_rthz=float(n.in_[0]), device=d)
        return _predict(chain.replace_stage(0, stage)).noise_figure_db

    source = Source(chain.source_ohm)
    best = best_current(device, lambda d: 10 * math.log10(float(noise_factor(d.noise(DEVICE_SPOT_HZ), source)[0])),
                        current_range_a=(1e-5, 3e-2) if isinstance(device, Bjt) or device.idss_a is None
                        else (1e-5, device.idss_a))
    each = " each" if device.count > 1 else ""
    options = [(f"{first.name}: at {best.current_a * 1e3:.3g} mA{each} instead of {device_current(device) * 1e3:.3g} mA",
                device.at_current(best.current_a)),
               (f"{first.name}: {2 * device.count} devices in parallel instead of {device.count}",
                replace(device, count=2 * device.count))]
    if isinstance(device, Bjt):
        options += [(f"{first.name}: rbb' {device.rbb_ohm / 2:.3g} ohm instead of {device.rbb_ohm:.3g} ohm",
                     replace(device, rbb_ohm=device.rbb_ohm / 2)),
                    (f"{first.name}: beta {2 * device.beta:.3g} instead of {device.beta:.3g}",
                     replace(device, beta=2 * device.beta))]
    else:
        gm = device.transconductance_s
        options.append((f"{first.name}: gm {2 * gm * 1e3:.3g} mS instead of {gm * 1e3:.3g} mS",
                        replace(device, gm_s=2 * gm, gm_at_a=device.id_a, idss_a=None, vp_v=None)))
    return sorted(((text, base - nf_with(d)) for text, d in options), key=lambda x: x[1], reverse=True)


#: What --what-if may change on a stage, by its key or a short name.
WHAT_IF_KEYS = {"gain_db": "gain_db", "gain": "gain_db", "nf_db": "nf_db", "nf": "nf_db", "te_k": "te_k",
                "te": "te_k", "loss_db": "loss_db", "loss": "loss_db", "temperature_k": "temperature_k",
                "en_v_per_rthz": "en_v_per_rthz", "en": "en_v_per_rthz", "in_a_per_rthz": "in_a_per_rthz",
                "in": "in_a_per_rthz", "output_ohm": "output_ohm"}


def stage_with(stage: Stage, changes: dict[str, float]) -> Stage:
    """`stage` with some values swapped (keys of WHAT_IF_KEYS); the noise statement stays consistent.

    A new nf_db replaces te_k and a loss (the gain stays); a new te_k replaces nf_db and a loss; a new loss
    replaces nf_db and te_k and, unless a gain is given too, sets the gain to minus the loss.
    """
    unknown = [k for k in changes if k not in WHAT_IF_KEYS]
    if unknown:
        raise ParameterError(f"--what-if: {', '.join(repr(k) for k in unknown)} is not a stage value one can swap; "
                             f"the keys are {', '.join(WHAT_IF_KEYS)}")
    new: dict[str, Any] = {WHAT_IF_KEYS[k]: v for k, v in changes.items()}
    if "nf_db" in new:
        new.update(te_k=None, loss_db=None)
    elif "te_k" in new:
        new.update(nf_db=None, loss_db=None)
    elif "loss_db" in new:
        new.update(nf_db=None, te_k=None)
        new.setdefault("gain_db", -new["loss_db"])
    return replace(stage, **new, source="what-if")


def what_if(chain: Chain, index: int, replacement: Stage) -> tuple[CascadeResult, CascadeResult]:
    """(now, with `replacement` in place of stage `index`)."""
    if not 0 <= index < len(chain.stages):
        raise ParameterError(f"stage index {index} is outside the chain (1..{len(chain.stages)})")
    return _predict(chain), _predict(chain.replace_stage(index, replacement))


def predict(chain: Chain) -> CascadeResult:
    """Friis when every stage has a noise figure, else the audio voltage form."""
    return _predict(chain)
