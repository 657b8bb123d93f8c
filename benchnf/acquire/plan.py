"""Guided measurement: a plan file of our own (TOML), steps recorded and checked at once, then analysed.

```toml
name = "mic preamp at 150 ohm"
device = "USB Audio"          # name substring (and optionally host_api = "ALSA")
sample_rate_hz = 48000
out_dir = "run1"              # optional; default a new folder next to the plan

[analysis]
rs_ohm = 150
temperature_k = 296
volts_per_fs = 1.55           # or calibration = "cal.json"

[[step]]
condition = "floor"
seconds = 10
prompt = "Terminate the sound-card input with a 50 ohm plug."

[[step]]
condition = "terminated"
seconds = 10
prompt = "Connect the DUT output; terminate the DUT input in 150 ohm."
cautions = ["phantom"]        # cautions: phantom, speaker, valve, mains, hot-load, cold-load

[[step]]
condition = "tone"
seconds = 3
tone_hz = 1000
tone_input_vrms = 0.001       # the tone's RMS at the source (set on the generator)
```
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import ParameterError

__all__ = ["PlanStep", "Plan", "PlanAnalysis", "PlanFile", "load_plan", "CAUTIONS", "run_plan", "check_capture", "step_metadata",
           "analyse_plan"]

CAUTIONS = {
    "phantom": "Switch 48 V phantom power OFF before connecting, and never hot-plug with it on: it can destroy "
               "the sound-card input.",
    "speaker": "Speaker outputs need an attenuator before the sound card; on bridged amplifiers both terminals "
               "are live - neither may go to the card's ground.",
    "valve": "Valve equipment holds hundreds of volts in its capacitors long after switch-off: discharge and "
             "measure before touching.",
    "mains": "Mains-powered equipment under test carries lethal voltages: follow local codes and licensed "
             "practice; never defeat the safety earth.",
    "hot-load": "A boiling-water hot load scalds: secure the vessel, keep mains equipment and leads away from it.",
    "cold-load": "A liquid-nitrogen cold load burns on contact and displaces oxygen without any smell: ventilate "
                 "the room, wear eye and hand protection, never seal it in a closed container.",
    "split": "Split the DUT output to both inputs with a Y-lead or a passive splitter, phantom power OFF on both; "
             "keep the two leads apart from each other and from mains leads.",
    "rail-probe": "Probe the rail only through a blocking capacitor rated well above its voltage, with a series "
                  "resistor, the unit off and the capacitor discharged while connecting; never on mains-side "
                  "circuits, primary supplies or valve HT rails. Follow local codes and licensed practice.",
}
_DEFAULT_CAUTIONS = {"terminated": ["phantom"], "shorted": ["phantom"], "tone": ["phantom"], "hot": ["hot-load"],
                     "cold": ["cold-load"]}


@dataclass(frozen=True)
class PlanAnalysis:
    """How a finished plan is analysed (its ``[analysis]`` table)."""

    rs_ohm: float | None = None
    temperature_k: float | None = None
    volts_per_fs: float | None = None
    calibration: str | None = None
    band_hz: tuple[float, float] | None = None
    weighting: str | None = None
    cross: bool = False  # the terminated step has the DUT output on two inputs (docs/cross.md)
    cross_channels: tuple[int, int] | None = None
    cross_volts_per_fs: float | None = None  # the second input's calibration
    cross_calibration: str | None = None
    references: tuple[str, ...] = ()  # "N=NAME": channels of the terminated step carrying a reference


@dataclass(frozen=True)
class _StepTable:
    condition: str
    seconds: float
    prompt: str = ""
    tone_hz: float | None = None
    tone_input_vrms: float | None = None
    rs_ohm: float | None = None
    temperature_k: float | None = None
    cautions: tuple[str, ...] | None = None
    name: str = ""
    channels: int | None = None


@dataclass(frozen=True)
class PlanFile:
    """The shape of a plan file (TOML): every key and its kind."""

    step: tuple[_StepTable, ...] = ()
    name: str | None = None
    device: str | None = None
    host_api: str | None = None
    sample_rate_hz: float = 48_000.0
    channels: int = 1
    out_dir: str | None = None
    analysis: PlanAnalysis = PlanAnalysis()


@dataclass(frozen=True)
class PlanStep:
    condition: str
    seconds: float
    prompt: str = ""
    tone_hz: float | None = None
    tone_input_vrms: float | None = None
    cautions: tuple[str, ...] = ()
    name: str = ""
    rs_ohm: float | None = None
    temperature_k: float | None = None

    @property
    def file_stem(self) -> str:
        return self.name or self.condition


@dataclass(frozen=True)
class Plan:
    name: str
    steps: tuple[PlanStep, ...]
    device: str | None = None
    host_api: str | None = None
    sample_rate_hz: float = 48_000.0
    channels: int = 1
    out_dir: str | None = None
    analysis: PlanAnalysis = PlanAnalysis()


def load_plan(path: str | Path) -> Plan:
    """Read and validate a plan file: its shape (PlanFile), then what each value must be."""
    from ..capture import CONDITIONS
    from ..codec import check_shape
    from ..io.toml_file import number, read_toml
    path = Path(path)
    shape = check_shape(PlanFile, read_toml(path, "plan"), f"plan {path}")
    steps = []
    names = set()
    for i, st in enumerate(shape.step, 1):
        where = f"plan {path} step {i}"
        if st.condition not in CONDITIONS:
            raise ParameterError(f"{where}: condition {st.condition!r} is not one of {', '.join(CONDITIONS)}")
        seconds = number(st.seconds, where=where, key="seconds", low=0.0, high=86_400.0, low_open=True)
        cautions = st.cautions if st.cautions is not None else tuple(_DEFAULT_CAUTIONS.get(st.condition, []))
        if set(cautions) - set(CAUTIONS):
            raise ParameterError(f"{where}: cautions must be among {', '.join(CAUTIONS)}")
        nums = _step_numbers(st.__dict__, where)
        step = PlanStep(st.condition, seconds, st.prompt, tone_hz=nums["tone_hz"],
                        tone_input_vrms=nums["tone_input_vrms"], cautions=cautions, name=st.name,
                        rs_ohm=nums["rs_ohm"], temperature_k=nums["temperature_k"])
        if step.file_stem in names:
            raise ParameterError(f"{where}: a second step named {step.file_stem!r}; give it a name")
        names.add(step.file_stem)
        steps.append(step)
    if not steps:
        raise ParameterError(f"plan {path} has no [[step]]")
    rate = number(shape.sample_rate_hz, where=f"plan {path}", key="sample_rate_hz", low=1000.0, high=1e7)
    channels = number(shape.channels, where=f"plan {path}", key="channels", low=1, high=64)
    return Plan(shape.name if shape.name is not None else path.stem, tuple(steps), shape.device, shape.host_api,
                rate, int(channels), shape.out_dir, shape.analysis)


_STEP_RANGES = {"tone_hz": (0.0, 1e7), "tone_input_vrms": (0.0, 1e3), "rs_ohm": (0.0, 1e9), "temperature_k": (0.0, 1e3)}


def _step_numbers(st: dict[str, Any], where: str) -> dict[str, float | None]:
    """A step's numbers, checked for type and range (None where the step does not state one)."""
    from ..io.toml_file import number
    return {k: (None if st.get(k) is None else number(st[k], where=where, key=k, low=lo, high=hi,
                                                      low_open=k != "rs_ohm"))
            for k, (lo, hi) in _STEP_RANGES.items()}


