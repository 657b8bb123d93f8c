"""Hot and cold found in one recording whose noise source was switched on and off: the power steps.

The recording's power is taken in short blocks (each block's mean removed, so a receiver's DC offset does not
count). Its levels in dB fall in two groups; the threshold between them is the one that best separates the
two (Otsu's criterion: the largest variance between the groups, N. Otsu, "A threshold selection method from
gray-level histograms", IEEE Trans. SMC 9 (1979) 62-66). Runs of blocks on one side are the states; a run too
short to be a state (a glitch, or the ramp of a switch) joins its neighbours when they agree and is dropped
otherwise. Each state loses ``guard_s`` at both ends (the switch's transition and its settling); what is then
shorter than ``min_s``, or scatters much more than the other states (a hand on the cable, a source not yet
settled), is dropped. Neighbouring hot and cold states are paired in time order, each state used once.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..errors import MeasurementError

__all__ = ["SwitchedState", "Switching", "block_powers", "find_states", "otsu_threshold"]

_UNSTEADY = 3.0  # a state scattering this many times more than the typical state is dropped (common practice)


@dataclass(frozen=True)
class SwitchedState:
    """One state of the recording: samples ``start`` to ``stop`` (the guards already left out)."""

    state: str
    start: int
    stop: int
    level_db: float
    spread_db: float
    dropped: str | None = None  # why it is not used
    pair: int | None = None  # the pair it belongs to


@dataclass(frozen=True)
class Switching:
    """What the power steps gave: every state found, the pairs (hot index, cold index), the threshold and
    the power trace it was found in."""

    states: tuple[SwitchedState, ...]
    pairs: tuple[tuple[int, int], ...]
    threshold_db: float
    block_frames: int
    trace_db: NDArray[np.float64]


def block_powers(blocks: Iterable[NDArray], block_frames: int) -> NDArray[np.float64]:
    """Mean power of each whole block of `block_frames` samples, each block's mean removed (real or complex)."""
    out: list[float] = []
    tail: NDArray | None = None
    for b in blocks:
        x = b if tail is None or tail.size == 0 else np.concatenate((tail, b))
        n = x.size // block_frames
        if n:
            m = x[:n * block_frames].reshape(n, block_frames)
            d = m - m.mean(axis=1, keepdims=True)
            out.extend((d.real ** 2 + d.imag ** 2).mean(axis=1) if np.iscomplexobj(d) else (d ** 2).mean(axis=1))
        tail = x[n * block_frames:]
    return np.asarray(out, dtype=np.float64)


def otsu_threshold(levels: NDArray[np.float64]) -> tuple[float, float, float, float]:
    """The threshold between two groups of levels with the largest between-group variance; returns it with
    the two groups' means and their pooled standard deviation."""
    x = np.sort(levels)
    n = x.size
    k = np.arange(1, n)
    c = np.cumsum(x)
    m_lo, m_hi = c[:-1] / k, (c[-1] - c[:-1]) / (n - k)
    between = k * (n - k) * (m_hi - m_lo) ** 2
    i = int(np.argmax(between))
    lo, hi = x[:i + 1], x[i + 1:]
    pooled = math.sqrt((float(np.sum((lo - lo.mean()) ** 2)) + float(np.sum((hi - hi.mean()) ** 2))) / max(n - 2, 1))
    return float((x[i] + x[i + 1]) / 2), float(lo.mean()), float(hi.mean()), pooled


def _runs(hot: NDArray[np.bool_]) -> list[list[int]]:
    """[is_hot, first block, end block) of each run of equal labels."""
    edges = np.flatnonzero(np.diff(hot.astype(np.int8))) + 1
    starts = np.concatenate(([0], edges))
    ends = np.concatenate((edges, [hot.size]))
    return [[int(hot[s]), int(s), int(e)] for s, e in zip(starts, ends)]


