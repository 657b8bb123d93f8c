"""benchnf cascade."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..errors import BenchError
from ..write import Writer
from ._common import common_options, relative_to_option, write_outputs
from ._types import positive_db
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("cascade", help="predict a chain's noise figure (Friis) and where to spend",
                       description="Noise figure, noise temperature and gain of a chain of stages from a "
                                   "chain file (docs/cascade.md), each stage's share of the excess noise, "
                                   "and what a quieter stage would buy.")
    p.add_argument("chain", type=Path, metavar="CHAIN.toml")
    p.add_argument("--improve-db", type=positive_db, default=1.0, metavar="DB",
                   help="improvement tried on each stage for the ranking (default 1 dB)")
    p.add_argument("--what-if", nargs="+", metavar=("STAGE", "KEY=VALUE"),
                   help="swap one stage's data: --what-if STAGE KEY=VALUE ..., keys gain, nf, te, loss, temperature_k, "
                        "en, in, output_ohm (or their full names), e.g. --what-if 2 nf=1.2 or --what-if 1 en=0.3n")
    p.add_argument("--json", type=Path, metavar="OUT.json")
    relative_to_option(p)
    common_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..noise.cascade import load_chain, predict, stage_with, what_if, where_to_spend
    from ..notation import parse_number
    from ..report.stages_text import format_cascade
    chain = load_chain(args.chain)
    result = predict(chain)
    spend = where_to_spend(chain, improvement_db=args.improve_db)
    alternative = None
    if args.what_if:
        target, *pairs = args.what_if
        names = [s.name for s in chain.stages]
        index = int(target) - 1 if target.isdigit() else (names.index(target) if target in names else -1)
        if not 0 <= index < len(names):
            raise BenchError(f"--what-if: no stage {target!r} (stages: {', '.join(names)}, or 1..{len(names)})")
        changes: dict[str, float] = {}
        for pair in pairs:
            key, _, value = pair.partition("=")
            try:
                changes[key] = parse_number(value)
            except ValueError:
                raise BenchError(f"--what-if: {pair!r} is not KEY=NUMBER (e.g. nf=1.2, te=90, loss=0.5, "
                                 f"en=1n)") from None
        _, other = what_if(chain, index, stage_with(chain.stages[index], changes))
        alternative = (f"{names[index]} had " + ", ".join(pairs), other)
    print(format_cascade(result, spend=spend, improve_db=args.improve_db, what_if=alternative), end="")
    if args.json:
        data = {"schema_version": "1", "kind": "cascade", **result.to_dict(),
                "where_to_spend": [{"stage": n, "noise_figure_saving_db": v} for n, v in spend]}
        if alternative:
            data["what_if"] = {"change": alternative[0], **alternative[1].to_dict()}
        write_outputs(args, writer, data)
    return ExitStatus.OK