def check_capture(path: Path, *, step: PlanStep, floor_path: Path | None) -> list[str]:
    """Problems found in a fresh capture: clipping, level, dropouts, floor margin, hum."""
    from ..capture import SampleStats
    from ..dsp.spectrum import welch_psd
    from ..dsp.spurs import find_lines
    from ..io import open_capture
    from ..units import fs_to_dbfs
    problems = []
    cap = open_capture(path, accept_dropouts=True)
    if cap.metadata.get("dropouts"):
        problems.append(f"dropouts: {cap.metadata.get('input_overflows', 0)} overflows, "
                        f"{cap.metadata.get('clock_mismatch_frames', 0)} frames off the clock")
    stats = SampleStats(label=path.name)
    for b in cap.blocks():
        stats.update(b)
    level = float(fs_to_dbfs(stats.rms_fs)) if stats.rms_fs > 0 else -math.inf
    if stats.n_clipped:
        problems.append(f"clipped: {stats.n_clipped} samples at full scale - lower the gain")
    if stats.peak_fs == 0:
        problems.append("silent: every sample is zero - check the connection and the channel")
    elif step.condition != "tone" and level > -20:
        problems.append(f"noise at {level:.1f} dBFS: keep noise 12-15 dB or more below full scale")
    psd = welch_psd(cap.blocks(), sample_rate_hz=cap.sample_rate_hz)
    if step.condition == "tone" and stats.peak_fs > 0:
        problems += _tone_problems(cap, step)
    if step.condition in ("terminated", "shorted") and floor_path is not None:
        fl = welch_psd(open_capture(floor_path, accept_dropouts=True).blocks(), sample_rate_hz=cap.sample_rate_hz)
        sel = (psd.frequency_hz > 20) & (psd.frequency_hz < 20_000)
        margin = 10 * math.log10(float(np.sum(psd.psd_per_hz[sel])) / float(np.sum(fl.psd_per_hz[sel])))
        if margin < 3:
            problems.append(f"only {margin:.1f} dB above the analyzer floor: raise the DUT gain or add a "
                            f"low-noise preamplifier")
    if step.condition in ("terminated", "shorted", "floor"):
        lines = [ln for ln in find_lines(psd).lines if ln.family in ("mains", "ripple")]
        if lines:
            problems.append(f"hum: {len(lines)} mains-family lines (strongest {lines[0].freq_hz:.0f} Hz) - "
                            f"check grounding and leads (never lift a safety earth)")
    return problems


