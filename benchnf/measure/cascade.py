"""The cascade prediction as a measurement: a chain file in, the predicted figures, where to spend and an
optional what-if out, as one typed result (``benchnf cascade``).

The equations are in :mod:`benchnf.noise.cascade` (Friis 1944; the voltage form for audio chains).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..codec import ResultFile, figure, from_data, to_data
from ..errors import BenchError
from ..noise.cascade import CascadeResult, device_levers, load_chain, predict, stage_with, what_if, where_to_spend
from .provenance import Provenance

__all__ = ["CascadeRequest", "Saving", "WhatIf", "CascadePrediction", "run_cascade"]


@dataclass(frozen=True)
class CascadeRequest:
    """A chain file, the improvement tried on each stage for the ranking, and an optional swap of one
    stage's data (`what_if_stage`: its number from 1 or its name; `what_if_changes`: key -> value)."""

    chain: Path
    improve_db: float = 1.0
    what_if_stage: str | None = None
    what_if_changes: tuple[str, ...] = ()  # KEY=VALUE as typed: nf=1.2, en=0.3n


@dataclass(frozen=True)
class Saving:
    """How much the chain's noise figure falls if one stage's own noise falls by the stated improvement."""

    stage: str
    noise_figure_saving_db: float


@dataclass(frozen=True)
class WhatIf:
    """The chain predicted again with one stage's data swapped (`change` says which)."""

    change: str
    result: CascadeResult

    def to_dict(self) -> dict[str, Any]:
        return {"change": self.change, **to_data(self.result)}

    @classmethod
    def from_dict(cls, data: dict[str, Any], *, where: str) -> "WhatIf":
        rest = {k: v for k, v in data.items() if k != "change"}
        return cls(from_data(str, data.get("change"), where, "what_if.change"),
                   from_data(CascadeResult, rest, where, "what_if"))

    @staticmethod
    def data_schema() -> dict[str, Any]:
        from ..codec import schema_of
        inner = schema_of(CascadeResult)
        return {**inner, "properties": {"change": {"type": "string"}, **inner["properties"]},
                "required": ["change", *inner["required"]]}


@dataclass(frozen=True)
class CascadePrediction(CascadeResult, ResultFile):
    """A chain's predicted noise figure, each stage's share, where to spend, and a what-if."""

    KIND = "cascade"

    where_to_spend: tuple[Saving, ...] = field(default=())
    improve_db: float = figure(default=1.0, exclusiveMinimum=0)
    what_if: WhatIf | None = figure(default=None, omit_if_none=True)
    device_levers: tuple[Saving, ...] | None = figure(default=None, omit_if_none=True)  # the first stage's device
    warnings: tuple[str, ...] = ()  # one line each, also on stderr as "benchnf: warning: ..."
    provenance: Provenance | None = figure(default=None, omit_if_none=True)


def run_cascade(req: CascadeRequest, *, progress: Any = None) -> CascadePrediction:
    """Predict the chain, rank its stages, and apply the what-if when asked."""
    chain = load_chain(req.chain)
    result = predict(chain)
    spend = tuple(Saving(n, v) for n, v in where_to_spend(chain, improvement_db=req.improve_db))
    alternative = None
    if req.what_if_stage is not None:
        target = req.what_if_stage
        names = [s.name for s in chain.stages]
        index = int(target) - 1 if target.isdigit() else (names.index(target) if target in names else -1)
        if not 0 <= index < len(names):
            raise BenchError(f"--what-if: no stage {target!r} (stages: {', '.join(names)}, or 1..{len(names)})")
        changes = _changes(req.what_if_changes)
        _, other = what_if(chain, index, stage_with(chain.stages[index], changes))
        alternative = WhatIf(f"{names[index]} had " + ", ".join(_words(k, v) for k, v in changes.items()), other)
    levers = tuple(Saving(text, v) for text, v in device_levers(chain)) or None
    return CascadePrediction(**{f: getattr(result, f) for f in result.__dataclass_fields__},
                             where_to_spend=spend, improve_db=req.improve_db, what_if=alternative, device_levers=levers)


_WORDS = {"gain_db": ("gain", "dB"), "nf_db": ("a noise figure of", "dB"), "te_k": ("a noise temperature of", "K"),
          "loss_db": ("a loss of", "dB"), "temperature_k": ("a temperature of", "K"),
          "en_v_per_rthz": ("en", "V/√Hz"), "in_a_per_rthz": ("in", "A/√Hz"), "output_ohm": ("an output resistance of", "Ω")}


def _words(key: str, value: float) -> str:
    """A swapped stage value in words: ``a noise figure of 1.20 dB``, ``en 0.300 nV/√Hz``."""
    from ..noise.cascade import WHAT_IF_KEYS
    from ..quantity import Quantity
    label, unit = _WORDS[WHAT_IF_KEYS[key]]
    return f"{label} {Quantity(value, unit).text()}"


def _changes(pairs: tuple[str, ...]) -> dict[str, float]:
    from ..notation import parse_number
    changes: dict[str, float] = {}
    for pair in pairs:
        key, _, value = pair.partition("=")
        try:
            changes[key] = parse_number(value)
        except ValueError:
            raise BenchError(f"--what-if: {pair!r} is not KEY=NUMBER (e.g. nf=1.2, te=90, loss=0.5, "
                             f"en=1n)") from None
    return changes
