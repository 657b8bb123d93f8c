"""What a Y-factor measurement refuses or notes about its inputs: a receiver recording's own report (overload,
cut short, lost samples), a calibration pair that cannot resolve the receiver, and a budget the 8-bit
quantisation dominates."""

from __future__ import annotations

import math
from typing import Any

from ..errors import MeasurementError
from ..noise.uncertainty import Budget

__all__ = ["Y_CAUSES", "compression_notes", "receiver_notes", "check_calibration_pair", "refuse_quantisation"]


#: What makes a Y-factor noise figure come out below 0 dB (common practice).
Y_CAUSES = ("an ENR table for another source or in other units (or --enr-db wrong); hot and cold captures "
            "swapped; a wrong cold temperature; a calibration pair taken at another setting than the DUT "
            "measurement; a receiver that compresses in the hot state")


#: A state louder than this (RMS, dBFS) may be compressing where its samples have no rails to count
#: (floating point, audio): noise peaks about 4 sigma above its RMS reach full scale near -12 dBFS (common practice).
COMPRESSION_DBFS = -15.0
#: More than this fraction of an integer recording's I/Q values at the converter's rails: clipped peaks
#: (a recording above io.sigmf_iq.OVERLOADED is refused when it is opened).
AT_RAILS = 1e-6


def compression_notes(loud: list[tuple[str, Any]]) -> list[str]:
    """A note where a hot state may compress: values at the converter's rails (integer IQ), else a level
    above COMPRESSION_DBFS. `loud`: (label, yfactor_model.Loudness) of each hot state."""
    railed = [(name, x.at_rails) for name, x in loud if x.at_rails is not None and x.at_rails > AT_RAILS]
    hot = [(name, x.level_dbfs) for name, x in loud if x.at_rails is None and x.level_dbfs > COMPRESSION_DBFS]
    notes = []
    if railed:
        notes.append(f"{_names(railed)}: up to {100 * max(v for _n, v in railed):.4f} % of the I/Q values sit at "
                     f"the converter's rails: the receiver clips the hot state's peaks, which lowers Y and raises "
                     f"the NF read; lower the gain or use a lower-ENR source")
    if hot:
        notes.append(f"{_names(hot)} reach{'es' if len(hot) == 1 else ''} {max(v for _n, v in hot):.1f} dBFS: the "
                     f"receiver or the DUT may be compressing, which lowers Y and raises the NF read; lower the gain "
                     f"or use a lower-ENR source")
    return notes


def _names(items: list[tuple[str, float]]) -> str:
    return items[0][0] + (f" and {len(items) - 1} other hot state(s)" if len(items) > 1 else "")


def receiver_notes(everything: list[Any]) -> list[str]:
    """What a receiver recording's metadata says went wrong: a note when the recording was cut short or lost
    samples (an overloaded one is refused when it is opened)."""
    notes, seen = [], set()
    for item in everything:
        meta = getattr(item, "metadata", None) or {}
        path = getattr(item, "path", None)
        if path in seen or "benchnf:status" not in meta:
            continue
        seen.add(path)
        name = path.name if path is not None else "the recording"
        if meta["benchnf:status"] != "complete":
            notes.append(f"{name} was cut short ({meta['benchnf:status']}): the samples on disk are used")
        lost = meta.get("benchnf:lost_samples", 0)
        if isinstance(lost, int) and lost > 0:
            notes.append(f"{name} lost about {lost} samples on the way: states spanning the loss are a little short")
    return notes


def check_calibration_pair(pw: Any) -> None:
    """Refuse a calibration pair whose Y cannot be told from 1 (three standard deviations of its scatter):
    the receiver's own noise swamps the source, and the second-stage correction and the DUT's gain would
    be noise."""
    ch, cc = pw.cal_hot or 0.0, pw.cal_cold or 0.0
    y2 = ch / cc if cc > 0 else 0.0
    u = math.hypot(pw.u_cal_hot, pw.u_cal_cold)
    if not (cc > 0 and y2 - 1 > 3 * u * y2):
        shown = f"{10 * math.log10(y2):.3f} dB" if y2 > 0 else "not above the floor"
        raise MeasurementError(f"the calibration pair cannot resolve the receiver: its Y is {shown} with a "
                               f"scatter of {100 * u:.2f} %: the receiver's own noise swamps the source; put a "
                               f"preamplifier of known gain before the receiver, use a hotter source (higher ENR), "
                               f"or record the pair longer")


def refuse_quantisation(budget: Budget) -> None:
    """Refuse a noise figure whose budget the receiver's 8-bit quantisation dominates (its term larger than
    every other together): the receiver's gain is set too low for its converter."""
    q = [c.u_db for c in budget.contributions if c.name == "quantisation"]
    rest = math.sqrt(sum(c.u_db ** 2 for c in budget.contributions if c.name != "quantisation"))
    if q and q[0] > rest:
        raise MeasurementError(f"the receiver's 8-bit quantisation dominates the noise figure's uncertainty "
                               f"({q[0]:.3f} dB against {rest:.3f} dB for everything else): its noise spans too few "
                               f"converter steps; raise the tuner gain (--gain) or add gain ahead of the receiver")