def _tone_problems(cap: Any, step: PlanStep) -> list[str]:
    """A tone step whose sine fit leaves a residual within 30 dB of the tone: samples dropped or repeated by
    the sound system (a phase jump), or too little tone; either way the gain would read wrong."""
    from ..dsp.tones import fit_sine
    x = np.concatenate(list(cap.blocks()))
    edge = int(0.1 * cap.sample_rate_hz)
    fit = fit_sine(x[edge:x.size - edge] if x.size > 4 * edge else x, sample_rate_hz=cap.sample_rate_hz,
                   frequency_hz=step.tone_hz)
    if fit.snr_db < 30.0:
        return [f"tone only {fit.snr_db:.0f} dB above what is left after fitting it: samples dropped or repeated, "
                f"or too little tone - record it again"]
    return []


def run_plan(plan: Plan, *, record: Callable[[Path, PlanStep], Any], folder: Path, interactive: bool,
             ask: Callable[[str], str] = input, say: Callable[[str], None] = print) -> dict[str, Path]:
    """Walk the steps: tell the user what to connect, show cautions, record, check, offer a redo."""
    folder.mkdir(parents=True, exist_ok=True)
    files: dict[str, Path] = {}
    floor = None
    for i, step in enumerate(plan.steps, 1):
        say(f"\nStep {i}/{len(plan.steps)}: {step.condition}" + (f" ({step.name})" if step.name else ""))
        if step.prompt:
            say(f"  {step.prompt}")
        for c in step.cautions:
            say(f"  CAUTION: {CAUTIONS[c]}")
        attempt = 0
        while True:
            attempt += 1
            if interactive:
                ask("  Press Enter to record (Ctrl-C stops the plan) ")
            path = folder / (f"{step.file_stem}.wav" if attempt == 1 else f"{step.file_stem}-take{attempt}.wav")
            record(path, step)
            problems = check_capture(path, step=step, floor_path=floor)
            if problems:
                for p in problems:
                    say(f"  check: {p}")
            else:
                say(f"  recorded {path.name}: no problems found")
            if not interactive:
                break
            answer = ask("  Enter to keep it, r to record it again: ").strip().lower()
            if answer != "r":
                break
        files[step.file_stem] = path
        if step.condition == "floor":
            floor = path
    return files


def step_metadata(plan: Plan, step: PlanStep) -> dict[str, float]:
    """What a step's capture states in its sidecar: the step's Rs and temperature (else the plan's), its tone.

    The floor is the analyzer alone, so it states no source resistance.
    """
    rs = step.rs_ohm if step.rs_ohm is not None else plan.analysis.rs_ohm
    temperature = step.temperature_k if step.temperature_k is not None else plan.analysis.temperature_k
    meta = {k: v for k, v in (("rs_ohm", rs), ("temperature_k", temperature),
                              ("tone_hz", step.tone_hz), ("tone_input_vrms", step.tone_input_vrms))
            if v is not None}
    if step.condition == "floor":
        meta.pop("rs_ohm", None)
    return meta


def analyse_plan(plan: Plan, plan_path: Path, files: dict[str, Path], folder: Path, writer: Any) -> Any:
    """The gain-method analysis of a finished plan, written to ``folder/results.json``.

    Returns the :class:`~benchnf.measure.results.AnalysisResult`, or a sentence saying why there is none
    (no terminated and tone steps, or no calibration in the plan).
    """
    if not {"terminated", "tone"} <= set(files):
        return "the plan has no terminated and tone steps: captures kept, not analysed"
    a = plan.analysis
    if a.volts_per_fs is None and not a.calibration:
        return "no calibration in the plan ([analysis] volts_per_fs or calibration): captures kept, not analysed"
    from ..measure.provenance import provenance
    from ..measure.requests import GainMethodRequest, run_gain_method
    result = run_gain_method(GainMethodRequest(
        terminated=(files["terminated"],), floor=None if a.cross else files.get("floor"),
        shorted=files.get("shorted"), tone=files["tone"], volts_per_fs=a.volts_per_fs, calibration=a.calibration,
        rs_ohm=a.rs_ohm, temperature_k=a.temperature_k, band_hz=a.band_hz, weighting=a.weighting, cross=a.cross,
        cross_channels=a.cross_channels, background=files.get("background") if a.cross else None,
        cross_volts_per_fs=a.cross_volts_per_fs, cross_calibration=a.cross_calibration,
        references=_references(a.references)))
    read = [plan_path, *files.values(), *(Path(c) for c in (a.calibration, a.cross_calibration) if c)]
    writer.json(folder / "results.json", result.with_provenance(provenance(read, root=folder)).to_dict())
    return result


def _references(texts: tuple[str, ...]) -> tuple[tuple[int, str], ...]:
    """The plan's ``references = ["1=rail"]`` as (channel, name), by the command line's rule."""
    from ..measure.attribution import parse_reference
    return tuple(parse_reference(t) for t in texts)
