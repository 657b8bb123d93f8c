"""benchnf measure."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..write import Writer
from ._common import common_options
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("measure", help="run a guided measurement plan (TOML), interactively or scripted")
    p.add_argument("plan", type=Path, metavar="PLAN.toml")
    p.add_argument("--yes", action="store_true", help="no questions: record every step once (scripted setups)")
    p.add_argument("--device", metavar="NAME", help="override the plan's device")
    p.add_argument("--out-dir", type=Path, metavar="DIR", help="folder for the captures (a new one if taken)")
    common_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..acquire.plan import load_plan, run_plan
    from ..acquire.record import record_to_file
    plan = load_plan(args.plan)
    base = Path(args.out_dir or plan.out_dir or Path(args.plan).with_suffix(""))
    folder = writer.fresh_folder(base)
    print(f"benchnf - guided measurement {plan.name!r}; captures go to {folder}/")
    print("CAUTION: mains and valve equipment carry lethal voltages; phantom power and speaker outputs can "
          "destroy a sound-card input. Follow local codes and licensed practice.")

    def record(path: Path, step) -> None:
        rs = step.rs_ohm if step.rs_ohm is not None else plan.analysis.get("rs_ohm")
        temperature = step.temperature_k if step.temperature_k is not None else plan.analysis.get("temperature_k")
        meta = {k: v for k, v in (("rs_ohm", rs), ("temperature_k", temperature),
                                  ("tone_hz", step.tone_hz), ("tone_input_vrms", step.tone_input_vrms))
                if v is not None}
        if step.condition == "floor":
            meta.pop("rs_ohm", None)
        record_to_file(path, seconds=step.seconds, sample_rate_hz=plan.sample_rate_hz, channels=plan.channels,
                       device=args.device or plan.device, host_api=plan.host_api, condition=step.condition,
                       metadata=meta, writer=writer)

    files = run_plan(plan, record=record, folder=folder, interactive=not args.yes)
    if {"terminated", "tone"} <= set(files):
        from ..measure.requests import GainMethodRequest, run_gain_method
        from ..report.text import format_summary
        a = plan.analysis
        if a.get("volts_per_fs") is None and not a.get("calibration"):
            print("\nno calibration in the plan ([analysis] volts_per_fs or calibration): captures kept, not analysed")
            return ExitStatus.OK
        result = run_gain_method(GainMethodRequest(
            terminated=(files["terminated"],), floor=files.get("floor"), shorted=files.get("shorted"),
            tone=files["tone"], volts_per_fs=a.get("volts_per_fs"), calibration=a.get("calibration"),
            rs_ohm=a.get("rs_ohm"), temperature_k=a.get("temperature_k"),
            band_hz=tuple(a["band_hz"]) if a.get("band_hz") else None, weighting=a.get("weighting")))
        print()
        print(format_summary(result), end="")
        from ..measure.provenance import provenance
        read = [args.plan, *files.values(), *([Path(a["calibration"])] if a.get("calibration") else [])]
        writer.json(folder / "results.json", {**result.to_dict(), "provenance": provenance(read, root=folder)})
        print(f"\nresults written to {folder / 'results.json'}")
    return ExitStatus.OK
