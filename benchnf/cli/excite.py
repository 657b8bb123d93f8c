"""benchnf excite: play a stimulus into the DUT and record its response on the same device, aligned."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..errors import BenchError
from ..write import Writer
from ._common import common_options, device_options, say_rate_note
from ._types import (
    channel_count,
    channel_index,
    finite_db,
    positive_hz,
    positive_seconds,
)
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("excite", help="play a tone, multitone, sweep or noise into the DUT and record its "
                                      "response on the same device, aligned")
    device_options(p)
    p.add_argument("--signal", choices=["tone", "multitone", "sweep", "noise"], default="tone")
    p.add_argument("--tone-hz", type=positive_hz, default=1000.0, metavar="F")
    p.add_argument("--level-dbfs", type=finite_db, default=-20.0, metavar="L", help="RMS level, dBFS (AES17)")
    p.add_argument("--seconds", type=positive_seconds, default=3.0, metavar="S")
    p.add_argument("--channels", type=channel_count, default=2, metavar="N",
                   help="input channels recorded (2: DUT input and output)")
    p.add_argument("--play-channels", type=channel_count, default=2, metavar="N")
    p.add_argument("--reference-channel", type=channel_index, default=0, metavar="N",
                   help="recorded channel used to find the latency (default 0)")
    p.add_argument("-o", "--output", type=Path, required=True, metavar="FILE.wav")
    common_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    import io

    import numpy as np
    import soundfile as sf

    from ..acquire.record import SoundcardRecorder
    from ..acquire.signals import align_lag, make_signal
    from ..io.sidecar import sidecar_candidates
    out = writer.target(args.output)
    for p in sidecar_candidates(out):
        writer.target(p)  # refused before anything is played
    sig = make_signal(args.signal, sample_rate_hz=args.rate, seconds=args.seconds, level_dbfs=args.level_dbfs,
                      frequency_hz=args.tone_hz)
    pad = np.zeros(int(1.0 * args.rate), dtype=np.float32)  # room for the latency at the end
    play = np.concatenate([sig, pad])
    say_rate_note(args.device, args.host_api, args.rate)
    rec = SoundcardRecorder(args.device, host_api=args.host_api).play_and_record(
        np.column_stack([play] * args.play_channels), sample_rate_hz=args.rate, channels=args.channels)
    lag = align_lag(rec[:, args.reference_channel], sig)
    lag = max(lag, 0)
    if lag > pad.size:
        raise BenchError(f"the device's latency ({lag} frames) exceeds the {pad.size} frames of room left for it: "
                         f"the recording would be cut; check the device's buffer settings and try again")
    aligned = rec[lag:lag + sig.size]
    buf = io.BytesIO()
    sf.write(buf, aligned, int(args.rate), subtype="FLOAT", format="WAV")
    writer.bytes(out, buf.getvalue())
    writer.json(sidecar_candidates(out)[0], {
        "condition": "tone", "signal": args.signal, "tone_hz": args.tone_hz if args.signal == "tone" else None,
        "level_dbfs": args.level_dbfs, "latency_frames": int(lag), "device": args.device,
        "sample_rate_hz": args.rate})
    print(f"played a {args.signal} at {args.level_dbfs:g} dBFS and recorded {aligned.shape[0]} frames x "
          f"{aligned.shape[1]} channel(s); latency {lag} frames ({1e3 * lag / args.rate:.1f} ms), aligned; "
          f"written to {out}")
    return ExitStatus.OK