def _absorb_glitches(runs: list[list[int]], shortest: int) -> list[list[int]]:
    """Runs shorter than `shortest` blocks: joined to their neighbours when both agree, else left as they are
    (to be dropped as too short); neighbouring runs of one state then merged."""
    for i in range(1, len(runs) - 1):
        if runs[i][2] - runs[i][1] < shortest and runs[i - 1][0] == runs[i + 1][0]:
            runs[i][0] = runs[i - 1][0]
    merged: list[list[int]] = []
    for r in runs:
        if merged and merged[-1][0] == r[0]:
            merged[-1][2] = r[2]
        else:
            merged.append(list(r))
    return merged


def find_states(powers: NDArray[np.float64], *, block_frames: int, rate_hz: float, guard_s: float = 0.05,
                min_s: float = 0.2) -> Switching:
    """Hot and cold states in a block power trace (see the module docstring).

    Raises
    ------
    MeasurementError
        No two levels (the source was not switched, or its step is lost in the scatter), or no pair of
        usable states.
    """
    if powers.size < 8 or not np.all(powers > 0):
        raise MeasurementError("the recording is too short or silent to find hot and cold states in: record "
                               "several seconds while switching the noise source")
    db = 10 * np.log10(powers)
    thr, lo, hi, pooled = otsu_threshold(db)
    if not hi - lo > max(6 * pooled, 0.02):
        raise MeasurementError(f"no hot and cold states found: the power stays within {hi - lo:.2f} dB (its "
                               f"scatter {pooled:.3f} dB): was the noise source switched during the recording?")
    block_s = block_frames / rate_hz
    guard = int(math.ceil(guard_s / block_s))
    runs = _absorb_glitches(_runs(db > thr), max(3, int(0.2 * min_s / block_s)))
    raw: list[tuple[str, int, int, float, float]] = []
    for is_hot, a, b in runs:
        a2, b2 = a + (guard if a > 0 else 0), b - (guard if b < db.size else 0)
        seg = db[a2:b2] if b2 > a2 else db[a:a]
        raw.append(("hot" if is_hot else "cold", a2, max(b2, a2), float(10 * np.log10(np.mean(powers[a2:b2])))
                    if seg.size else math.nan, float(np.std(seg, ddof=1)) if seg.size > 1 else math.nan))
    typical = float(np.nanmedian([r[4] for r in raw])) if raw else math.nan
    states, usable = [], []
    for state, a, b, level, spread in raw:
        why = None
        if (b - a) * block_s < min_s:
            why = f"shorter than {min_s:g} s once {guard_s:g} s at each switch is left out"
        elif spread > _UNSTEADY * typical:
            why = f"unsteady: its level scatters {spread:.3f} dB against {typical:.3f} dB for the others"
        states.append(SwitchedState(state, a * block_frames, b * block_frames, level, spread, why))
        usable.append(why is None)
    return _paired(states, usable, thr, block_frames, db)


def _paired(states: list[SwitchedState], usable: list[bool], thr: float, block_frames: int,
            db: NDArray[np.float64]) -> Switching:
    """Neighbouring usable hot and cold states paired in time order, each used once."""
    from dataclasses import replace
    pairs: list[tuple[int, int]] = []
    i = 0
    while i < len(states) - 1:
        if usable[i] and usable[i + 1] and states[i].state != states[i + 1].state:
            h, c = (i, i + 1) if states[i].state == "hot" else (i + 1, i)
            states[i] = replace(states[i], pair=len(pairs))
            states[i + 1] = replace(states[i + 1], pair=len(pairs))
            pairs.append((h, c))
            i += 2
        else:
            i += 1
    for k, s in enumerate(states):
        if s.dropped is None and s.pair is None:
            states[k] = replace(s, dropped="no neighbouring state of the other kind to pair with")
    if not pairs:
        raise MeasurementError("no hot state lies beside a usable cold one: switch the source more slowly (each "
                               "state a second or more) or record longer")
    return Switching(tuple(states), tuple(pairs), thr, block_frames, db)
