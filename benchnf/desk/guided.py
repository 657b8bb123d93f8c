"""A guided plan in the desk: each step recorded by a button, checked at once, redone if wanted, then analysed.

The steps, cautions, capture checks and the final analysis are :mod:`benchnf.acquire.plan`'s, as in
``benchnf measure``; this module only keeps the state between the browser's requests.
"""

from __future__ import annotations

import threading
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..errors import BenchError

__all__ = ["GuidedRun", "StepState"]


@dataclass
class StepState:
    takes: list[Path] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)
    frames: int = 0


class GuidedRun:
    """One plan being walked: its capture folder, each step's takes and the check of the latest."""

    def __init__(self, plan_path: Path, folder_of: Any, writer: Any, guard: Any) -> None:
        from ..acquire.plan import load_plan
        self.plan_path, self.plan = plan_path, load_plan(plan_path)
        base = Path(self.plan.out_dir) if self.plan.out_dir else Path(plan_path.stem)
        if not base.is_absolute():
            base = plan_path.parent / base
        self._base = folder_of(base)  # refused now if it lies outside the desk's folder
        self.folder: Path | None = None  # made at the first recording: opening a plan leaves nothing behind
        self.writer, self.guard = writer, guard
        self.steps = [StepState() for _ in self.plan.steps]
        self.busy: int | None = None
        self.error: str | None = None
        self.results: Path | None = None
        self.outcome: str | None = None

    def _ready(self, i: int) -> None:
        if not 0 <= i < len(self.steps):
            raise BenchError(f"the plan has no step {i + 1}")
        if self.busy is not None:
            raise BenchError(f"step {self.busy + 1} is still recording")
        missing = [j + 1 for j in range(i) if not self.steps[j].takes]
        if missing:
            raise BenchError(f"record step {missing[0]} first: the steps are taken in order")

    def record(self, i: int) -> None:
        """Start recording step i (0-based) on a thread; refused while the sound card is in use."""
        self._ready(i)
        if self.folder is None:
            self.folder = self.writer.fresh_folder(self._base)
        self.guard.take(f"step {i + 1} of the plan")
        self.busy, self.error = i, None
        threading.Thread(target=self._record, args=(i,), daemon=True).start()

    def _record(self, i: int) -> None:
        from ..acquire.plan import check_capture, step_metadata
        from ..acquire.record import record_to_file
        step, state = self.plan.steps[i], self.steps[i]
        take = len(state.takes) + 1
        assert self.folder is not None  # made by record()
        path = self.folder / (f"{step.file_stem}.wav" if take == 1 else f"{step.file_stem}-take{take}.wav")
        try:
            state.frames = 0
            record_to_file(path, seconds=step.seconds, sample_rate_hz=self.plan.sample_rate_hz,
                           channels=self.plan.channels, device=self.plan.device, host_api=self.plan.host_api,
                           condition=step.condition, metadata=step_metadata(self.plan, step), writer=self.writer,
                           on_progress=lambda n: setattr(state, "frames", n))
            state.problems = check_capture(path, step=step, floor_path=self._floor())
            state.takes.append(path)
        except (BenchError, OSError) as err:
            self.error = f"step {i + 1}: {err}"
        finally:
            self.busy = None
            self.guard.give_back(f"step {i + 1} of the plan")

    def _floor(self) -> Path | None:
        floors = [s.takes[-1] for st, s in zip(self.plan.steps, self.steps) if st.condition == "floor" and s.takes]
        return floors[-1] if floors else None

    def files(self) -> dict[str, Path]:
        return {st.file_stem: s.takes[-1] for st, s in zip(self.plan.steps, self.steps) if s.takes}

    def finish(self) -> None:
        """Analyse the kept takes as ``benchnf measure`` does; results.json in the capture folder."""
        if self.busy is not None:
            raise BenchError("a step is still recording")
        if self.results is not None:
            raise BenchError("this plan was analysed already: open its results, or open the plan again")
        missing = [i + 1 for i, s in enumerate(self.steps) if not s.takes]
        if missing:
            raise BenchError(f"step {missing[0]} has no recording yet")
        from ..acquire.plan import analyse_plan
        assert self.folder is not None  # every step has a take, so the folder was made
        outcome = analyse_plan(self.plan, self.plan_path, self.files(), self.folder, self.writer)
        if isinstance(outcome, str):
            self.outcome = outcome
        else:
            self.results = self.folder / "results.json"

    def state(self, relative: Any) -> dict[str, Any]:
        from ..acquire.plan import CAUTIONS
        plan = self.plan
        steps = []
        for i, (st, s) in enumerate(zip(plan.steps, self.steps)):
            total = max(1, int(st.seconds * plan.sample_rate_hz))
            steps.append({"condition": st.condition, "name": st.name, "prompt": st.prompt, "seconds": st.seconds,
                          "cautions": [CAUTIONS[c] for c in st.cautions], "takes": [p.name for p in s.takes],
                          "problems": s.problems, "recording": self.busy == i,
                          "progress": min(1.0, s.frames / total)})
        return {"name": plan.name, "plan": relative(self.plan_path), "folder": relative(self.folder or self._base),
                "steps": steps, "busy": self.busy, "error": self.error, "outcome": self.outcome,
                "results": relative(self.results) if self.results else None}
