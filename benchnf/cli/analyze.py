"""benchnf analyze: the options of the gain-method analysis (the command itself is cli/measurement.py)."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..write import Writer
from ._common import calibration_options
from ._types import (
    channel_index,
    channel_pair,
    reference_channel,
    finite_db,
    gain_db,
    mains_hz,
    non_negative_hz,
    non_negative_pct,
    positive_hz,
    positive_ohm,
    positive_volts,
    resistor_kelvin,
    segment_samples,
)


def add_options(p: argparse.ArgumentParser) -> None:
    """The option groups of ``benchnf analyze`` (the output options are every measurement's)."""
    for options in (_capture_options, _gain_options, _source_options, _band_options, _limit_options,
                    _trace_options):
        options(p)
    calibration_options(p)


def _capture_options(p: argparse.ArgumentParser) -> None:
    """The captures of the measurement."""
    a = p.add_argument_group("captures")
    a.add_argument("--terminated", type=Path, required=True, nargs="+", metavar="FILE",
                   help="DUT output with its input terminated in Rs (several: repeats, pooled, with "
                        "their scatter and drift)")
    a.add_argument("--floor", type=Path, metavar="FILE",
                   help="analyzer alone with its input terminated (subtracted in linear power)")
    a.add_argument("--shorted", type=Path, metavar="FILE",
                   help="DUT output with its input shorted (voltage noise alone)")
    c = p.add_argument_group("below the analyzer's floor, and where the noise comes from (docs/cross.md)")
    c.add_argument("--cross", action="store_true",
                   help="the terminated recording has the DUT output on two inputs: estimate its spectrum by "
                        "their averaged cross-spectrum, which the inputs' own noise does not reach")
    c.add_argument("--cross-channels", type=channel_pair, metavar="A,B",
                   help="the two channels on the DUT output (default 0,1); the tone is read on A")
    b = c.add_mutually_exclusive_group()
    b.add_argument("--cross-calibration", type=Path, metavar="CAL.json",
                   help="with --cross: the second input's calibration ('benchnf calibrate' on that input; the "
                        "first's is --calibration or --volts-per-fs)")
    b.add_argument("--cross-volts-per-fs", type=positive_volts, metavar="V",
                   help="with --cross: the second input's volts per full scale")
    c.add_argument("--background", type=Path, metavar="FILE",
                   help="with --cross: both inputs terminated, the same two channels; its cross-spectrum (the "
                        "analyzer's correlated noise) is subtracted")
    c.add_argument("--reference-channel", type=reference_channel, action="append", metavar="N[=NAME]",
                   help="channel N of the terminated recording carries a suspected source (a supply-rail probe "
                        "through a blocking capacitor, a mains loop): say how much of the output it explains, "
                        "and measure the output without it; repeat for several")


def _gain_options(p: argparse.ArgumentParser) -> None:
    """How the gain is known."""
    a = p.add_argument_group("gain")
    g = a.add_mutually_exclusive_group(required=True)
    g.add_argument("--tone", type=Path, metavar="FILE", help="DUT output driven by a known sine")
    g.add_argument("--gain-db", type=gain_db, metavar="G",
                   help="stated voltage gain from source EMF to output, dB")
    a.add_argument("--tone-input-vrms", type=positive_volts, metavar="V",
                   help="RMS of the tone at the source EMF (default: the tone sidecar's "
                        "tone_input_vrms)")
    a.add_argument("--tone-input-channel", type=channel_index, metavar="N",
                   help="the tone capture's channel that records the DUT input (two-channel gain)")
    a.add_argument("--tone-hz", type=positive_hz, metavar="F",
                   help="stated tone frequency; the tone must be found there")
    a.add_argument("--gain-frequency-hz", type=positive_hz, default=1000.0, metavar="F",
                   help="frequency a --gain-db holds at (default 1000)")
    a.add_argument("--response", type=Path, metavar="FILE",
                   help="two-channel capture of a broadband stimulus, DUT input and output, "
                        "for the shape of the response")
    a.add_argument("--response-channels", type=channel_index, nargs=2, default=[0, 1],
                   metavar=("IN", "OUT"), help="channels of --response (default 0 1)")
    a.add_argument("--zin-ohm", type=positive_ohm, metavar="OHM",
                   help="DUT input impedance, when the tone level was taken at the DUT's terminals")


def _source_options(p: argparse.ArgumentParser) -> None:
    """The source resistance and its temperature."""
    a = p.add_argument_group("source")
    a.add_argument("--rs", type=positive_ohm, metavar="OHM",
                   help="source resistance (default: the terminated sidecar's rs_ohm)")
    a.add_argument("--temperature-k", type=resistor_kelvin, metavar="K",
                   help="the source resistor's temperature (default: sidecar, else 290 K)")


def _band_options(p: argparse.ArgumentParser) -> None:
    """Band, weighting, detector, hum, 1/f and SNR."""
    a = p.add_argument_group("band and reading")
    bands = a.add_mutually_exclusive_group()
    bands.add_argument("--band", type=non_negative_hz, nargs=2, metavar=("LO", "HI"),
                       help="integration band in Hz (default 20 20000)")
    bands.add_argument("--band-preset", choices=["audio", "audio-22k", "above-hum"],
                       help="audio 20 Hz-20 kHz, audio-22k 22 Hz-22 kHz, above-hum from the 8th harmonic of "
                            "the mains frequency found to 20 kHz")
    a.add_argument("--weighting", choices=["none", "A", "C", "468", "468-2k"],
                   help="frequency weighting of band figures: IEC 61672-1 A or C, ITU-R BS.468-4 "
                        "(0 dB at 1 kHz) or 468-2k (0 dB at 2 kHz, for an RMS detector); default none")
    a.add_argument("--detector", choices=["rms", "qp"], default="rms",
                   help="rms, or qp: the BS.468-4 quasi-peak meter (with --weighting 468 only)")
    a.add_argument("--mains-hz", type=mains_hz, metavar="F",
                   help="mains fundamental for the hum families (default: found, 50 or 60)")
    a.add_argument("--flicker-range", type=positive_hz, nargs=2, metavar=("LO", "HI"),
                   help="range of the 1/f fit in Hz (default: band bottom to 10 kHz)")
    a.add_argument("--flicker-free-slope", action="store_true",
                   help="fit the 1/f exponent too, instead of fixing it at 1")
    refs = a.add_mutually_exclusive_group()
    refs.add_argument("--reference-vrms", type=positive_volts, metavar="V",
                      help="output reference level for an SNR figure, V RMS")
    refs.add_argument("--reference-dbu", type=finite_db, metavar="L",
                      help="output reference level for an SNR figure, dBu")


def _limit_options(p: argparse.ArgumentParser) -> None:
    """Limits of the stated quantities (uncertainty budget), dropouts, spectrum, channel."""
    a = p.add_argument_group("uncertainty and reading")
    a.add_argument("--calibration-limit-pct", type=non_negative_pct, default=1.0, metavar="P",
                   help="meter accuracy, +/- %% of reading (default 1)")
    a.add_argument("--tone-limit-pct", type=non_negative_pct, default=1.0, metavar="P",
                   help="tone level at the source known to +/- %% (default 1)")
    a.add_argument("--resistor-limit-pct", type=non_negative_pct, default=1.0, metavar="P",
                   help="source resistor tolerance, +/- %% (default 1)")
    a.add_argument("--temperature-limit-k", type=non_negative_pct, default=2.0, metavar="K",
                   help="source resistor temperature known to +/- K (default 2)")
    a.add_argument("--accept-dropouts", action="store_true",
                   help="use captures whose sidecar records dropouts (refused otherwise)")


def _trace_options(p: argparse.ArgumentParser) -> None:
    """Instrument CSV traces (docs/csv.md)."""
    a = p.add_argument_group("instrument traces")
    a.add_argument("--rbw-hz", type=positive_hz, metavar="F",
                   help="instrument CSV traces: resolution bandwidth (else the file's '# rbw_hz')")
    a.add_argument("--trace-detector", choices=["rms", "sample", "log"],
                   help="instrument CSV traces: how the trace was averaged (log reads noise 2.51 dB low)")
    a.add_argument("--reference-ohm", type=positive_ohm, metavar="OHM",
                   help="instrument CSV traces in dBm: reference impedance (default 50)")
    a.add_argument("--enbw-ratio", type=positive_hz, metavar="R",
                   help="instrument CSV traces: noise bandwidth over RBW (default 1)")
    a.add_argument("--spectra", type=Path, metavar="FILE.csv",
                   help="write every bin's densities, noise figure and their Welch uncertainty as CSV")
    a.add_argument("--segment", type=segment_samples, metavar="N",
                   help="Welch segment length in samples (default: bins of 3 Hz or finer, 16384 at 48 kHz: "
                        "RBW 4.39 Hz with Hann)")
    a.add_argument("--channel", type=channel_index, metavar="N",
                   help="channel of the noise and tone captures (default: sidecar, else 0)")


def request_from_args(args: argparse.Namespace) -> Any:
    """The command line's gain-method request (what the user typed, nothing resolved yet)."""
    from ..dsp.weighting import BAND_PRESETS
    from ..io.opener import TraceReading
    from ..measure.requests import GainMethodRequest
    from ..noise.uncertainty import StatedUncertainty
    from ..units import dbu_to_vrms
    band = BAND_PRESETS.get(args.band_preset) if args.band_preset else None
    return GainMethodRequest(
        terminated=tuple(args.terminated), floor=args.floor, shorted=args.shorted, tone=args.tone,
        tone_input_vrms=args.tone_input_vrms, tone_input_channel=args.tone_input_channel, tone_hz=args.tone_hz,
        gain_db=args.gain_db, gain_frequency_hz=args.gain_frequency_hz, response=args.response,
        response_channels=tuple(args.response_channels), zin_ohm=args.zin_ohm, rs_ohm=args.rs,
        temperature_k=args.temperature_k,
        band_hz=(band.low_hz, band.high_hz) if band is not None else (tuple(args.band) if args.band else None),
        weighting=args.weighting, detector=args.detector, channel=args.channel, volts_per_fs=args.volts_per_fs,
        calibration=args.calibration,
        trace=TraceReading(rbw_hz=args.rbw_hz, detector=args.trace_detector, reference_ohm=args.reference_ohm,
                           enbw_ratio=args.enbw_ratio),
        accept_dropouts=args.accept_dropouts, segment_length=args.segment, mains_hz=args.mains_hz,
        flicker_range_hz=tuple(args.flicker_range) if args.flicker_range else None,
        flicker_free_slope=args.flicker_free_slope,
        stated=StatedUncertainty(calibration_pct=args.calibration_limit_pct, tone_level_pct=args.tone_limit_pct,
                                 resistor_pct=args.resistor_limit_pct, temperature_k=args.temperature_limit_k),
        reference_output_vrms=(float(dbu_to_vrms(args.reference_dbu)) if args.reference_dbu is not None
                               else args.reference_vrms),
        band_above_mains=args.band_preset == "above-hum", cross=args.cross,
        cross_channels=tuple(args.cross_channels) if args.cross_channels else None, background=args.background,
        references=tuple(args.reference_channel or ()), cross_calibration=args.cross_calibration,
        cross_volts_per_fs=args.cross_volts_per_fs)


def write_extra(args: argparse.Namespace, writer: Writer, result: Any) -> None:
    """--spectra: every bin's densities, noise figure and their Welch uncertainty as CSV."""
    if args.spectra:
        from ..report.spectra_csv import spectra_csv
        writer.text(args.spectra, spectra_csv(result))
        print(f"spectra written to {args.spectra}")
