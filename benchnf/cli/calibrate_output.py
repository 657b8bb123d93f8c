"""benchnf calibrate-output."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from ..errors import BenchError
from ..write import Writer
from ._common import common_options
from ._types import finite_db, positive_hz, positive_seconds
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("calibrate-output", help="volts per full scale of an output, through a calibrated input",
                       description="Plays a tone on the output into the calibrated input (loop the output to the "
                                   "input, through an attenuator if needed) and measures it.")
    p.add_argument("--calibration", type=Path, required=True, metavar="CAL.json", help="the input's calibration")
    p.add_argument("--device", metavar="NAME")
    p.add_argument("--host-api", metavar="API")
    p.add_argument("--tone-hz", type=positive_hz, default=400.0, metavar="F")
    p.add_argument("--level-dbfs", type=finite_db, default=-10.0, metavar="L")
    p.add_argument("--seconds", type=positive_seconds, default=2.0, metavar="S")
    p.add_argument("-o", "--output", type=Path, required=True, metavar="OUT_CAL.json")
    common_options(p)
    p.set_defaults(run=run)


_ATTEMPTS = 3
# A looped-back tone fits a sine to within its noise and distortion (sound cards: 60 dB and better); a gap
# or a repeated buffer leaves a residual of the tone's own size (tests/test_tone_glitches.py).
_MIN_SNR_DB = 30.0


def _loop_once(rec: Any, sig: Any, cal: Any, args: argparse.Namespace) -> tuple[Any, str | None]:
    """Play the tone once and fit what came back: (the fit, None) or (the fit or None, what went wrong)."""
    import numpy as np

    from ..acquire.signals import tone_span
    from ..dsp.tones import fit_sine
    fs = cal.sample_rate_hz
    play = np.concatenate([sig, np.zeros(int(1.0 * fs), dtype=np.float32)])  # room for the round-trip latency
    x = rec.play_and_record(np.column_stack([play, play]), sample_rate_hz=fs, channels=cal.channel + 1)
    start, stop = tone_span(x[:, cal.channel], fs)
    if stop - start < 0.5 * sig.size:
        return None, (f"the {args.seconds:g} s tone did not come back whole on input channel {cal.channel} (found "
                      f"{(stop - start) / fs:.2f} s)")
    edge = int(0.1 * fs)  # leave the ends, where the tone starts and stops
    fit = fit_sine(x[start + edge:stop - edge, cal.channel].astype(np.float64), sample_rate_hz=fs,
                   frequency_hz=args.tone_hz)
    longer = (stop - start - sig.size) / fs  # a buffer repeated by the sound system lengthens the tone
    if fit.snr_db < _MIN_SNR_DB or longer > 0.05:
        return fit, (f"the tone came back broken (tone over residual {fit.snr_db:.0f} dB, {longer * 1e3:+.0f} ms "
                     f"long: samples dropped or repeated by the sound system)")
    return fit, None


def run(args: argparse.Namespace, writer: Writer) -> int:

    from ..acquire.record import SoundcardRecorder
    from ..acquire.signals import make_signal
    from ..calibration import Calibration
    out = writer.target(args.output)  # refused before anything is played
    cal = Calibration.load(args.calibration)
    sig = make_signal("tone", sample_rate_hz=cal.sample_rate_hz, seconds=args.seconds, level_dbfs=args.level_dbfs,
                      frequency_hz=args.tone_hz)
    rec = SoundcardRecorder(args.device, host_api=args.host_api)
    fit = None
    for attempt in range(1, _ATTEMPTS + 1):
        fit, trouble = _loop_once(rec, sig, cal, args)
        if trouble is None:
            break
        print(f"benchnf: note: {trouble}; played again ({attempt} of {_ATTEMPTS})", file=sys.stderr)
    else:
        raise BenchError(f"in {_ATTEMPTS} tries, {trouble}: loop the output to the input (through an attenuator if "
                         f"needed) and check the levels; if it is looped, close other audio programs or lower the "
                         f"system load")
    played_peak_fs = 10 ** (args.level_dbfs / 20)
    vpfs_out = fit.amplitude * cal.volts_per_fs / played_peak_fs
    data = {"schema": "benchnf.output-calibration/1", "output_volts_per_fs": vpfs_out,
            "tone_hz": args.tone_hz, "level_dbfs": args.level_dbfs, "input_calibration": str(args.calibration),
            "device": rec.input.name, "sample_rate_hz": cal.sample_rate_hz}
    writer.json(out, data)
    print(f"the output gives {vpfs_out:.6g} V per full scale (a {args.level_dbfs:g} dBFS tone reads "
          f"{fit.rms * cal.volts_per_fs:.6g} V RMS on the calibrated input); written to {out}")
    return ExitStatus.OK

