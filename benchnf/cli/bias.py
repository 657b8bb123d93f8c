"""benchnf bias: the options of the input-device prediction (the command itself is cli/measurement.py)."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ._types import device_amps, finite_volts, kelvin, non_negative_amps, non_negative_hz, non_negative_number, \
    non_negative_ohm, positive_hz, positive_number, positive_ohm, siemens, whole_count

#: Device options: (flag, model parameter, argument type, which kinds take it, help).
_DEVICE = (
    ("--ic", "ic_a", device_amps, "bjt", "collector current per device, A (1m, 250u)"),
    ("--beta", "beta", positive_number, "bjt", "forward current gain BF"),
    ("--rbb", "rbb_ohm", non_negative_ohm, "bjt", "base spreading resistance rbb', ohm"),
    ("--re", "re_ohm", non_negative_ohm, "bjt", "unbypassed emitter resistance, ohm"),
    ("--vaf", "vaf_v", positive_number, "bjt", "Early voltage VAF, V (with --vce: beta at that Vce)"),
    ("--vce", "vce_v", non_negative_number, "bjt", "collector-emitter voltage, V"),
    ("--is", "is_a", device_amps, "bjt", "saturation current IS, A (gives Vbe for the Early correction)"),
    ("--id", "id_a", device_amps, "jfet", "drain current per device, A"),
    ("--gm", "gm_s", siemens, "jfet", "transconductance at --id, S (or give --idss and --vp)"),
    ("--idss", "idss_a", device_amps, "jfet", "drain current at Vgs = 0, A"),
    ("--vp", "vp_v", finite_volts, "jfet", "pinch-off voltage, V"),
    ("--gamma", "gamma", positive_number, "jfet", "channel noise factor (default 2/3, as SPICE)"),
    ("--ig", "ig_a", non_negative_amps, "jfet", "gate leakage current, A"),
    ("--rs-lead", "rs_ohm", non_negative_ohm, "jfet", "resistance in series with the source lead, ohm"),
    ("--kf", "kf", non_negative_number, "both", "flicker coefficient KF (SPICE: KF I^AF / f)"),
    ("--af", "af", positive_number, "both", "flicker exponent AF (default 1)"),
    ("--corner-hz", "corner_hz", positive_hz, "both", "1/f corner of in (bipolar) or en (FET) instead of KF"),
)


def add_options(p: argparse.ArgumentParser) -> None:
    """The options of ``benchnf bias``."""
    p.add_argument("kind", choices=["bjt", "jfet", "parts"],
                   help="bjt or jfet: one device from its parameters; parts: candidate parts from PARTS.toml")
    p.add_argument("parts_file", type=Path, nargs="?", metavar="PARTS.toml", help="candidate parts (with 'parts')")
    d = p.add_argument_group("the device at its operating point")
    for flag, dest, kind, which, text in _DEVICE:
        d.add_argument(flag, dest=f"dev_{dest}", type=kind, metavar="X",
                       help=text if which == "both" else f"{text} [{which}]")
    d.add_argument("--parallel", type=whole_count, default=1, metavar="N", help="N equal devices in parallel")
    d.add_argument("--from", dest="from_eni", type=Path, metavar="ENI.json",
                   help="explain a built stage: the device parameters from en and in an eni sweep measured at the "
                        "stated current")
    s = p.add_argument_group("the source")
    s.add_argument("--rs", type=positive_ohm, required=True, metavar="OHM", help="source resistance")
    s.add_argument("--temperature-k", type=kelvin, default=290.0, metavar="K", help="device temperature (290)")
    s.add_argument("--turns", type=positive_number, default=1.0, metavar="N",
                   help="step-up transformer turns ratio 1:N (the device sees N^2 Rs + the winding)")
    s.add_argument("--winding-ohm", type=non_negative_ohm, default=0.0, metavar="OHM",
                   help="the transformer's winding resistance referred to its secondary")
    f = p.add_argument_group("figures and search")
    f.add_argument("--frequency-hz", type=positive_hz, default=1000.0, metavar="HZ",
                   help="frequency of the spot figures and of the search (1000)")
    f.add_argument("--band", type=non_negative_hz, nargs=2, default=[20.0, 20_000.0], metavar=("LO", "HI"),
                   help="band of the band NF and EIN (default 20 20000)")
    f.add_argument("--weighting", choices=["none", "A", "C", "468", "468-2k"], default="none",
                   help="weighting of the band NF and EIN")
    f.add_argument("--optimise", "--optimize", action="store_true",
                   help="find the current of least NF for the source, and the currents within 0.1 dB")
    f.add_argument("--ic-range", "--current-range", dest="current_range", type=device_amps, nargs=2,
                   default=[10e-6, 10e-3], metavar=("LO", "HI"), help="currents searched (default 10u 10m)")


def request_from_args(args: argparse.Namespace) -> Any:
    from ..errors import BenchError
    from ..measure.bias import BiasRequest
    given = {(flag, dest, which) for flag, dest, _t, which, _h in _DEVICE if getattr(args, f"dev_{dest}") is not None}
    if args.kind == "parts":
        if args.parts_file is None:
            raise BenchError("bias parts needs the candidate parts file: benchnf bias parts PARTS.toml --rs OHM")
        if given or args.from_eni:
            raise BenchError("bias parts takes the devices from PARTS.toml: leave out the device options")
    elif args.parts_file is not None:
        raise BenchError(f"{args.parts_file}: a parts file goes with 'bias parts', not 'bias {args.kind}'")
    wrong = sorted(flag for flag, _d, which in given if which not in ("both", args.kind))
    if wrong:
        raise BenchError(f"{', '.join(wrong)} is not an option of the {args.kind} model")
    lo, hi = args.current_range
    if not lo < hi:
        raise BenchError(f"--ic-range {lo:g} {hi:g}: the low end must be below the high end")
    return BiasRequest(args.kind, args.rs, tuple((dest, getattr(args, f"dev_{dest}")) for _f, dest, _w in sorted(given)),
                       temperature_k=args.temperature_k, frequency_hz=args.frequency_hz, band_hz=tuple(args.band),
                       weighting=args.weighting, turns=args.turns, winding_ohm=args.winding_ohm, count=args.parallel,
                       optimise=args.optimise, current_range_a=(lo, hi), from_eni=args.from_eni,
                       parts=args.parts_file)
