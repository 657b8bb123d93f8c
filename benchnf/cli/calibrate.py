"""benchnf calibrate."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from ..errors import BenchError
from ..write import Writer
from ._common import common_options
from ._types import channel_index, positive_hz, positive_seconds, positive_volts
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("calibrate", help="volts per full scale from a reference tone",
                       description="Compute volts per full scale from a capture of a sine whose "
                                   "RMS voltage was read on a meter.")
    p.add_argument("reference", type=Path, nargs="?", metavar="REF",
                   help="capture of the reference tone (or record it live with --device)")
    p.add_argument("--vrms", type=positive_volts, required=True, metavar="V",
                   help="the tone's RMS voltage as read on the meter")
    p.add_argument("--device", metavar="NAME", help="record the reference tone live from this input")
    p.add_argument("--host-api", metavar="API")
    p.add_argument("--rate", type=positive_hz, default=48_000.0, metavar="HZ", help="live sample rate (48000)")
    p.add_argument("--seconds", type=positive_seconds, default=3.0, metavar="S", help="live recording length (3)")
    p.add_argument("--channel", type=channel_index, metavar="N", help="channel (default 0)")
    p.add_argument("--tone-hz", type=positive_hz, metavar="F", help="stated tone frequency")
    p.add_argument("--meter-band", type=positive_hz, nargs=2, metavar=("LO", "HI"),
                   help="band where the meter reads true (default 50 640 Hz)")
    p.add_argument("-o", "--output", type=Path, required=True, metavar="CAL.json",
                   help="calibration file to write (never overwritten)")
    common_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..calibration import calibrate_from_tone
    from ..io import open_capture
    if args.reference is None and args.device is None:
        raise BenchError("give a reference capture (REF) or record one live with --device NAME")
    out = writer.target(args.output)  # refused before anything is recorded or computed
    if args.reference is None:
        from ..acquire.record import SoundcardRecorder
        from ..capture import Capture
        rec = SoundcardRecorder(args.device, host_api=args.host_api)
        print(f"recording {args.seconds:g} s of the reference tone from {rec.input.describe()}", file=sys.stderr)
        ch = args.channel or 0
        x = rec.record(int(args.seconds * args.rate), sample_rate_hz=args.rate, channels=ch + 1)
        ref = Capture.from_array(x, sample_rate_hz=args.rate, channel=ch,
                                 metadata={"device": rec.input.name, "notes": f"live, {rec.input.host_api}"})
    else:
        ref = open_capture(args.reference, channel=args.channel, condition=None)
    band = tuple(args.meter_band) if args.meter_band else None
    kwargs: dict[str, Any] = {"vrms": args.vrms, "frequency_hz": args.tone_hz}
    if band is not None:
        kwargs["meter_band_hz"] = band
    cal = calibrate_from_tone(ref, **kwargs)
    writer.json(out, cal.to_dict())
    print(f"{cal.volts_per_fs:.6g} V per full scale on channel {cal.channel} at "
          f"{cal.sample_rate_hz:g} Hz (tone {cal.reference_frequency_hz:.1f} Hz, "
          f"{cal.reference_level_dbfs:.1f} dBFS, {cal.reference_vrms:g} V RMS stated); "
          f"written to {out}")
    return ExitStatus.OK

