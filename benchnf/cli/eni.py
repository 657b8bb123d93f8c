"""benchnf eni."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..errors import BenchError
from ..write import Writer
from ._common import (
    gain_for,
    load_calibration,
    open_input,
    sweep_options,
    write_outputs,
)
from ._types import gain_db, positive_ohm, positive_volts, resistor_kelvin, source_ohm
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("eni", help="amplifier en and in from a source-resistance sweep, NF against Rs",
                       description="Voltage noise en and current noise in (and their correlation with three "
                                   "or more resistances) per one-third-octave band, Ropt and NFmin.")
    p.add_argument("captures", type=_sweep_item, nargs="+", metavar="FILE@RS_OHM",
                   help="captures with the input terminated in RS (0 = shorted); FILE@RS@TONE gives each its "
                        "own tone capture for the gain through that Rs")
    g = p.add_mutually_exclusive_group()
    g.add_argument("--tone", type=Path, metavar="FILE", help="tone capture for the gain (all captures)")
    g.add_argument("--gain-db", type=gain_db, metavar="G", help="stated voltage gain, dB")
    p.add_argument("--tone-input-vrms", type=positive_volts, metavar="V", help="tone RMS at the source")
    p.add_argument("--zin-ohm", type=positive_ohm, metavar="OHM",
                   help="DUT input impedance, when tone levels were taken at the DUT terminals")
    p.add_argument("--temperature-k", type=resistor_kelvin, metavar="K", help="resistor temperature for every capture")
    sweep_options(p, band_default=(20.0, 20_000.0),
                   band_help="band of the one-third-octave rows (default 20 20000 Hz)")
    p.set_defaults(run=run)


def _sweep_item(text: str) -> tuple[Path, float, Path | None]:
    parts = text.split("@")
    if len(parts) not in (2, 3):
        raise argparse.ArgumentTypeError(f"{text!r} is not FILE@RS_OHM (or FILE@RS_OHM@TONE_FILE)")
    try:
        rs = source_ohm(parts[1])
    except argparse.ArgumentTypeError as err:
        raise argparse.ArgumentTypeError(f"{text!r}: {err}") from None
    return Path(parts[0]), rs, Path(parts[2]) if len(parts) == 3 else None


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..dsp.weighting import Band
    from ..report.stages_text import format_eni
    from ..measure.stages import extract_en_in
    cal = load_calibration(args)
    sweep = []
    temps = []
    for path, rs, tone in args.captures:
        cap = open_input(path, condition=None, args=args, cal=cal)
        t_side = getattr(cap, "metadata", {}).get("temperature_k")
        temps.append(t_side)
        sweep.append([cap, rs, t_side, gain_for(args, cal, tone or args.tone)])
    stated = {t for t in temps if t is not None}
    if args.temperature_k is not None:
        if len(stated) > 1:
            raise BenchError("the sweep's sidecars state different temperatures; --temperature-k would hide "
                             "that: remove it, or correct the sidecars")
        for item in sweep:
            item[2] = args.temperature_k
    else:
        if len(stated) > 1 and None in temps:
            raise BenchError("some captures of the sweep state their temperature and others do not: state "
                             "it for every capture (sidecar temperature_k) or give --temperature-k")
        for item in sweep:
            if item[2] is None:
                item[2] = 290.0
    result = extract_en_in(sweep=[tuple(x) for x in sweep], floor=open_input(args.floor, condition="floor", args=args,
                                                                        cal=cal),
                           band=Band(*args.band), segment_length=args.segment)
    print(format_eni(result), end="")
    from ..report.plots import eni_figures
    write_outputs(args, writer, result.to_dict(), lambda: eni_figures(result))
    return ExitStatus.OK

