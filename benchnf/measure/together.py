"""Captures that belong to one measurement: the same analyzer setting for the floor, the DUT and the tone.

A floor captured at another input gain of the interface than the DUT is subtracted at the wrong level; a
tone captured 6 dB hotter reads 6 dB more gain. A sidecar may state how its capture was taken:

* ``gain_setting`` - the interface's input gain as its control reads (any text, e.g. ``"3 o'clock"``,
  ``"+20 dB pad off"``): captures whose settings differ are refused, unless every one states its
  ``input_gain_db``;
* ``input_gain_db`` - the same as a number in dB: where every capture states one, a capture taken at
  another setting is corrected by the stated step (its volts per full scale divided by ``10^(step/20)``),
  which is exact as far as the interface's steps are as marked, and the result says so; where only some
  state it, they are refused;
* ``channel``, ``calibration``, ``sample_rate_hz`` - the input the capture came from and the calibration it
  was taken under: captures stating different ones are refused (one calibration holds for one input at one
  setting). A sidecar's ``volts_per_fs`` is each capture's own and may differ.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from ..errors import CaptureError

__all__ = ["SAME_KEYS", "captures_together"]

#: Sidecar keys that must agree across the captures of one measurement.
SAME_KEYS = ("gain_setting", "channel", "calibration", "sample_rate_hz")


def _stated(captures: Mapping[str, Any], key: str) -> list[tuple[str, Any]]:
    return [(role, c.metadata[key]) for role, c in captures.items()
            if c is not None and key in getattr(c, "metadata", {}) and c.metadata[key] is not None]


def _refuse_differences(captures: Mapping[str, Any]) -> None:
    present = [c for c in captures.values() if c is not None and hasattr(c, "metadata")]
    steps_known = bool(present) and len(_stated(captures, "input_gain_db")) == len(present)
    for key in SAME_KEYS:
        if key == "gain_setting" and steps_known:
            continue  # the settings differ by steps stated in dB: corrected below
        stated = _stated(captures, key)
        for role, value in stated[1:]:
            if value != stated[0][1]:
                raise CaptureError(f"the {stated[0][0]} capture's sidecar states {key} = {stated[0][1]!r} but the "
                                   f"{role} capture's {value!r}: the captures of one measurement must be taken at one "
                                   f"setting of one input; record them again alike (or correct the sidecar)")


def captures_together(captures: Mapping[str, Any]) -> tuple[dict[str, Any], list[str]]:
    """Check that the captures (by role, the first the reference; None where absent) were taken alike, and
    correct a stated input-gain step exactly. Returns the captures (corrected where needed) and the notes.

    Raises
    ------
    CaptureError
        A difference in gain setting, channel, calibration or sample rate; an input gain stated for some
        captures but not others.
    """
    _refuse_differences(captures)
    present = {role: c for role, c in captures.items() if c is not None and hasattr(c, "metadata")}
    gains = _stated(present, "input_gain_db")
    if not gains:
        return dict(captures), []
    missing = [role for role in present if role not in dict(gains)]
    if missing:
        raise CaptureError(f"the {gains[0][0]} capture's sidecar states input_gain_db but the {missing[0]} "
                           f"capture's does not: state the interface's input gain for every capture of the "
                           f"measurement (or for none)")
    ref_role, ref = gains[0]
    out, notes = dict(captures), []
    for role, g in gains[1:]:
        step = float(g) - float(ref)
        cap = present[role]
        if step and cap.volts_per_fs is not None:
            out[role] = cap.replace(volts_per_fs=cap.volts_per_fs * 10 ** (-step / 20),
                                    metadata={**cap.metadata, "input_gain_step_db": step})
            notes.append(f"the {role} capture was taken at {step:+.2f} dB input gain against the {ref_role} "
                         f"capture's ({float(g):g} dB and {float(ref):g} dB in their sidecars): its level is "
                         f"corrected by that step, exact as far as the interface's steps are as marked")
    return out, notes
