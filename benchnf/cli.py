"""Command line: parse, call the library, print.  No computation lives here.

Exit status: 0 done, 1 a limit check failed, 2 bad input or usage, 3 a
missing optional dependency or audio device, 130 interrupted.
"""

from __future__ import annotations

import argparse
import math
import sys
import warnings
from collections.abc import Callable, Sequence
from contextlib import contextmanager
from enum import IntEnum
from pathlib import Path
from typing import Any, Iterator

from .errors import BenchError, BenchWarning, DeviceNotFoundError, MissingDependencyError

__all__ = ["main", "build_parser", "ExitStatus"]


class ExitStatus(IntEnum):
    OK = 0
    CHECK_FAILED = 1
    BAD_INPUT = 2
    MISSING_DEPENDENCY = 3
    INTERRUPTED = 130


# -- argument types: validate at the boundary -------------------------------------------
def _number(text: str, what: str, ok: Callable[[float], bool]) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number ({what})") from None
    if not (math.isfinite(value) and ok(value)):
        raise argparse.ArgumentTypeError(f"{text!r} is not {what}")
    return value


def positive_ohm(text: str) -> float:
    return _number(text, "a resistance > 0 ohm", lambda v: v > 0)


def positive_volts(text: str) -> float:
    return _number(text, "a voltage > 0 V", lambda v: v > 0)


def positive_hz(text: str) -> float:
    return _number(text, "a positive frequency in Hz", lambda v: v > 0)


def non_negative_hz(text: str) -> float:
    return _number(text, "a frequency >= 0 Hz", lambda v: v >= 0)


def kelvin(text: str) -> float:
    return _number(text, "a temperature above 0 K", lambda v: v > 0)


def non_negative_pct(text: str) -> float:
    return _number(text, "a number >= 0", lambda v: v >= 0)


def finite_db(text: str) -> float:
    return _number(text, "a finite number of dB", lambda v: True)


