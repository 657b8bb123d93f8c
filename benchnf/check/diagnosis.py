"""What the limits a unit did not pass point to, together: findings in the order a repairer would act on them.

Each limit carries its own suggestion (:data:`.limits.HINTS`); read one by one, they can point the wrong way.
Supply ripple (lines at twice the mains frequency and its multiples) together with raised broadband noise is
the classic picture of a failing reservoir or filter capacitor: the ripple rides on the rail, and a rail
that is poorly filtered also passes the regulator's and the rectifier's broadband noise to the stages it
feeds. One part explains both, so the supply's filter comes first and the input stage is suspected only if
the noise stays raised once the supply is right (common practice of audio repair). Hum findings name their
line frequencies.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

__all__ = ["diagnose", "BROADBAND"]

#: Limits whose failure means raised broadband noise.
BROADBAND = ("ein_dbu", "noise_figure_db", "nf_at_1khz_db", "mask input_density_v_per_rthz")


def _lines_of(spurs: Sequence[Any], family: str) -> str:
    freqs = sorted({round(sp.freq_hz, 1) for sp in spurs if family in ("all", sp.family)})
    return ", ".join(f"{f:g}" for f in freqs) + " Hz" if freqs else "no lines found"


def diagnose(verdicts: Sequence[Any], spurs: Sequence[Any], attribution: Sequence[Any] | None = None,
             attribution_all: Any = None) -> tuple[str, ...]:
    """The findings, most telling first, from the limit verdicts not passed, the unit's hum lines and, where
    reference channels were recorded, what they explain (measured, so it comes first)."""
    off = [v for v in verdicts if v.verdict != "PASS"]
    names = {v.name.split(" (worst")[0] for v in off}
    broadband = [n for n in names if n in BROADBAND]
    ripple = "hum ripple" in names
    findings = []
    if off and attribution and attribution_all is not None:
        from ..measure.attribution import describe
        findings.append(describe(attribution_all, attribution) + ": look first at what those references "
                        "carry. The verdicts judge the output with them removed; check the unit as recorded "
                        "without --reference-channel")
    if ripple and broadband:
        findings.append(f"supply ripple ({_lines_of(spurs, 'ripple')}) together with raised broadband noise "
                        f"({', '.join(sorted(broadband))}): look at the supply's filter first; one failing "
                        f"reservoir or filter capacitor explains both. Suspect the input stage only if the noise "
                        f"stays raised once the supply is right")
    for v in off:
        name = v.name.split(" (worst")[0]
        if name.startswith("hum "):
            family = name[4:]
            if family == "ripple" and broadband:
                continue  # said above
            findings.append(f"{v.hint or name} (lines at {_lines_of(spurs, family)})")
        elif name in BROADBAND and ripple:
            continue  # folded into the supply finding
        elif v.hint and v.hint not in findings:
            findings.append(v.hint)
    return tuple(dict.fromkeys(findings))
