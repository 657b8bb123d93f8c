"""Passive stages around the DUT in a Y-factor set-up (cables, pads, relays, filters), named from the chain.

A Y-factor measurement sees the whole chain from the noise source to the receiver.  The passive stages on
the **source side** of the DUT (between the noise source and the DUT's input) and on the **receiver side**
(between the DUT's output and the receiver) are de-embedded so that the figures are the DUT's own.  They
come from a chain file (the one ``benchnf cascade`` reads: ``[[stage]]`` tables in signal order, the
passive ones with ``loss_db`` and their physical ``temperature_k``, exactly one active stage: the DUT) or
from ``--source-side DB K`` / ``--receiver-side DB K``, each repeatable, in signal order.

Several passive stages on one side are one equivalent matched loss (Friis 1944 for passive stages, each
with ``G_i = 1/L_i`` and ``T_e,i = (L_i - 1) T_i``):

.. math::

    L = \\prod_i L_i,\\qquad T_e = \\sum_i (L_i - 1)\\,T_i \\prod_{j<i} L_j,\\qquad
    T_{eq} = \\frac{T_e}{L - 1}

so that ``1 + (L - 1) T_eq / T0`` is the noise factor of the stages together.

References
----------
.. [1] H. T. Friis, "Noise figures of radio receivers", Proc. IRE 32(7), 1944.
.. [2] M. G. Arthur, NBS Monograph 142, National Bureau of Standards, 1974 (the Y-factor and second-stage
       equations the equivalent losses enter, :mod:`benchnf.noise.yfactor`).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

from ..errors import ParameterError
from ..noise.yfactor import loss_noise_factor
from ..units import T0_K

__all__ = ["PassiveStage", "side_loss", "passives_from_chain", "passives_from_options"]

Side = Literal["source", "receiver"]


@dataclass(frozen=True)
class PassiveStage:
    """A matched passive stage on one side of the DUT: its loss in dB at a physical temperature in K."""

    name: str
    side: Side
    loss_db: float
    temperature_k: float = T0_K

    def __post_init__(self) -> None:
        if self.side not in ("source", "receiver"):
            raise ParameterError(f"passive stage {self.name!r}: side {self.side!r} is 'source' or 'receiver'")
        loss_noise_factor(self.loss_db, self.temperature_k)  # validates both numbers


def side_loss(stages: Sequence[PassiveStage], side: Side) -> PassiveStage | None:
    """The stages on one side, in signal order, as one equivalent matched loss (None when there are none)."""
    mine = [s for s in stages if s.side == side]
    if not mine:
        return None
    if len(mine) == 1:
        return mine[0]
    total, te, ahead = 1.0, 0.0, 1.0
    for s in mine:
        loss = 10 ** (s.loss_db / 10)
        te += (loss - 1) * s.temperature_k * ahead
        ahead *= loss
        total *= loss
    t_eq = te / (total - 1) if total > 1 else T0_K
    return PassiveStage(f"{side} side", side, 10 * math.log10(total), t_eq)


def passives_from_options(source_side: Sequence[Sequence[float]] = (),
                          receiver_side: Sequence[Sequence[float]] = ()) -> tuple[PassiveStage, ...]:
    """``--source-side DB K`` and ``--receiver-side DB K`` (each repeatable, in signal order)."""
    out = [PassiveStage(f"--source-side {i}", "source", float(db), float(k))
           for i, (db, k) in enumerate(source_side, 1)]
    out += [PassiveStage(f"--receiver-side {i}", "receiver", float(db), float(k))
            for i, (db, k) in enumerate(receiver_side, 1)]
    return tuple(out)


def passives_from_chain(path: Path) -> tuple[PassiveStage, ...]:
    """The passive stages of a chain file, on either side of its one active stage (the DUT)."""
    from ..noise.cascade import load_chain
    chain = load_chain(path)
    active = [i for i, s in enumerate(chain.stages) if s.loss_db is None]
    if len(active) != 1:
        names = ", ".join(repr(chain.stages[i].name) for i in active) or "none"
        raise ParameterError(f"chain file {path}: yfactor needs passive stages (loss_db) around exactly one "
                             f"active stage, the DUT; found {len(active)} ({names}). Leave the receiver out: "
                             f"the calibration pair measures it")
    dut = active[0]
    return tuple(PassiveStage(s.name, "source" if i < dut else "receiver", float(s.loss_db),  # type: ignore[arg-type]
                              s.temperature_k if s.temperature_k is not None else chain.temperature_k)
                 for i, s in enumerate(chain.stages) if i != dut)
