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
    from ..acquire.plan import analyse_plan, load_plan, run_plan, step_metadata
    from ..acquire.record import record_to_file
    plan = load_plan(args.plan)
    base = Path(args.out_dir or plan.out_dir or Path(args.plan).with_suffix(""))
    folder = writer.fresh_folder(base)
    print(f"benchnf - guided measurement {plan.name!r}; captures go to {folder}/")
    print("CAUTION: mains and valve equipment carry lethal voltages; phantom power and speaker outputs can "
          "destroy a sound-card input. Follow local codes and licensed practice.")

    def record(path: Path, step) -> None:
        record_to_file(path, seconds=step.seconds, sample_rate_hz=plan.sample_rate_hz, channels=plan.channels,
                       device=args.device or plan.device, host_api=plan.host_api, condition=step.condition,
                       metadata=step_metadata(plan, step), writer=writer)

    files = run_plan(plan, record=record, folder=folder, interactive=not args.yes)
    result = analyse_plan(plan, Path(args.plan), files, folder, writer)
    if isinstance(result, str):
        if "calibration" in result:
            print("\n" + result)
        return ExitStatus.OK
    from ..report.present_analysis import present
    from ..report.render_text import render_text
    print()
    print(render_text(present(result)), end="")
    print(f"\nresults written to {folder / 'results.json'}")
    return ExitStatus.OK
