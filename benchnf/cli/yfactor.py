"""benchnf yfactor: the options of the Y-factor measurement (the command itself is cli/measurement.py)."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from ._common import drive_options
from ._types import (
    celsius,
    channel_index,
    finite_db,
    finite_number,
    fraction,
    kelvin,
    non_negative_hz,
    non_negative_pct,
    positive_hz,
    positive_seconds,
    non_negative_seconds,
    segment_samples,
    whole_count,
)


def add_options(p: argparse.ArgumentParser) -> None:
    """The options of ``benchnf yfactor``."""
    p.add_argument("--hot", type=Path, nargs="+", metavar="FILE",
                   help="capture(s) with the source hot (several: repeats, paired in order with --cold)")
    p.add_argument("--cold", type=Path, nargs="+", metavar="FILE", help="capture(s) with the source cold")
    p.add_argument("--annotated", type=Path, metavar="FILE",
                   help="one SigMF recording whose annotations label hot and cold segments")
    p.add_argument("--switched", type=Path, metavar="FILE",
                   help="one recording while the noise source was switched on and off: hot and cold are found "
                        "from the power steps")
    p.add_argument("--switch-guard", type=non_negative_seconds, default=0.05, metavar="S",
                   help="--switched: time left out at each switch (default 0.05 s)")
    p.add_argument("--switch-shortest", type=positive_seconds, default=0.2, metavar="S",
                   help="--switched: the shortest usable state once the switches are left out (default 0.2 s)")
    p.add_argument("--switch-block", type=positive_seconds, metavar="S",
                   help="--switched: the power trace's block (default 0.01 s for IQ, 0.1 s for audio)")
    p.add_argument("--cal-hot", type=Path, metavar="FILE", help="source straight into the receiver, hot")
    p.add_argument("--cal-cold", type=Path, metavar="FILE", help="source straight into the receiver, cold")
    p.add_argument("--floor", type=Path, metavar="FILE",
                   help="the receiver alone, input terminated: subtracted from every capture")
    src = p.add_mutually_exclusive_group(required=True)
    src.add_argument("--enr-db", type=finite_db, metavar="X", help="noise source ENR, dB")
    src.add_argument("--enr-table", type=Path, metavar="FILE",
                     help="noise source ENR table (TOML or CSV, docs/yfactor.md)")
    src.add_argument("--t-hot-k", type=kelvin, metavar="K", help="hot temperature, kelvin")
    src.add_argument("--t-hot-c", type=celsius, metavar="C", help="hot temperature, Celsius")
    cold = p.add_mutually_exclusive_group()
    cold.add_argument("--t-cold-k", type=kelvin, metavar="K",
                      help="cold temperature, kelvin (noise source: its physical temperature; default "
                           "the table's, else 290 K)")
    cold.add_argument("--t-cold-c", type=celsius, metavar="C", help="cold temperature, Celsius")
    p.add_argument("--enr-uncertainty-db", type=non_negative_pct, metavar="U",
                   help="ENR standard uncertainty, dB (default: the table's, else 0.1)")
    p.add_argument("--temperature-uncertainty-k", type=non_negative_pct, default=0.5, metavar="U",
                   help="standard uncertainty of each physical temperature, K (default 0.5)")
    chain = p.add_argument_group("passive stages around the DUT (de-embedded; docs/yfactor.md)")
    chain.add_argument("--source-side", type=finite_number, nargs=2, action="append", metavar=("DB", "K"),
                       help="a passive stage between the noise source and the DUT: loss in dB and physical "
                            "temperature in K (repeatable, in signal order)")
    chain.add_argument("--receiver-side", type=finite_number, nargs=2, action="append", metavar=("DB", "K"),
                       help="a passive stage between the DUT and the receiver (repeatable, in signal order)")
    chain.add_argument("--chain", type=Path, metavar="FILE",
                       help="a chain file (as for cascade): passive stages with loss_db around one active "
                            "stage, the DUT")
    p.add_argument("--band", type=non_negative_hz, nargs=2, metavar=("LO", "HI"),
                   help="band of the headline figures, absolute Hz (default: the usable span)")
    p.add_argument("--spot", type=positive_hz, nargs="+", metavar="F", help="spot frequencies, Hz")
    p.add_argument("--rows", type=whole_count, default=16, metavar="N", help="sub-bands in the table (16)")
    p.add_argument("--segment", type=segment_samples, metavar="N", help="Welch segment length")
    p.add_argument("--iq", action="store_true", help="read two-channel audio files as I and Q")
    p.add_argument("--centre-hz", type=positive_hz, metavar="F", help="centre frequency for --iq")
    p.add_argument("--dc-exclude-hz", type=non_negative_hz, metavar="F",
                   help="IQ: half-width excluded around the centre (default max(3 bins, 0.5 %% of span))")
    p.add_argument("--edge-fraction", type=fraction, default=0.1, metavar="R",
                   help="IQ: fraction of each half-span excluded at the edges (default 0.1)")
    p.add_argument("--channel", type=channel_index, default=0, metavar="N", help="channel of audio captures")
    live = p.add_argument_group("live, from a receiver (the noise figure while tuning)")
    live.add_argument("--live", action="store_true",
                      help="follow the noise figure pair by pair from a receiver (--sdr) while the source is "
                           "switched on and off")
    live.add_argument("--sdr", metavar="ADDRESS", help="rtl_tcp://HOST:PORT, or rtlsdr://0 for one on this computer")
    live.add_argument("--rate", type=positive_hz, default=2_400_000.0, metavar="S/s",
                      help="--live: receiver sample rate (2400000)")
    live.add_argument("--gain", metavar="DB", help="--live: the tuner's fixed gain in dB (automatic gain is refused)")
    live.add_argument("--ppm", type=int, default=0, metavar="N", help="--live: frequency correction, ppm (0)")
    live.add_argument("--calibrate-first", action="store_true",
                      help="--live: take the first pair with the noise source straight into the receiver (the "
                           "second-stage correction, kept for the run), then wait for Enter while the DUT is connected")
    live.add_argument("--seconds", type=positive_seconds, metavar="S",
                      help="--live: stop after this long and write the whole run (default: until Ctrl-C)")


    drive_options(p)


def request_from_args(args: argparse.Namespace) -> Any:
    from ..measure.yfactor_request import YFactorRequest
    live_only = [o for o, v in (("--sdr", args.sdr), ("--gain", args.gain), ("--seconds", args.seconds),
                                ("--calibrate-first", args.calibrate_first),
                                ("--drive-source", args.drive_source)) if v]
    if live_only and not args.live:
        from ..errors import ParameterError
        raise ParameterError(f"{', '.join(live_only)} belong{'s' if len(live_only) == 1 else ''} to a live run "
                             f"from a receiver: add --live (recordings are read with --hot/--cold, --switched ...)")
    return YFactorRequest(
        hot=tuple(args.hot or ()), cold=tuple(args.cold or ()), annotated=args.annotated, switched=args.switched,
        switch_block_s=args.switch_block, switch_guard_s=args.switch_guard, switch_shortest_s=args.switch_shortest,
        cal_hot=args.cal_hot,
        cal_cold=args.cal_cold, floor=args.floor, enr_db=args.enr_db, enr_table=args.enr_table,
        t_hot_k=args.t_hot_k, t_hot_c=args.t_hot_c, t_cold_k=args.t_cold_k, t_cold_c=args.t_cold_c,
        enr_uncertainty_db=args.enr_uncertainty_db, temperature_uncertainty_k=args.temperature_uncertainty_k,
        source_side=tuple(tuple(x) for x in args.source_side or ()),
        receiver_side=tuple(tuple(x) for x in args.receiver_side or ()), chain=args.chain,
        band_hz=tuple(args.band) if args.band else None, spot_hz=tuple(args.spot or ()), rows=args.rows,
        segment_length=args.segment, iq=args.iq, centre_hz=args.centre_hz, channel=args.channel,
        dc_exclude_hz=args.dc_exclude_hz, edge_fraction=args.edge_fraction)


def run_stream(args: argparse.Namespace, writer: Any) -> int:
    """``yfactor --live``: one line per hot/cold pair from a receiver; the whole run at the end (--json)."""
    from ..acquire.sdr import SdrSettings, parse_gain
    from ..acquire.sdr_live import follow_pairs, typed_lines
    from ..errors import ParameterError
    from ..measure.yfactor_request import hot_cold_source
    from ._common import drive_from_args, write_outputs
    from .status import ExitStatus
    if args.sdr is None or args.centre_hz is None or args.gain is None:
        raise ParameterError("--live needs a receiver: --sdr rtl_tcp://HOST:PORT --centre-hz F --gain DB")
    files = [o for o, v in (("--hot/--cold", args.hot or args.cold), ("--annotated", args.annotated),
                            ("--switched", args.switched), ("--cal-hot/--cal-cold", args.cal_hot or args.cal_cold),
                            ("--floor", args.floor)) if v]
    if files:
        raise ParameterError(f"--live measures from the receiver: {', '.join(files)} belong to recordings")
    settings = SdrSettings(args.centre_hz, args.rate, parse_gain(args.gain), args.ppm)
    source = hot_cold_source(request_from_args(args))
    print(_LIVE_CAUTION)
    result, interrupted = follow_pairs(args.sdr, settings, source, seconds=args.seconds,
                                       calibrate_first=args.calibrate_first, lines=typed_lines(), out=sys.stdout,
                                       drive=drive_from_args(args))
    if result is not None:
        from ..report.present_yfactor import present
        from ..report.render_png import figures
        view = present(result)
        write_outputs(args, writer, result, lambda: figures(view))
    return ExitStatus.INTERRUPTED if interrupted else ExitStatus.OK


_LIVE_CAUTION = ("Caution: before connecting a preamplifier to the bench: transmitter and PTT off, antenna "
                 "disconnected; DC on the coax (bias tee, masthead feed) blocked before the receiver; the noise "
                 "source's 28 V supply switched with care; follow local codes and licensed practice")