def channel_index(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a channel number (0, 1, ...)") from None
    if value < 0:
        raise argparse.ArgumentTypeError(f"{text!r} is not a channel number: channels count from 0")
    return value


def segment_samples(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number of samples") from None
    if value < 64:
        raise argparse.ArgumentTypeError(f"{text!r}: a segment needs at least 64 samples")
    return value


# -- helpers ------------------------------------------------------------------------------
@contextmanager
def _progress(total_frames: int, *, quiet: bool, label: str) -> Iterator[Callable[[int], None] | None]:
    """A tqdm bar on stderr, only when stderr is a terminal and not --quiet."""
    if quiet or not sys.stderr.isatty():
        yield None
        return
    from tqdm import tqdm
    bar = tqdm(total=total_frames, unit="frame", unit_scale=True, desc=label, leave=False,
               file=sys.stderr)
    try:
        yield bar.update
    finally:
        bar.close()


def _print_warnings(caught: list[warnings.WarningMessage]) -> None:
    for w in caught:
        if issubclass(w.category, BenchWarning):
            print(f"benchnf: warning: {w.message}", file=sys.stderr)


def _load_calibration(args: argparse.Namespace):
    if getattr(args, "calibration", None) is None:
        return None
    from .calibration import Calibration
    return Calibration.load(args.calibration)


def _open(path: Path | None, *, condition: str | None, args: argparse.Namespace, cal,
          channel: int | None = None):
    """Open a capture with the calibration that applies: --volts-per-fs, --calibration, sidecar."""
    if path is None:
        return None
    from .calibration import apply_calibration
    from .io import open_capture
    if path.suffix.lower() in (".csv", ".txt"):
        from .io.csv_trace import load_csv
        # Instrument CSV is in volts already: no sound-card calibration applies.
        return load_csv(path, rbw_hz=args.rbw_hz, detector=args.trace_detector,
                        reference_ohm=args.reference_ohm, enbw_ratio=args.enbw_ratio)
    cap = open_capture(path, channel=args.channel if channel is None else channel,
                       condition=condition, volts_per_fs=args.volts_per_fs,
                       accept_dropouts=getattr(args, "accept_dropouts", False))
    if args.volts_per_fs is None and cal is not None:
        cap = apply_calibration(cap, cal)
    return cap


# -- subcommands ------------------------------------------------------------------------
def run_calibrate(args: argparse.Namespace) -> int:
    from .calibration import calibrate_from_tone
    from .io import open_capture
    from .report.json_out import check_output_path
    out = Path(args.output)
    if args.reference is None and args.device is None:
        raise BenchError("give a reference capture (REF) or record one live with --device NAME")
    if args.reference is not None:
        check_output_path(out, [Path(args.reference)])
    if out.exists():
        raise BenchError(f"{out} exists already: give another -o name (nothing was overwritten)")
    if args.reference is None:
        from .acquire.record import SoundcardRecorder
        from .capture import Capture
        rec = SoundcardRecorder(args.device, host_api=args.host_api)
        print(f"recording {args.seconds:g} s of the reference tone from {rec.input.describe()}", file=sys.stderr)
        ch = args.channel or 0
        x = rec.record(int(args.seconds * args.rate), sample_rate_hz=args.rate, channels=ch + 1)
        ref = Capture.from_array(x, sample_rate_hz=args.rate, channel=ch,
                                 metadata={"device": rec.input.name, "notes": f"live, {rec.input.host_api}"})
    else:
        ref = open_capture(args.reference, channel=args.channel, condition=None)
    band = tuple(args.meter_band) if args.meter_band else None
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", BenchWarning)
        kwargs: dict[str, Any] = {"vrms": args.vrms, "frequency_hz": args.tone_hz}
        if band is not None:
            kwargs["meter_band_hz"] = band
        cal = calibrate_from_tone(ref, **kwargs)
    _print_warnings(caught)
    cal.save(out)
    print(f"{cal.volts_per_fs:.6g} V per full scale on channel {cal.channel} at "
          f"{cal.sample_rate_hz:g} Hz (tone {cal.reference_frequency_hz:.1f} Hz, "
          f"{cal.reference_level_dbfs:.1f} dBFS, {cal.reference_vrms:g} V RMS stated); "
          f"written to {out}")
    return ExitStatus.OK


def _gain_setup(args: argparse.Namespace, cal):
    from .analysis import GainSetup
    tone = _open(args.tone, condition="tone", args=args, cal=cal)
    response = None
    if args.response is not None:
        from .io import open_capture
        response = open_capture(args.response, channel=args.response_channels[1])
    vin = args.tone_input_vrms
    if tone is not None and vin is None and args.tone_input_channel is None:
        vin = tone.metadata.get("tone_input_vrms")
    return GainSetup(tone=tone, tone_input_vrms=vin, tone_input_channel=args.tone_input_channel,
                     tone_frequency_hz=args.tone_hz, gain_db=args.gain_db,
                     gain_frequency_hz=args.gain_frequency_hz, response=response,
                     response_channels=tuple(args.response_channels), zin_ohm=args.zin_ohm)


def run_analyze(args: argparse.Namespace) -> int:
    from .analysis import analyze_gain_method
    from .dsp.weighting import BAND_PRESETS, Band
    from .noise.uncertainty import StatedUncertainty
    from .report.json_out import check_output_path
    from .report.text import format_summary
    from .units import dbu_to_vrms

    inputs = [*args.terminated, args.floor, args.shorted, args.tone, args.response]
    if args.json:
        check_output_path(args.json, inputs)
    cal = _load_calibration(args)
    runs = [_open(t, condition="terminated", args=args, cal=cal) for t in args.terminated]
    terminated = runs[0]
    floor = _open(args.floor, condition="floor", args=args, cal=cal)
    shorted = _open(args.shorted, condition="shorted", args=args, cal=cal)
    gain = _gain_setup(args, cal)
    meta = getattr(terminated, "metadata", {})
    rs = args.rs if args.rs is not None else meta.get("rs_ohm")
    if rs is None:
        raise BenchError("give the source resistance with --rs OHM (the terminated capture's "
                         "sidecar does not state it)")
    temperature = args.temperature_k if args.temperature_k is not None else meta.get("temperature_k", 290.0)
    if args.band_preset:
        band = BAND_PRESETS[args.band_preset]
    else:
        band = Band(*(args.band or (20.0, 20_000.0)))
    reference = args.reference_vrms
    if args.reference_dbu is not None:
        reference = float(dbu_to_vrms(args.reference_dbu))
    stated = StatedUncertainty(calibration_pct=args.calibration_limit_pct, tone_level_pct=args.tone_limit_pct,
                               resistor_pct=args.resistor_limit_pct, temperature_k=args.temperature_limit_k)
    total = sum(getattr(c, "n_frames", 0) for c in (*runs, floor, shorted) if c is not None)
    with warnings.catch_warnings(record=True) as caught, \
            _progress(total, quiet=args.quiet, label="analysing") as tick:
        warnings.simplefilter("always", BenchWarning)
        result = analyze_gain_method(terminated=runs, floor=floor, shorted=shorted, gain=gain,
                                     rs_ohm=float(rs), temperature_k=float(temperature), band=band,
                                     weighting=args.weighting, detector=args.detector,
                                     segment_length=args.segment, mains_hz=args.mains_hz,
                                     flicker_range_hz=tuple(args.flicker_range) if args.flicker_range else None,
                                     flicker_free_slope=args.flicker_free_slope, stated=stated,
                                     reference_output_vrms=reference, progress=tick)
    _print_warnings(caught)
    print(format_summary(result, explain=args.explain), end="")
    from .report.plots import save_plots
    _write_outputs(args, result.to_dict(), lambda folder: save_plots(result, folder))
    return ExitStatus.OK


def _open_rf(path: Path | None, args: argparse.Namespace):
    """A hot/cold capture: SigMF IQ, two-channel audio as I/Q (--iq), or a real audio channel."""
    if path is None:
        return None
    name = path.name.lower()
    if name.endswith((".sigmf-meta", ".sigmf-data", ".sigmf")):
        from .io.sigmf_iq import open_sigmf
        return open_sigmf(path)
    if args.iq:
        from .io.sigmf_iq import open_wav_iq
        if args.centre_hz is None:
            raise BenchError("--iq needs the receiver's centre frequency: give --centre-hz F")
        return open_wav_iq(path, centre_hz=args.centre_hz)
    from .io import open_capture
    return open_capture(path, channel=args.channel)


def run_yfactor(args: argparse.Namespace) -> int:
    from .dsp.weighting import Band
    from .noise.yfactor import EnrTable, load_enr_table
    from .report.json_out import check_output_path
    from .report.yfactor_text import format_yfactor
    from .yfactor_analysis import HotColdSource, Loss, analyze_yfactor

    inputs = [*(args.hot or []), *(args.cold or []), args.cal_hot, args.cal_cold, args.floor, args.annotated]
    if args.json:
        check_output_path(args.json, inputs)
    if args.annotated is not None:
        rec = _open_rf(args.annotated, args)
        if not getattr(rec, "segments", ()):
            raise BenchError(f"{args.annotated} has no annotations labelled hot and cold")
        hot, cold = rec.segment("hot"), rec.segment("cold")
    else:
        if not args.hot or not args.cold:
            raise BenchError("give --hot and --cold captures (or one --annotated recording)")
        hot = [_open_rf(p, args) for p in args.hot]
        cold = [_open_rf(p, args) for p in args.cold]
    t_cold = args.t_cold_k if args.t_cold_k is not None else (
        args.t_cold_c + 273.15 if args.t_cold_c is not None else None)
    t_hot = args.t_hot_k if args.t_hot_k is not None else (
        args.t_hot_c + 273.15 if args.t_hot_c is not None else None)
    enr = None
    if args.enr_db is not None:
        enr = EnrTable.constant(args.enr_db)
    elif args.enr_table is not None:
        enr = load_enr_table(args.enr_table)
    source = HotColdSource(enr=enr, t_hot_k=t_hot, t_cold_k=t_cold, enr_uncertainty_db=args.enr_uncertainty_db,
                           temperature_uncertainty_k=args.temperature_uncertainty_k)
    band = Band(*args.band) if args.band else None
    total = sum(getattr(c, "n_frames", 0) for c in (*hot, *cold))
    with _progress(total, quiet=args.quiet, label="analysing") as tick:
        result = analyze_yfactor(
            hot=hot, cold=cold, source=source, cal_hot=_open_rf(args.cal_hot, args),
            cal_cold=_open_rf(args.cal_cold, args), floor=_open_rf(args.floor, args), band=band,
            segment_length=args.segment, n_rows=args.rows, spot_hz=args.spot or (),
            loss_before=Loss(*args.loss_before) if args.loss_before else None,
            loss_after=Loss(*args.loss_after) if args.loss_after else None,
            dc_exclude_hz=args.dc_exclude_hz, edge_fraction=args.edge_fraction, progress=tick)
    print(format_yfactor(result, explain=args.explain), end="")
    from .report.plots import save_yfactor_plots
    _write_outputs(args, result.to_dict(), lambda folder: save_yfactor_plots(result, folder))
    return ExitStatus.OK


def run_cascade(args: argparse.Namespace) -> int:
    from dataclasses import replace as dc_replace
    from .noise.cascade import load_chain, predict, what_if, where_to_spend
    from .report.json_out import write_json
    from .report.stages_text import format_cascade
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
        changes: dict[str, Any] = {}
        for pair in pairs:
            key, _, value = pair.partition("=")
            if key not in ("gain_db", "nf_db", "te_k", "en_v_per_rthz", "in_a_per_rthz", "output_ohm"):
                raise BenchError(f"--what-if: {key!r} is not a stage value one can swap")
            try:
                changes[key] = float(value)
            except ValueError:
                raise BenchError(f"--what-if: {pair!r} is not KEY=NUMBER") from None
        if "nf_db" in changes:
            changes.setdefault("te_k", None)
        if "te_k" in changes and changes["te_k"] is not None:
            changes.setdefault("nf_db", None)
        stage = dc_replace(chain.stages[index], **changes, source="what-if")
        _, other = what_if(chain, index, stage)
        alternative = (f"{names[index]} had " + ", ".join(pairs), other)
    print(format_cascade(result, spend=spend, improve_db=args.improve_db, what_if=alternative), end="")
    if args.json:
        data = {"schema_version": "1", "kind": "cascade", **result.to_dict(),
                "where_to_spend": [{"stage": n, "noise_figure_saving_db": v} for n, v in spend]}
        if alternative:
            data["what_if"] = {"change": alternative[0], **alternative[1].to_dict()}
        write_json(data, args.json)
        print(f"\nJSON written to {args.json}")
    return ExitStatus.OK


def _gain_for(args: argparse.Namespace, cal, tone_path: Path | None):
    from .analysis import GainSetup
    if tone_path is not None:
        tone = _open(tone_path, condition="tone", args=args, cal=cal)
        vin = args.tone_input_vrms if args.tone_input_vrms is not None else tone.metadata.get("tone_input_vrms")
        return GainSetup(tone=tone, tone_input_vrms=vin, tone_frequency_hz=getattr(args, "tone_hz", None),
                         zin_ohm=getattr(args, "zin_ohm", None))
    if args.gain_db is None:
        raise BenchError("give the gain: --tone FILE with --tone-input-vrms, or --gain-db G")
    return GainSetup(gain_db=args.gain_db, zin_ohm=getattr(args, "zin_ohm", None))


def run_budget(args: argparse.Namespace) -> int:
    from .dsp.weighting import Band
    from .noise.cascade import load_chain
    from .report.stages_text import format_budget
    from .stages import measured_budget
    chain = load_chain(args.chain) if args.chain else None
    cal = _load_calibration(args)
    taps = []
    for i, (noise, tone) in enumerate(args.tap, 1):
        name = chain.stages[i - 1].name if chain is not None and i <= len(chain.stages) else f"tap {i}"
        taps.append((name, _open(Path(noise), condition=None, args=args, cal=cal),
                     _gain_for(args, cal, Path(tone))))
    rs = args.rs if args.rs is not None else taps[0][1].metadata.get("rs_ohm")
    if rs is None or not rs > 0:
        raise BenchError("give the source resistance the chain's input is terminated in: --rs OHM")
    temperature = args.temperature_k or taps[0][1].metadata.get("temperature_k", 290.0)
    result = measured_budget(taps=taps, rs_ohm=float(rs), temperature_k=float(temperature),
                             floor=_open(args.floor, condition="floor", args=args, cal=cal), chain=chain,
                             band=Band(*args.band), segment_length=args.segment)
    print(format_budget(result), end="")
    from .report.plots import save_budget_plot
    _write_outputs(args, result.to_dict(), lambda folder: save_budget_plot(result, folder))
    return ExitStatus.OK


def _sweep_item(text: str) -> tuple[Path, float, Path | None]:
    parts = text.split("@")
    if len(parts) not in (2, 3):
        raise argparse.ArgumentTypeError(f"{text!r} is not FILE@RS_OHM (or FILE@RS_OHM@TONE_FILE)")
    try:
        rs = float(parts[1])
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r}: {parts[1]!r} is not a resistance in ohm") from None
    if not (math.isfinite(rs) and rs >= 0):
        raise argparse.ArgumentTypeError(f"{text!r}: the source resistance must be >= 0 ohm (0 = shorted)")
    return Path(parts[0]), rs, Path(parts[2]) if len(parts) == 3 else None


def run_eni(args: argparse.Namespace) -> int:
    from .dsp.weighting import Band
    from .report.json_out import check_output_path
    from .report.stages_text import format_eni
    from .stages import extract_en_in
    if args.json:
        check_output_path(args.json, [p for p, _r, _t in args.captures])
    cal = _load_calibration(args)
    sweep = []
    temps = []
    for path, rs, tone in args.captures:
        cap = _open(path, condition=None, args=args, cal=cal)
        t_side = getattr(cap, "metadata", {}).get("temperature_k")
        temps.append(t_side)
        sweep.append([cap, rs, t_side, _gain_for(args, cal, tone or args.tone)])
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
    result = extract_en_in(sweep=[tuple(x) for x in sweep], floor=_open(args.floor, condition="floor", args=args,
                                                                        cal=cal),
                           band=Band(*args.band), segment_length=args.segment)
    print(format_eni(result), end="")
    from .report.plots import save_eni_plots
    _write_outputs(args, result.to_dict(), lambda folder: save_eni_plots(result, folder))
    return ExitStatus.OK


def _read_results(path: Path) -> dict[str, Any]:
    import json
    try:
        data = json.loads(Path(path).read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise BenchError(f"{path}: no such results file") from None
    except (OSError, UnicodeDecodeError, ValueError) as err:
        raise BenchError(f"{path} is not a readable results JSON ({err})") from err
    if not isinstance(data, dict) or "schema_version" not in data:
        raise BenchError(f"{path} is not a benchnf results JSON (no schema_version)")
    return data


def run_profile(args: argparse.Namespace) -> int:
    from .check.profile import load_profile, profile_from_results
    out = Path(args.output)
    if out.exists():
        raise BenchError(f"{out} exists already: give another -o name (nothing was overwritten)")
    results = [_read_results(p) for p in args.results]
    for p, r in zip(args.results, results):
        if str(r.get("schema_version")) != "1" or r.get("kind") not in (None, "analysis"):
            raise BenchError(f"{p} is not the results of 'benchnf analyze' (schema 1)")
    prof = profile_from_results(results, margin_db=args.margin_db, name=args.name or "known good")
    out.write_text(prof.to_toml(), encoding="utf-8")
    load_profile(out)  # what was written must load
    print(f"profile of {len(results)} known-good unit(s), {len(prof.limits)} limits, {len(prof.masks)} mask(s), "
          f"{len(prof.hum)} hum limit(s), margin {args.margin_db:g} dB: written to {out}")
    return ExitStatus.OK


def _verdict_table(rows: list[tuple[str, str, str]]) -> str:
    return "\n".join(f"  {a:24s} {b:10s} {c}" for a, b, c in rows)


def run_check(args: argparse.Namespace) -> int:
    from .check.limits import check_results
    from .check.profile import load_profile
    from .report.json_out import write_json
    profile = load_profile(args.profile)
    results = _read_results(args.results)
    unit = args.unit or Path(args.results).stem
    res = check_results(results, profile, unit=unit)
    print(f"benchnf - {unit} against profile {profile.name!r}: {res.verdict}\n")
    print(f"  {'limit':44s} {'measured':>11} {'limit':>16} {'margin':>10} {'U k=2':>7}  verdict")
    for v in res.limits:
        meas = "-" if v.measured is None else f"{v.measured:.4g}"
        margin = "-" if v.margin is None else f"{v.margin:.3g} {v.unit}"
        u = "-" if v.uncertainty is None else f"{v.uncertainty:.2f}"
        print(f"  {v.name[:44]:44s} {meas:>11} {v.limit:>16} {margin:>10} {u:>7}  {v.verdict}")
        if v.hint:
            print(f"      suggestion: {v.hint}")
    if args.json:
        write_json(res.to_dict(), args.json)
        print(f"\nJSON written to {args.json}")
    if args.report:
        from .report.html import write_unit_png, write_unit_report
        folder = Path(args.report)
        folder.mkdir(parents=True, exist_ok=True)
        write_unit_report(folder / f"{unit}.html", serial=unit, verdict=res.verdict, check=res.to_dict(),
                          results=results, profile=profile)
        write_unit_png(results, res.to_dict(), folder / f"{unit}.png", profile)
        print(f"report written to {folder / (unit + '.html')}")
    return ExitStatus.CHECK_FAILED if res.failed else ExitStatus.OK


def run_batch(args: argparse.Namespace) -> int:
    from .check.batch import append_history, check_batch, find_units, write_junit, write_summary_csv
    from .check.profile import load_profile
    from .report.html import write_unit_png, write_unit_report
    profile = load_profile(args.profile)
    units = find_units(args.units)
    out = Path(args.output)
    out.mkdir(parents=True, exist_ok=True)
    settings = {"calibration": str(args.calibration) if args.calibration else None,
                "volts_per_fs": args.volts_per_fs, "floor": str(args.floor) if args.floor else None,
                "tone_input_vrms": args.tone_input_vrms}
    with _progress(len(units), quiet=args.quiet, label="checking") as tick:
        outcomes = check_batch(Path(args.units), str(args.profile), settings=settings, workers=args.workers,
                               progress=tick)
    rows = []
    for o in outcomes:
        failed = [v["name"] for v in (o.check or {}).get("limits", []) if v["verdict"] != "PASS"]
        rows.append((o.serial, o.verdict, o.error or ", ".join(failed)))
        write_unit_report(out / f"{o.serial}.html", serial=o.serial, verdict=o.verdict, check=o.check,
                          results=o.results, profile=profile, error=o.error)
        if o.results:
            write_unit_png(o.results, o.check, out / f"{o.serial}.png", profile)
    write_summary_csv(outcomes, out / "summary.csv")
    write_junit(outcomes, out / "junit.xml", profile=profile.name)
    history = Path(args.history) if args.history else out / "history.csv"
    append_history(outcomes, history, profile=profile.name)
    counts = {k: sum(o.verdict == k for o in outcomes) for k in ("PASS", "MARGINAL", "FAIL", "ERROR")}
    print(f"benchnf - {len(outcomes)} units against profile {profile.name!r}\n")
    print(_verdict_table([("unit", "verdict", "limits not passed / error")] + rows))
    print("\n  " + ", ".join(f"{v} {k.lower()}" for k, v in counts.items()))
    print(f"\nreports, summary.csv and junit.xml in {out}/; history appended to {history}")
    if counts["FAIL"]:
        return ExitStatus.CHECK_FAILED
    return ExitStatus.BAD_INPUT if counts["ERROR"] else ExitStatus.OK


def run_devices(args: argparse.Namespace) -> int:
    from .acquire.devices import list_devices
    devices = list_devices()
    print(f"  {'name':40s} {'host API':14s} {'in':>4} {'out':>4} {'native Hz':>10}")
    for d in devices:
        print(f"  {d.name[:40]:40s} {d.host_api[:14]:14s} {d.max_input_channels:4d} {d.max_output_channels:4d} "
              f"{d.default_samplerate:10g}")
    print("\nSelect a device by (part of) its name with --device, and --host-api when names repeat.")
    return ExitStatus.OK


def _say_rate_note(device: str | None, host_api: str | None, rate: float, *, warn: bool = True) -> None:
    from .acquire.devices import find_device, rate_note
    dev = find_device(device, host_api=host_api, kind="input")
    note = rate_note(dev, rate)
    print(f"recording from {dev.describe()}", file=sys.stderr)
    if note and warn:
        print(f"benchnf: warning: {note}", file=sys.stderr)


def run_record(args: argparse.Namespace) -> int:
    from .acquire.record import record_to_file
    _say_rate_note(args.device, args.host_api, args.rate, warn=False)  # record_to_file's notes carry it
    meta = {k: v for k, v in (("rs_ohm", args.rs), ("temperature_k", args.temperature_k),
                              ("volts_per_fs", args.volts_per_fs)) if v is not None}
    if args.calibration:
        from .calibration import Calibration
        cal = Calibration.load(args.calibration)
        meta["volts_per_fs"] = cal.volts_per_fs
        meta["calibration"] = str(args.calibration)
    total = int(args.seconds * args.rate)
    with _progress(total, quiet=args.quiet, label="recording") as tick:
        try:
            rep = record_to_file(args.output, seconds=args.seconds, sample_rate_hz=args.rate, channels=args.channels,
                                 device=args.device, host_api=args.host_api, condition=args.condition,
                                 metadata=meta, on_progress=tick)
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


def run_playrec(args: argparse.Namespace) -> int:
    import numpy as np
    import soundfile as sf
    from .acquire.record import SoundcardRecorder
    from .acquire.signals import align_lag, make_signal
    from .io.sidecar import sidecar_candidates, write_sidecar
    out = Path(args.output)
    for p in (out, *sidecar_candidates(out)):
        if p.exists():
            raise BenchError(f"{p} exists already: choose another name (nothing was overwritten)")
    sig = make_signal(args.signal, sample_rate_hz=args.rate, seconds=args.seconds, level_dbfs=args.level_dbfs,
                      frequency_hz=args.tone_hz)
    pad = np.zeros(int(0.5 * args.rate), dtype=np.float32)  # room for the latency at the end
    play = np.concatenate([sig, pad])
    _say_rate_note(args.device, args.host_api, args.rate)
    rec = SoundcardRecorder(args.device, host_api=args.host_api).playrec(
        np.column_stack([play] * args.play_channels), sample_rate_hz=args.rate, channels=args.channels)
    lag = align_lag(rec[:, args.reference_channel], sig)
    lag = max(lag, 0)
    aligned = rec[lag:lag + sig.size]
    sf.write(str(out), aligned, int(args.rate), subtype="FLOAT")
    write_sidecar(out, {"condition": "tone" if args.signal == "tone" else "tone", "signal": args.signal,
                        "tone_hz": args.tone_hz if args.signal == "tone" else None, "level_dbfs": args.level_dbfs,
                        "latency_frames": int(lag), "device": args.device, "sample_rate_hz": args.rate})
    print(f"played a {args.signal} at {args.level_dbfs:g} dBFS and recorded {aligned.shape[0]} frames x "
          f"{aligned.shape[1]} channel(s); latency {lag} frames ({1e3 * lag / args.rate:.1f} ms), aligned; "
          f"written to {out}")
    return ExitStatus.OK


def run_measure(args: argparse.Namespace) -> int:
    from .acquire.plan import load_plan, run_plan
    from .acquire.record import record_to_file
    from .demo import fresh_folder
    plan = load_plan(args.plan)
    base = Path(args.out_dir or plan.out_dir or Path(args.plan).with_suffix(""))
    folder = fresh_folder(base)
    print(f"benchnf - guided measurement {plan.name!r}; captures go to {folder}/")
    print("CAUTION: mains and valve equipment carry lethal voltages; phantom power and speaker outputs can "
          "destroy a sound-card input. Follow local codes and licensed practice.")

    def record(path: Path, step) -> None:
        meta = {k: v for k, v in (("rs_ohm", plan.analysis.get("rs_ohm")),
                                  ("temperature_k", plan.analysis.get("temperature_k")),
                                  ("tone_hz", step.tone_hz), ("tone_input_vrms", step.tone_input_vrms))
                if v is not None}
        if step.condition == "floor":
            meta.pop("rs_ohm", None)
        record_to_file(path, seconds=step.seconds, sample_rate_hz=plan.sample_rate_hz, channels=plan.channels,
                       device=args.device or plan.device, host_api=plan.host_api, condition=step.condition,
                       metadata=meta)

    files = run_plan(plan, record=record, folder=folder, interactive=not args.yes)
    if {"terminated", "tone"} <= set(files):
        from .analysis import GainSetup, analyze_gain_method
        from .dsp.weighting import Band
        from .io import open_capture
        from .report.json_out import write_json
        from .report.text import format_summary
        a = plan.analysis
        vpfs = a.get("volts_per_fs")
        if a.get("calibration"):
            from .calibration import Calibration
            vpfs = Calibration.load(a["calibration"]).volts_per_fs
        if vpfs is None:
            print("\nno calibration in the plan ([analysis] volts_per_fs or calibration): captures kept, not analysed")
            return ExitStatus.OK
        cap = lambda f, c: open_capture(f, condition=c, volts_per_fs=vpfs)  # noqa: E731
        tone = cap(files["tone"], "tone")
        result = analyze_gain_method(
            terminated=cap(files["terminated"], "terminated"),
            floor=cap(files["floor"], "floor") if "floor" in files else None,
            shorted=cap(files["shorted"], "shorted") if "shorted" in files else None,
            gain=GainSetup(tone=tone, tone_input_vrms=tone.metadata.get("tone_input_vrms")),
            rs_ohm=float(a["rs_ohm"]), temperature_k=float(a.get("temperature_k", 290.0)),
            band=Band(*a.get("band_hz", (20.0, 20_000.0))), weighting=a.get("weighting", "none"))
        print()
        print(format_summary(result), end="")
        write_json(result.to_dict(), folder / "results.json")
        print(f"\nresults written to {folder / 'results.json'}")
    return ExitStatus.OK


def run_live_cmd(args: argparse.Namespace) -> int:
    from .acquire.live import run_live
    from .dsp.weighting import Band
    vpfs = args.volts_per_fs
    if args.calibration:
        from .calibration import Calibration
        vpfs = Calibration.load(args.calibration).volts_per_fs
    run_live(device=args.device, host_api=args.host_api, sample_rate_hz=args.rate, volts_per_fs=vpfs,
             band=Band(*args.band), update_hz=args.updates_per_s, seconds=args.seconds, window=args.window)
    return ExitStatus.OK


def run_calibrate_output(args: argparse.Namespace) -> int:
    import json
    import numpy as np
    from .acquire.record import SoundcardRecorder
    from .acquire.signals import make_signal
    from .calibration import Calibration
    from .dsp.tones import fit_sine
    out = Path(args.output)
    if out.exists():
        raise BenchError(f"{out} exists already: give another -o name (nothing was overwritten)")
    cal = Calibration.load(args.calibration)
    sig = make_signal("tone", sample_rate_hz=cal.sample_rate_hz, seconds=args.seconds, level_dbfs=args.level_dbfs,
                      frequency_hz=args.tone_hz)
    from .acquire.signals import align_lag
    rec = SoundcardRecorder(args.device, host_api=args.host_api)
    play = np.concatenate([sig, np.zeros(int(0.5 * cal.sample_rate_hz), dtype=np.float32)])
    x = rec.playrec(np.column_stack([play, play]), sample_rate_hz=cal.sample_rate_hz, channels=cal.channel + 1)
    lag = max(align_lag(x[:, cal.channel], sig), 0)
    edge = int(0.1 * cal.sample_rate_hz)  # leave the ends, where the tone starts and stops
    part = x[lag + edge:lag + sig.size - edge, cal.channel].astype(np.float64)
    fit = fit_sine(part, sample_rate_hz=cal.sample_rate_hz, frequency_hz=args.tone_hz)
    played_peak_fs = 10 ** (args.level_dbfs / 20)
    vpfs_out = fit.amplitude * cal.volts_per_fs / played_peak_fs
    data = {"schema": "benchnf.output-calibration/1", "output_volts_per_fs": vpfs_out,
            "tone_hz": args.tone_hz, "level_dbfs": args.level_dbfs, "input_calibration": str(args.calibration),
            "device": rec.input.name, "sample_rate_hz": cal.sample_rate_hz}
    with open(out, "x", encoding="utf-8") as fh:
        json.dump(data, fh, indent=2)
    print(f"the output gives {vpfs_out:.6g} V per full scale (a {args.level_dbfs:g} dBFS tone reads "
          f"{fit.rms * cal.volts_per_fs:.6g} V RMS on the calibrated input); written to {out}")
    return ExitStatus.OK


def run_recover(args: argparse.Namespace) -> int:
    from .acquire.record import recover_wav
    frames = recover_wav(args.damaged, args.output)
    print(f"{frames} frames rescued from {args.damaged} into {args.output}; the damaged file was not changed")
    return ExitStatus.OK


def run_demo(args: argparse.Namespace) -> int:
    from .demo import run_demo as demo
    demo(output=args.output, quiet=args.quiet)
    return ExitStatus.OK


# -- parser -------------------------------------------------------------------------------
def _common(p: argparse.ArgumentParser) -> None:
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.add_argument("--traceback", action="store_true", help="show the full traceback on errors")


def _calibration_options(p: argparse.ArgumentParser) -> None:
    g = p.add_mutually_exclusive_group()
    g.add_argument("--volts-per-fs", type=positive_volts, metavar="V",
                   help="volts that a sample value of 1.0 represents at the analyzer input")
    g.add_argument("--calibration", type=Path, metavar="CAL.json",
                   help="a calibration file written by 'benchnf calibrate'")


def _write_outputs(args: argparse.Namespace, data: dict[str, Any], save_plots=None) -> None:
    """--json and --plot, the same way for every command."""
    from .report.json_out import write_json
    if getattr(args, "json", None):
        write_json(data, args.json)
        print(f"\nJSON written to {args.json}")
    if getattr(args, "plot", None) and save_plots is not None:
        paths = save_plots(args.plot)
        print(f"plots written to {Path(args.plot)}/: " + ", ".join(p.name for p in paths))


def _sweep_options(p: argparse.ArgumentParser, *, band_default: tuple[float, float], band_help: str) -> None:
    """Options shared by the commands that refer several captures to the input (budget, eni)."""
    p.add_argument("--floor", type=Path, metavar="FILE", help="analyzer floor")
    p.add_argument("--band", type=non_negative_hz, nargs=2, default=list(band_default), metavar=("LO", "HI"),
                   help=band_help)
    p.add_argument("--segment", type=segment_samples, metavar="N")
    p.add_argument("--channel", type=channel_index, metavar="N")
    _calibration_options(p)
    _output_options(p)


def _output_options(p: argparse.ArgumentParser, *, plot: bool = True) -> None:
    p.add_argument("--json", type=Path, metavar="OUT.json", help="write the results as JSON")
    if plot:
        p.add_argument("--plot", type=Path, metavar="DIR", help="write PNG plots into DIR")
    _common(p)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="benchnf",
        description="Gain, noise density, EIN and noise figure of low-noise amplifiers from "
                    "sound-card captures.",
        epilog="Run 'benchnf demo' to analyse the shipped demo captures. Exit status: 0 done, "
               "1 a limit failed, 2 bad input, 3 missing dependency, 130 interrupted.")
    from . import __version__
    parser.add_argument("--version", action="version", version=f"benchnf {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    p = sub.add_parser("analyze", help="gain-method noise analysis of captures",
                       description="Gain, input-referred noise density, EIN and noise figure "
                                   "from a terminated-input capture and a tone (or stated gain).")
    p.add_argument("--terminated", type=Path, required=True, nargs="+", metavar="FILE",
                   help="DUT output with its input terminated in Rs (several: repeats, pooled, with "
                        "their scatter and drift)")
    p.add_argument("--floor", type=Path, metavar="FILE",
                   help="analyzer alone with its input terminated (subtracted in linear power)")
    p.add_argument("--shorted", type=Path, metavar="FILE",
                   help="DUT output with its input shorted (voltage noise alone)")
    g = p.add_mutually_exclusive_group(required=True)
    g.add_argument("--tone", type=Path, metavar="FILE", help="DUT output driven by a known sine")
    g.add_argument("--gain-db", type=finite_db, metavar="G",
                   help="stated voltage gain from source EMF to output, dB")
    p.add_argument("--tone-input-vrms", type=positive_volts, metavar="V",
                   help="RMS of the tone at the source EMF (default: the tone sidecar's "
                        "tone_input_vrms)")
    p.add_argument("--tone-input-channel", type=channel_index, metavar="N",
                   help="the tone capture's channel that records the DUT input (two-channel gain)")
    p.add_argument("--tone-hz", type=positive_hz, metavar="F",
                   help="stated tone frequency; the tone must be found there")
    p.add_argument("--gain-frequency-hz", type=positive_hz, default=1000.0, metavar="F",
                   help="frequency a --gain-db holds at (default 1000)")
    p.add_argument("--response", type=Path, metavar="FILE",
                   help="two-channel capture of a broadband stimulus, DUT input and output, "
                        "for the shape of the response")
    p.add_argument("--response-channels", type=channel_index, nargs=2, default=[0, 1],
                   metavar=("IN", "OUT"), help="channels of --response (default 0 1)")
    p.add_argument("--zin-ohm", type=positive_ohm, metavar="OHM",
                   help="DUT input impedance, when the tone level was taken at the DUT's terminals")
    p.add_argument("--rs", type=positive_ohm, metavar="OHM",
                   help="source resistance (default: the terminated sidecar's rs_ohm)")
    p.add_argument("--temperature-k", type=kelvin, metavar="K",
                   help="the source resistor's temperature (default: sidecar, else 290 K)")
    bands = p.add_mutually_exclusive_group()
    bands.add_argument("--band", type=non_negative_hz, nargs=2, metavar=("LO", "HI"),
                       help="integration band in Hz (default 20 20000)")
    bands.add_argument("--band-preset", choices=["audio", "wide", "no-hum"],
                       help="audio 20 Hz-20 kHz, wide 22 Hz-22 kHz, no-hum 400 Hz-22 kHz")
    p.add_argument("--weighting", choices=["none", "A", "C", "468", "468-2k"], default="none",
                   help="frequency weighting of band figures: IEC 61672-1 A or C, ITU-R BS.468-4 "
                        "(0 dB at 1 kHz) or 468-2k (0 dB at 2 kHz, for an RMS detector)")
    p.add_argument("--detector", choices=["rms", "qp"], default="rms",
                   help="rms, or qp: the BS.468-4 quasi-peak meter (with --weighting 468 only)")
    p.add_argument("--mains-hz", type=positive_hz, metavar="F",
                   help="mains fundamental for the hum families (default: found, 50 or 60)")
    p.add_argument("--flicker-range", type=positive_hz, nargs=2, metavar=("LO", "HI"),
                   help="range of the 1/f fit in Hz (default: band bottom to 10 kHz)")
    p.add_argument("--flicker-free-slope", action="store_true",
                   help="fit the 1/f exponent too, instead of fixing it at 1")
    refs = p.add_mutually_exclusive_group()
    refs.add_argument("--reference-vrms", type=positive_volts, metavar="V",
                      help="output reference level for an SNR figure, V RMS")
    refs.add_argument("--reference-dbu", type=finite_db, metavar="L",
                      help="output reference level for an SNR figure, dBu")
    p.add_argument("--calibration-limit-pct", type=non_negative_pct, default=1.0, metavar="P",
                   help="meter accuracy, +/- %% of reading (default 1)")
    p.add_argument("--tone-limit-pct", type=non_negative_pct, default=1.0, metavar="P",
                   help="tone level at the source known to +/- %% (default 1)")
    p.add_argument("--resistor-limit-pct", type=non_negative_pct, default=1.0, metavar="P",
                   help="source resistor tolerance, +/- %% (default 1)")
    p.add_argument("--temperature-limit-k", type=non_negative_pct, default=2.0, metavar="K",
                   help="source resistor temperature known to +/- K (default 2)")
    p.add_argument("--explain", action="store_true", help="list every uncertainty contribution")
    p.add_argument("--accept-dropouts", action="store_true",
                   help="use captures whose sidecar records dropouts (refused otherwise)")
    p.add_argument("--rbw-hz", type=positive_hz, metavar="F",
                   help="instrument CSV traces: resolution bandwidth (else the file's '# rbw_hz')")
    p.add_argument("--trace-detector", choices=["rms", "sample", "log"],
                   help="instrument CSV traces: how the trace was averaged (log reads noise 2.51 dB low)")
    p.add_argument("--reference-ohm", type=positive_ohm, metavar="OHM",
                   help="instrument CSV traces in dBm: reference impedance (default 50)")
    p.add_argument("--enbw-ratio", type=positive_hz, metavar="R",
                   help="instrument CSV traces: noise bandwidth over RBW (default 1)")
    p.add_argument("--segment", type=segment_samples, metavar="N",
                   help="Welch segment length in samples (default about 10 Hz bins)")
    p.add_argument("--channel", type=channel_index, metavar="N",
                   help="channel of the noise and tone captures (default: sidecar, else 0)")
    _calibration_options(p)
    _output_options(p)
    p.set_defaults(run=run_analyze)

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
    p.add_argument("--seconds", type=positive_hz, default=3.0, metavar="S", help="live recording length (3)")
    p.add_argument("--channel", type=channel_index, metavar="N", help="channel (default 0)")
    p.add_argument("--tone-hz", type=positive_hz, metavar="F", help="stated tone frequency")
    p.add_argument("--meter-band", type=positive_hz, nargs=2, metavar=("LO", "HI"),
                   help="band where the meter reads true (default 50 640 Hz)")
    p.add_argument("-o", "--output", type=Path, required=True, metavar="CAL.json",
                   help="calibration file to write (never overwritten)")
    _common(p)
    p.set_defaults(run=run_calibrate)

    p = sub.add_parser("yfactor", help="noise figure by the Y-factor (hot/cold) method",
                       description="DUT noise figure, noise temperature and gain from hot and cold "
                                   "captures (noise diode ENR or two temperatures), with the second-stage "
                                   "correction from a calibration pair.")
    p.add_argument("--hot", type=Path, nargs="+", metavar="FILE",
                   help="capture(s) with the source hot (several: repeats, paired in order with --cold)")
    p.add_argument("--cold", type=Path, nargs="+", metavar="FILE", help="capture(s) with the source cold")
    p.add_argument("--annotated", type=Path, metavar="FILE",
                   help="one SigMF recording whose annotations label hot and cold segments")
    p.add_argument("--cal-hot", type=Path, metavar="FILE", help="source straight into the receiver, hot")
    p.add_argument("--cal-cold", type=Path, metavar="FILE", help="source straight into the receiver, cold")
    p.add_argument("--floor", type=Path, metavar="FILE",
                   help="the receiver alone, input terminated: subtracted from every capture")
    src = p.add_mutually_exclusive_group(required=True)
    src.add_argument("--enr-db", type=finite_db, metavar="X", help="noise source ENR, dB")
    src.add_argument("--enr-table", type=Path, metavar="FILE",
                     help="noise source ENR table (TOML or CSV, docs/yfactor.md)")
    src.add_argument("--t-hot-k", type=kelvin, metavar="K", help="hot temperature, kelvin")
    src.add_argument("--t-hot-c", type=float, metavar="C", help="hot temperature, Celsius")
    cold = p.add_mutually_exclusive_group()
    cold.add_argument("--t-cold-k", type=kelvin, metavar="K",
                      help="cold temperature, kelvin (noise source: its physical temperature; default "
                           "the table's, else 290 K)")
    cold.add_argument("--t-cold-c", type=float, metavar="C", help="cold temperature, Celsius")
    p.add_argument("--enr-uncertainty-db", type=non_negative_pct, metavar="U",
                   help="ENR standard uncertainty, dB (default: the table's, else 0.1)")
    p.add_argument("--temperature-uncertainty-k", type=non_negative_pct, default=0.5, metavar="U",
                   help="standard uncertainty of each physical temperature, K (default 0.5)")
    p.add_argument("--loss-before", type=float, nargs=2, metavar=("DB", "K"),
                   help="matched loss between source and DUT: dB and physical temperature in K")
    p.add_argument("--loss-after", type=float, nargs=2, metavar=("DB", "K"),
                   help="matched loss between DUT and receiver: dB and physical temperature in K")
    p.add_argument("--band", type=non_negative_hz, nargs=2, metavar=("LO", "HI"),
                   help="band of the headline figures, absolute Hz (default: the usable span)")
    p.add_argument("--spot", type=positive_hz, nargs="+", metavar="F", help="spot frequencies, Hz")
    p.add_argument("--rows", type=int, default=16, metavar="N", help="sub-bands in the table (16)")
    p.add_argument("--segment", type=segment_samples, metavar="N", help="Welch segment length")
    p.add_argument("--iq", action="store_true", help="read two-channel audio files as I and Q")
    p.add_argument("--centre-hz", type=positive_hz, metavar="F", help="centre frequency for --iq")
    p.add_argument("--dc-exclude-hz", type=non_negative_hz, metavar="F",
                   help="IQ: half-width excluded around the centre (default max(3 bins, 0.5 %% of span))")
    p.add_argument("--edge-fraction", type=float, default=0.1, metavar="R",
                   help="IQ: fraction of each half-span excluded at the edges (default 0.1)")
    p.add_argument("--channel", type=channel_index, default=0, metavar="N", help="channel of audio captures")
    p.add_argument("--explain", action="store_true", help="list every uncertainty contribution")
    _output_options(p)
    p.set_defaults(run=run_yfactor)

    p = sub.add_parser("cascade", help="predict a chain's noise figure (Friis) and where to spend",
                       description="Noise figure, noise temperature and gain of a chain of stages from a "
                                   "chain file (docs/cascade.md), each stage's share of the excess noise, "
                                   "and what a quieter stage would buy.")
    p.add_argument("chain", type=Path, metavar="CHAIN.toml")
    p.add_argument("--improve-db", type=positive_hz, default=1.0, metavar="DB",
                   help="improvement tried on each stage for the ranking (default 1 dB)")
    p.add_argument("--what-if", nargs="+", metavar=("STAGE", "KEY=VALUE"),
                   help="swap one stage's data, e.g. --what-if 2 nf_db=1.2 or --what-if 1 en_v_per_rthz=3e-10")
    p.add_argument("--json", type=Path, metavar="OUT.json")
    _common(p)
    p.set_defaults(run=run_cascade)

    p = sub.add_parser("budget", help="measured stage budget from tap captures, against the prediction",
                       description="Input-referred noise after each stage, from captures at each stage's "
                                   "output (the chain's input terminated) with a tone capture for each tap's "
                                   "gain, beside the prediction from the chain file.")
    p.add_argument("chain", type=Path, nargs="?", metavar="CHAIN.toml", help="stated part data (optional)")
    p.add_argument("--tap", nargs=2, action="append", required=True, metavar=("NOISE", "TONE"),
                   help="noise at one stage's output and a tone capture there; repeat in chain order")
    p.add_argument("--tone-input-vrms", type=positive_volts, metavar="V",
                   help="tone RMS at the source (default: each tone sidecar's tone_input_vrms)")
    p.add_argument("--gain-db", type=finite_db, help=argparse.SUPPRESS)
    p.add_argument("--rs", type=positive_ohm, metavar="OHM", help="source resistance (default: sidecar)")
    p.add_argument("--temperature-k", type=kelvin, metavar="K", help="resistor temperature (default: sidecar, 290)")
    _sweep_options(p, band_default=(400.0, 20_000.0),
                   band_help="band of the band-mean densities (default 400 20000 Hz)")
    p.set_defaults(run=run_budget)

    p = sub.add_parser("eni", help="amplifier en and in from a source-resistance sweep, NF against Rs",
                       description="Voltage noise en and current noise in (and their correlation with three "
                                   "or more resistances) per one-third-octave band, Ropt and NFmin.")
    p.add_argument("captures", type=_sweep_item, nargs="+", metavar="FILE@RS_OHM",
                   help="captures with the input terminated in RS (0 = shorted); FILE@RS@TONE gives each its "
                        "own tone capture for the gain through that Rs")
    g = p.add_mutually_exclusive_group()
    g.add_argument("--tone", type=Path, metavar="FILE", help="tone capture for the gain (all captures)")
    g.add_argument("--gain-db", type=finite_db, metavar="G", help="stated voltage gain, dB")
    p.add_argument("--tone-input-vrms", type=positive_volts, metavar="V", help="tone RMS at the source")
    p.add_argument("--zin-ohm", type=positive_ohm, metavar="OHM",
                   help="DUT input impedance, when tone levels were taken at the DUT terminals")
    p.add_argument("--temperature-k", type=kelvin, metavar="K", help="resistor temperature for every capture")
    _sweep_options(p, band_default=(20.0, 20_000.0),
                   band_help="band of the one-third-octave rows (default 20 20000 Hz)")
    p.set_defaults(run=run_eni)

    p = sub.add_parser("profile", help="make a known-good profile from results JSON files",
                       description="Limits from the results of one or more known-good units, with a margin "
                                   "(and their spread where several are given).")
    p.add_argument("results", type=Path, nargs="+", metavar="GOOD.json", help="results of 'benchnf analyze --json'")
    p.add_argument("--margin-db", type=non_negative_pct, default=1.0, metavar="M", help="margin in dB (1)")
    p.add_argument("--name", metavar="TEXT", help="the profile's name")
    p.add_argument("-o", "--output", type=Path, required=True, metavar="PROFILE.toml",
                   help="profile to write (never overwritten)")
    _common(p)
    p.set_defaults(run=run_profile)

    p = sub.add_parser("check", help="check one unit's results against a profile (exit 0 pass, 1 fail)",
                       description="Each limit PASS, MARGINAL (inside it by less than the uncertainty) or FAIL, "
                                   "with the margin and a suggestion; exit status 0 pass, 1 fail, 2 bad input.")
    p.add_argument("--profile", type=Path, required=True, metavar="PROFILE.toml")
    p.add_argument("results", type=Path, metavar="RESULTS.json", help="results of 'benchnf analyze --json'")
    p.add_argument("--unit", metavar="SERIAL", help="the unit's name (default: the file name)")
    p.add_argument("--report", type=Path, metavar="DIR", help="write an HTML report and a PNG summary")
    p.add_argument("--json", type=Path, metavar="OUT.json")
    _common(p)
    p.set_defaults(run=run_check)

    p = sub.add_parser("batch", help="check a folder of units in parallel",
                       description="One subfolder per unit (its name the serial): results.json, or captures "
                                   "(terminated, tone, optional floor). Writes an HTML report per unit, "
                                   "summary.csv, junit.xml and appends a history file.")
    p.add_argument("units", type=Path, metavar="UNITS_DIR")
    p.add_argument("--profile", type=Path, required=True, metavar="PROFILE.toml")
    p.add_argument("-o", "--output", type=Path, default=Path("benchnf-check"), metavar="DIR",
                   help="folder for the reports (default ./benchnf-check)")
    p.add_argument("--floor", type=Path, metavar="FILE", help="analyzer floor for units without their own")
    p.add_argument("--tone-input-vrms", type=positive_volts, metavar="V",
                   help="tone level at the source, when the tone sidecars do not state it")
    p.add_argument("--history", type=Path, metavar="FILE", help="history CSV to append to (default DIR/history.csv)")
    p.add_argument("--workers", type=int, metavar="N", help="parallel processes (default: the cores)")
    _calibration_options(p)
    _common(p)
    p.set_defaults(run=run_batch)

    p = sub.add_parser("devices", help="list audio devices (name, host API, channels, native rate)")
    _common(p)
    p.set_defaults(run=run_devices)

    def device_options(q: argparse.ArgumentParser) -> None:
        q.add_argument("--device", metavar="NAME", help="device name or part of it (default: the system's)")
        q.add_argument("--host-api", metavar="API", help="host API, when names repeat (ALSA, WASAPI, Core Audio...)")
        q.add_argument("--rate", type=positive_hz, default=48_000.0, metavar="HZ", help="sample rate (48000)")

    p = sub.add_parser("record", help="record a capture to disk without losing a sample",
                       description="Streams to a WAV (RF64 past 2 GiB) whose header is kept valid, checks "
                                   "overflows and the clock, and writes a sidecar; never overwrites.")
    device_options(p)
    p.add_argument("--seconds", type=positive_hz, required=True, metavar="S")
    p.add_argument("--channels", type=int, default=1, metavar="N")
    p.add_argument("--condition", required=True, choices=["floor", "shorted", "terminated", "tone", "hot", "cold",
                                                           "tap", "reference"])
    p.add_argument("--rs", type=non_negative_hz, metavar="OHM", help="source resistance, for the sidecar")
    p.add_argument("--temperature-k", type=kelvin, metavar="K", help="resistor temperature, for the sidecar")
    _calibration_options(p)
    p.add_argument("-o", "--output", type=Path, required=True, metavar="FILE.wav")
    _common(p)
    p.set_defaults(run=run_record)

    p = sub.add_parser("playrec", help="play a tone, multitone, sweep or noise and record at once, aligned")
    device_options(p)
    p.add_argument("--signal", choices=["tone", "multitone", "sweep", "noise"], default="tone")
    p.add_argument("--tone-hz", type=positive_hz, default=1000.0, metavar="F")
    p.add_argument("--level-dbfs", type=finite_db, default=-20.0, metavar="L", help="RMS level, dBFS (AES17)")
    p.add_argument("--seconds", type=positive_hz, default=3.0, metavar="S")
    p.add_argument("--channels", type=int, default=2, metavar="N",
                   help="input channels recorded (2: DUT input and output)")
    p.add_argument("--play-channels", type=int, default=2, metavar="N")
    p.add_argument("--reference-channel", type=channel_index, default=0, metavar="N",
                   help="recorded channel used to find the latency (default 0)")
    p.add_argument("-o", "--output", type=Path, required=True, metavar="FILE.wav")
    _common(p)
    p.set_defaults(run=run_playrec)

    p = sub.add_parser("measure", help="run a guided measurement plan (TOML), interactively or scripted")
    p.add_argument("plan", type=Path, metavar="PLAN.toml")
    p.add_argument("--yes", action="store_true", help="no questions: record every step once (scripted setups)")
    p.add_argument("--device", metavar="NAME", help="override the plan's device")
    p.add_argument("--out-dir", type=Path, metavar="DIR", help="folder for the captures (a new one if taken)")
    _common(p)
    p.set_defaults(run=run_measure)

    p = sub.add_parser("live", help="live spectrum and integrated noise while adjusting the bench")
    device_options(p)
    p.add_argument("--band", type=non_negative_hz, nargs=2, default=[20.0, 20_000.0], metavar=("LO", "HI"))
    p.add_argument("--updates-per-s", type=positive_hz, default=5.0, metavar="N")
    p.add_argument("--seconds", type=positive_hz, metavar="S", help="stop after S seconds (default: Ctrl-C)")
    p.add_argument("--window", action="store_true", help="also show a matplotlib window")
    _calibration_options(p)
    _common(p)
    p.set_defaults(run=run_live_cmd)

    p = sub.add_parser("calibrate-output", help="volts per full scale of an output, through a calibrated input",
                       description="Plays a tone on the output into the calibrated input (loop the output to the "
                                   "input, through an attenuator if needed) and measures it.")
    p.add_argument("--calibration", type=Path, required=True, metavar="CAL.json", help="the input's calibration")
    p.add_argument("--device", metavar="NAME")
    p.add_argument("--host-api", metavar="API")
    p.add_argument("--tone-hz", type=positive_hz, default=400.0, metavar="F")
    p.add_argument("--level-dbfs", type=finite_db, default=-10.0, metavar="L")
    p.add_argument("--seconds", type=positive_hz, default=2.0, metavar="S")
    p.add_argument("-o", "--output", type=Path, required=True, metavar="OUT_CAL.json")
    _common(p)
    p.set_defaults(run=run_calibrate_output)

    p = sub.add_parser("recover", help="rescue the samples of a WAV left with a stale header by a crash")
    p.add_argument("damaged", type=Path, metavar="DAMAGED.wav")
    p.add_argument("-o", "--output", type=Path, required=True, metavar="NEW.wav")
    _common(p)
    p.set_defaults(run=run_recover)

    p = sub.add_parser("demo", help="analyse the shipped demo captures",
                       description="Calibrate and analyse the demo captures (invented data) and "
                                   "write a results folder.")
    p.add_argument("-o", "--output", type=Path, default=Path("benchnf-results"), metavar="DIR",
                   help="results folder (default ./benchnf-results; a new numbered one if taken)")
    _common(p)
    p.set_defaults(run=run_demo)
    return parser


def _one_blas_thread() -> None:
    """benchnf's linear algebra is tiny (batched FFTs do the work, one core each); multi-threaded BLAS
    only spins its idle threads (measured: 50 % of a core in the live view).  Set before numpy loads;
    the user's own setting wins."""
    import os
    for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
        os.environ.setdefault(var, "1")


def main(argv: Sequence[str] | None = None) -> int:
    if "numpy" not in sys.modules:
        _one_blas_thread()
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.run(args))
    except KeyboardInterrupt:
        print("benchnf: interrupted", file=sys.stderr)
        return ExitStatus.INTERRUPTED
    except BenchError as err:
        if args.traceback:
            raise
        print(f"benchnf: error: {err}", file=sys.stderr)
        return (ExitStatus.MISSING_DEPENDENCY if isinstance(err, (MissingDependencyError, DeviceNotFoundError))
                else ExitStatus.BAD_INPUT)
