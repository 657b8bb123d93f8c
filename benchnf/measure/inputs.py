"""Resolving inputs: one rule for every front end (command line, batch, guided plans, demo, desk).

A value such as the source resistance or the volts per full scale may be stated in several places:
by the user (an option, a plan, a form), by a capture's sidecar, by a calibration file, by a profile's
conditions. The rule:

1. Every place that states the value must agree with every other (within the stated relative
   tolerance); a disagreement is refused with both values and both places named, never resolved
   silently.
2. The value comes from the first place, in the order user > calibration > sidecar > profile, that
   states it (they agree, so the order only decides which place is named).
3. Where no place states it, the documented default applies, and the caller says so in a note.
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from ..errors import ParameterError

__all__ = ["agree", "distinct_files", "open_calibrated"]

Source = tuple[str, Any]


def agree(name: str, sources: Sequence[Source], *, default: Any = None, rel_tol: float = 1e-9,
          unit: str = "", fix: str = "") -> Any:
    """The value of `name` from `sources` (place, value) in priority order; refuse disagreement.

    Parameters
    ----------
    name : str
        What the value is, for messages ("source resistance").
    sources : sequence of (str, value)
        Places in priority order; a value of None means "not stated there".
    default
        Returned when no place states it.
    rel_tol : float
        Relative tolerance within which two numbers agree.
    unit, fix : str
        The unit for messages, and what the user can do about a conflict.

    Raises
    ------
    ParameterError
        Two places state values that differ by more than `rel_tol`.
    """
    stated = [(place, value) for place, value in sources if value is not None]
    if not stated:
        return default
    first_place, first = stated[0]
    for place, value in stated[1:]:
        if not _same(first, value, rel_tol):
            raise ParameterError(
                f"the {name} is {_show(first)}{unit} in {first_place} but {_show(value)}{unit} in {place}: they must "
                f"agree{' (within ' + format(100 * rel_tol, 'g') + ' %)' if rel_tol > 1e-6 else ''}; "
                f"{fix or 'correct the one that is wrong'}")
    return first


def _show(value: Any) -> str:
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return format(value, "g")
    if isinstance(value, (tuple, list)):
        return " ".join(_show(v) for v in value)
    return repr(value)


def _same(a: Any, b: Any, rel_tol: float) -> bool:
    if isinstance(a, (tuple, list)) and isinstance(b, (tuple, list)):
        return len(a) == len(b) and all(_same(x, y, rel_tol) for x, y in zip(a, b))
    if isinstance(a, (int, float)) and isinstance(b, (int, float)):
        return math.isclose(float(a), float(b), rel_tol=rel_tol, abs_tol=0.0)
    return bool(a == b)


#: Why the same recording may not stand for two conditions (see :func:`distinct_files`).
OTHER_CONDITIONS = ("each condition is its own recording: the same data as two conditions would read "
                    "the difference between them as zero")


def distinct_files(paths: Sequence[Path], role: str, why: str = "repeats must be separate recordings (the same "
                   "data twice would double the degrees of freedom and shrink the uncertainty falsely)") -> None:
    """Refuse the same file given twice for `role` (by path or hard link: the same inode), saying `why`."""
    seen: dict[tuple[int, int], Path] = {}
    for p in paths:
        try:
            st = os.stat(p)
        except OSError:
            continue  # the reader names a missing file
        key = (st.st_dev, st.st_ino)
        if key in seen:
            raise ParameterError(f"{p} and {seen[key]} are the same file, given twice ({role}): {why}")
        seen[key] = p


def open_calibrated(path: Path, *, condition: str | None, channel: int | None, volts_per_fs: float | None,
                    calibration: Any = None, calibration_name: str = "the calibration",
                    tolerance_pct: float = 1.0, accept_dropouts: bool = False) -> Any:
    """Open an audio capture with its volts per full scale resolved by the rule above.

    The stated value (``--volts-per-fs``), the calibration's and the sidecar's must agree within
    `tolerance_pct` (at least 1 %); a calibration also checks its sample rate and channel.
    """
    from ..calibration import apply_calibration
    from ..io import open_capture
    cap = open_capture(path, channel=channel, condition=condition, accept_dropouts=accept_dropouts)
    from ..io.sidecar import sidecar_volts_per_fs
    side = sidecar_volts_per_fs(dict(cap.metadata), cap.channel)
    vpfs = agree("volts per full scale", [("--volts-per-fs", volts_per_fs),
                                          (calibration_name, getattr(calibration, "volts_per_fs", None)),
                                          (f"the sidecar of {Path(path).name}", side)],
                 rel_tol=max(tolerance_pct, 1.0) / 100, unit=" V",
                 fix="the sound card's gain setting may have changed: calibrate again, or correct the sidecar")
    if volts_per_fs is None and calibration is not None:
        cap = apply_calibration(cap, calibration)
    return cap.replace(volts_per_fs=vpfs) if vpfs is not None else cap
