"""benchnf record."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from ..write import Writer
from ._common import (
    calibration_options,
    common_options,
    device_options,
    drive_from_args,
    drive_options,
    progress,
    say_rate_note,
)
from ._types import channel_count, positive_hz, positive_seconds, resistor_kelvin, source_ohm
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("record", help="record a capture to disk without losing a sample",
                       description="Streams to a WAV (RF64 past 2 GiB) whose header is kept valid, checks "
                                   "overflows and the clock, and writes a sidecar; never overwrites.")
    device_options(p)
    p.set_defaults(rate=None)
    p.add_argument("--sdr", metavar="ADDRESS",
                   help="record IQ from a receiver instead of the sound card: rtl_tcp://HOST:PORT, or rtlsdr://0 "
                        "for one on this computer (needs 'benchnf[sdr]'); writes a SigMF recording")
    p.add_argument("--centre-hz", type=positive_hz, metavar="F", help="--sdr: the receiver's centre frequency")
    p.add_argument("--gain", metavar="DB", help="--sdr: the tuner's fixed gain in dB (automatic gain is refused)")
    p.add_argument("--ppm", type=int, default=0, metavar="N", help="--sdr: frequency correction, ppm (0)")
    p.add_argument("--seconds", type=positive_seconds, required=True, metavar="S")
    p.add_argument("--channels", type=channel_count, default=1, metavar="N")
    p.add_argument("--condition", required=True, choices=["floor", "shorted", "terminated", "tone", "hot", "cold",
                                                           "switched", "tap", "reference"],
                   help="what the input sees; 'switched': a noise source switched on and off during the recording")
    p.add_argument("--rs", type=source_ohm, metavar="OHM", help="source resistance, for the sidecar (0 = shorted)")
    p.add_argument("--temperature-k", type=resistor_kelvin, metavar="K", help="resistor temperature, for the sidecar")
    calibration_options(p)
    p.add_argument("--input-calibration", type=Path, action="append", metavar="CAL.json",
                   help="another input's calibration, for a recording of several inputs (each file names its "
                        "channel); repeat for each; the sidecar then states every input's volts per full scale")
    p.add_argument("-o", "--output", type=Path, required=True, metavar="FILE.wav")
    drive_options(p)
    common_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    if args.sdr is not None:
        return _run_sdr(args, writer)
    if args.drive_source is not None:
        from ..errors import ParameterError
        raise ParameterError("--drive-source keys a noise source ahead of a receiver: use it with --sdr")
    args.rate = args.rate or 48_000.0
    from ..acquire.record import record_to_file
    from ..io.sidecar import sidecar_candidates
    for p in (args.output, *sidecar_candidates(args.output)):
        writer.target(p)  # refused before any device is opened
    say_rate_note(args.device, args.host_api, args.rate, warn=False)  # record_to_file's notes carry it
    meta = {k: v for k, v in (("rs_ohm", args.rs), ("temperature_k", args.temperature_k),
                              ("volts_per_fs", args.volts_per_fs)) if v is not None}
    if args.calibration:
        from ..calibration import Calibration
        cal = Calibration.load(args.calibration)
        meta["volts_per_fs"] = cal.volts_per_fs
        meta["calibration"] = str(args.calibration)
    if args.input_calibration:
        meta.update(_each_input(args))
    total = int(args.seconds * args.rate)
    with progress(total, quiet=args.quiet, label="recording") as tick:
        try:
            rep = record_to_file(args.output, seconds=args.seconds, sample_rate_hz=args.rate, channels=args.channels,
                                 device=args.device, host_api=args.host_api, condition=args.condition,
                                 metadata=meta, on_progress=tick, writer=writer)
        except KeyboardInterrupt:
            print(f"benchnf: interrupted; what was recorded is kept in {args.output} (its sidecar says so)",
                  file=sys.stderr)
            return ExitStatus.INTERRUPTED
    print(f"{rep.frames} frames ({rep.frames / args.rate:.2f} s) written to {rep.path}, sidecar beside it; "
          f"{rep.overflows} overflow(s), clock mismatch {rep.clock_mismatch_frames} frames")
    for n in rep.notes:
        print(f"benchnf: warning: {n}", file=sys.stderr)
    if rep.dropouts:
        print("benchnf: warning: the capture has dropouts: analysis will refuse it unless --accept-dropouts",
              file=sys.stderr)
    return ExitStatus.OK


def _run_sdr(args: argparse.Namespace, writer: Writer) -> int:
    """``record --sdr``: IQ from a receiver into a SigMF recording."""
    from ..acquire.sdr import SdrSettings, parse_gain
    from ..acquire.sdr_record import record_sdr
    from ..errors import ParameterError
    sound_card_only = [o for o, v in (("--device", args.device), ("--host-api", args.host_api),
                                      ("--channels", args.channels != 1), ("--calibration", args.calibration),
                                      ("--volts-per-fs", args.volts_per_fs), ("--input-calibration",
                                                                              args.input_calibration)) if v]
    if sound_card_only:
        raise ParameterError(f"{', '.join(sound_card_only)} belong to sound-card recording, not to --sdr")
    if args.centre_hz is None or args.gain is None:
        raise ParameterError("--sdr needs the receiver's --centre-hz F and a fixed tuner --gain DB")
    drive = drive_from_args(args)
    if drive is not None and args.condition != "switched":
        raise ParameterError("--drive-source switches the noise source: record with --condition switched")
    settings = SdrSettings(args.centre_hz, args.rate or 2_400_000.0, parse_gain(args.gain), args.ppm)
    with progress(int(args.seconds * settings.rate_hz), quiet=args.quiet, label="recording") as tick:
        try:
            rep = record_sdr(args.output, address=args.sdr, settings=settings, seconds=args.seconds,
                             condition=args.condition, writer=writer, on_progress=tick, drive=drive)
        except KeyboardInterrupt:
            print(f"benchnf: interrupted; what was recorded is kept beside {args.output} (its metadata says so)",
                  file=sys.stderr)
            return ExitStatus.INTERRUPTED
    print(f"{rep.samples} samples ({rep.seconds:.2f} s) from {rep.receiver} written to {rep.meta_path} and its "
          f".sigmf-data")
    for n in rep.notes:
        print(f"benchnf: warning: {n}", file=sys.stderr)
    return ExitStatus.OK


def _each_input(args: argparse.Namespace) -> dict[str, Any]:
    """The sidecar's per-channel calibration: --calibration's and every --input-calibration's, one per channel."""
    from ..calibration import Calibration
    from ..errors import ParameterError
    files = [*([args.calibration] if args.calibration else []), *args.input_calibration]
    per: dict[str, float] = {}
    for f in files:
        cal = Calibration.load(f)
        if cal.channel >= args.channels:
            raise ParameterError(f"{f} calibrates channel {cal.channel}, but --channels {args.channels} records "
                                 f"0 to {args.channels - 1}")
        if str(cal.channel) in per:
            raise ParameterError(f"two calibrations for channel {cal.channel}: give one per input")
        if cal.sample_rate_hz != args.rate:
            raise ParameterError(f"{f} was made at {cal.sample_rate_hz:g} Hz, the recording runs at {args.rate:g} Hz: "
                                 f"calibrate at this rate")
        per[str(cal.channel)] = cal.volts_per_fs
    return {"channel_volts_per_fs": per, "input_calibrations": [str(f) for f in files]}

