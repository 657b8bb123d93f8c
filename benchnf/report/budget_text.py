"""Uncertainty budgets as text (--explain): every contribution with its degrees of freedom, the combined
standard uncertainty and its Welch-Satterthwaite effective degrees of freedom (GUM G.4.1)."""

from __future__ import annotations

import math
from collections.abc import Mapping

from ..noise.uncertainty import Budget

__all__ = ["budget_lines"]


def _nu(dof: float) -> str:
    if not math.isfinite(dof):
        return "inf"
    return f"{dof:.0f}" if dof < 1e5 else ">1e5"


def budget_lines(budgets: Mapping[str, Budget], heading: str) -> list[str]:
    """The --explain section: one block per budget, random (Welch) parts and stated (bench) parts alike."""
    lines = ["", heading, f"  {'u dB':>10}  {'nu':>6}  contribution (nu: degrees of freedom; inf for a stated limit)"]
    for name, b in budgets.items():
        lines.append(f"  {name}: {b.value_db:.3f} dB, combined {b.combined_db:.3f} dB (effective degrees of "
                     f"freedom {_nu(b.effective_dof)}), expanded {b.expanded_db:.3f} dB (k=2)")
        lines += [f"  {c.u_db:10.4f}  {_nu(c.dof):>6}  {c.name} ({c.note})" for c in b.contributions]
    return lines
