"""What the commands share: option groups, opening inputs the same way, progress, output of results.

Nothing here computes a figure; it resolves what the user typed and hands it to the library.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from ..write import Writer
from ._types import (
    channel_index,
    existing_folder,
    non_negative_hz,
    positive_hz,
    positive_volts,
    segment_samples,
)

# Attributes of a parsed command line that name files benchnf writes, or a folder it only names files
# relative to (everything else that is a path is an input, protected by the writer).
OUTPUT_OPTIONS = ("json", "plot", "output", "report", "history", "out_dir", "spectra", "relative_to")


def input_paths(args: argparse.Namespace) -> list[Path]:
    """Every path the command line names as an input (nested in lists and tuples too)."""
    found: list[Path] = []

    def walk(value: Any) -> None:
        if isinstance(value, Path):
            found.append(value)
        elif isinstance(value, (list, tuple)):
            for v in value:
                walk(v)

    for key, value in vars(args).items():
        if key not in OUTPUT_OPTIONS:
            walk(value)
    for folder in [p for p in found if p.is_dir()]:  # a folder of units: its files are inputs too
        found += [q for q in folder.glob("*/*") if q.is_file()]
    return found


@contextmanager
def progress(total_frames: int, *, quiet: bool, label: str) -> Iterator[Callable[[int], None] | None]:
    """A tqdm bar on stderr, only when stderr is a terminal and not --quiet."""
    if quiet or not sys.stderr.isatty():
        yield None
        return
    from tqdm import tqdm
    bar = tqdm(total=total_frames or None, unit="frame", unit_scale=True, desc=label, leave=False,
               file=sys.stderr)
    try:
        yield bar.update
    finally:
        bar.close()










def verdict_table(rows: list[tuple[str, str, str]]) -> str:
    return "\n".join(f"  {a:24s} {b:10s} {c}" for a, b, c in rows)


def say_rate_note(device: str | None, host_api: str | None, rate: float, *, warn: bool = True) -> None:
    from ..acquire.devices import find_device, rate_note
    dev = find_device(device, host_api=host_api, kind="input")
    note = rate_note(dev, rate)
    print(f"recording from {dev.describe()}", file=sys.stderr)
    if note and warn:
        print(f"benchnf: warning: {note}", file=sys.stderr)


def decision_rule_option(p: Any) -> None:
    from ..check.decision import DECISION_RULES
    p.add_argument("--decision-rule", choices=list(DECISION_RULES), metavar="RULE",
                   help="how U enters a verdict: simple (guard band 0), guarded (guard band U) or zones "
                        "(PASS/MARGINAL/FAIL, ISO 14253-1); default: the profile's (docs/check.md)")


def common_options(p: Any) -> None:
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.add_argument("--overwrite", action="store_true",
                   help="replace output files that exist already (never an input; default: refuse)")
    p.add_argument("--traceback", action="store_true", help="show the full traceback on errors")


def calibration_options(p: argparse.ArgumentParser) -> None:
    g = p.add_mutually_exclusive_group()
    g.add_argument("--volts-per-fs", type=positive_volts, metavar="V",
                   help="volts that a sample value of 1.0 represents at the analyzer input")
    g.add_argument("--calibration", type=Path, metavar="CAL.json",
                   help="a calibration file written by 'benchnf calibrate'")


def check_outputs(args: argparse.Namespace, writer: Writer) -> None:
    """Refuse a --json that may not be written before any work is done (it is written at the end)."""
    if getattr(args, "json", None):
        writer.target(args.json)


def write_outputs(args: argparse.Namespace, writer: Writer, result: Any,
                  figures: Callable[[], list[tuple[str, Any]]] | None = None) -> None:
    """--json (the result with its provenance) and --plot, the same way for every command."""
    if getattr(args, "json", None):
        from ..measure.provenance import provenance
        root = getattr(args, "relative_to", None) or Path(args.json).parent
        made = provenance(input_paths(args), root=root, station=getattr(args, "station", None),
                          operator=getattr(args, "operator", None))
        writer.json(args.json, result.with_provenance(made).to_dict())
        print(f"\nJSON written to {args.json}")
    if getattr(args, "plot", None) and figures is not None:
        folder = writer.folder(args.plot)
        names = [writer.figure(folder / name, fig).name for name, fig in figures()]
        print(f"plots written to {Path(args.plot)}/: " + ", ".join(names))


def sweep_options(p: argparse.ArgumentParser, *, band_default: tuple[float, float], band_help: str) -> None:
    """Options shared by the commands that refer several captures to the input (budget, eni)."""
    p.add_argument("--floor", type=Path, metavar="FILE", help="analyzer floor")
    p.add_argument("--band", type=non_negative_hz, nargs=2, default=list(band_default), metavar=("LO", "HI"),
                   help=band_help)
    p.add_argument("--segment", type=segment_samples, metavar="N")
    p.add_argument("--channel", type=channel_index, metavar="N")
    calibration_options(p)


def output_options(p: argparse.ArgumentParser) -> None:
    """What every measurement writes and prints: --json, --plot, --explain, --quiet, --overwrite."""
    out = p.add_argument_group("output")
    out.add_argument("--json", type=Path, metavar="OUT.json", help="write the results as JSON")
    relative_to_option(out)
    out.add_argument("--plot", type=Path, metavar="DIR", help="write PNG plots into DIR")
    out.add_argument("--explain", action="store_true", help="list every uncertainty contribution")
    common_options(out)


def relative_to_option(p: Any) -> None:
    p.add_argument("--relative-to", type=existing_folder, metavar="DIR",
                   help="name the input files in the results' provenance relative to DIR (default: the folder "
                        "of the results file)")


def device_options(q: argparse.ArgumentParser) -> None:
    q.add_argument("--device", metavar="NAME", help="device name or part of it (default: the system's)")
    q.add_argument("--host-api", metavar="API", help="host API, when names repeat (ALSA, WASAPI, Core Audio...)")
    q.add_argument("--rate", type=positive_hz, default=48_000.0, metavar="HZ", help="sample rate (48000)")


def records_options(p: argparse.ArgumentParser) -> None:
    """Where checks are recorded, and by whom (scripts rely on these names)."""
    p.add_argument("--records", metavar="URL",
                   help="records database: a file path or sqlite:///FILE, or postgresql://USER@HOST/DB "
                        "(default: the BENCHNF_RECORDS environment variable; none: nothing is recorded)")
    p.add_argument("--station", metavar="NAME", help="this test station (default BENCHNF_STATION, else the host name)")
    p.add_argument("--operator", metavar="NAME", help="who checks (default BENCHNF_OPERATOR)")
    station_file_option(p)


def station_file_option(p: argparse.ArgumentParser) -> None:
    p.add_argument("--station-file", type=Path, metavar="STATION.toml",
                   help="this station's name, operator, records URL, calibration and relative_to folder, for what "
                        "the command line "
                        "and the BENCHNF_* variables leave unset (default: BENCHNF_STATION_FILE)")


def stated_station(args: argparse.Namespace) -> Any:
    """The station file named by --station-file, else BENCHNF_STATION_FILE, read and checked (a StationFile;
    an empty one where none is named). The file, when named, becomes one of the command's inputs."""
    import os

    from ..io.station_file import StationFile, read_station_file
    named = getattr(args, "station_file", None) or os.environ.get("BENCHNF_STATION_FILE") or None
    args.station_file = Path(named) if named else None  # an input: its hash goes into the provenance
    return read_station_file(named) if named else StationFile(path=Path())


def settle_station(args: argparse.Namespace) -> None:
    """Fill what check's or batch's command line left unset: first from BENCHNF_RECORDS, BENCHNF_STATION,
    BENCHNF_OPERATOR, then from the station file. Its calibration is used only by a command that takes one
    and was given neither --calibration nor --volts-per-fs."""
    import os
    stated = stated_station(args)
    for key, env in (("records", "BENCHNF_RECORDS"), ("station", "BENCHNF_STATION"),
                     ("operator", "BENCHNF_OPERATOR")):
        setattr(args, key, getattr(args, key, None) or os.environ.get(env) or getattr(stated, key))
    if hasattr(args, "calibration") and args.calibration is None and getattr(args, "volts_per_fs", None) is None:
        args.calibration = stated.calibration
    if hasattr(args, "relative_to") and args.relative_to is None:
        args.relative_to = stated.relative_to


def records_url_of(args: argparse.Namespace) -> str | None:
    """The records database: --records, else BENCHNF_RECORDS, else the station file's."""
    import os
    return getattr(args, "records", None) or os.environ.get("BENCHNF_RECORDS") or stated_station(args).records


def drive_options(p: argparse.ArgumentParser) -> None:
    """The options of switching the noise source by a keying tone on a sound-card output (acquire.source_drive)."""
    g = p.add_argument_group("the noise source switched by benchnf (a keying tone on a sound-card output)")
    g.add_argument("--drive-source", metavar="DEVICE[:N]",
                   help="key the noise source from this sound-card output (channel N from 1; 'default:2' the "
                        "default output's second channel): a tone while hot, silence while cold (docs/yfactor.md)")
    g.add_argument("--drive-state-s", type=float, default=1.0, metavar="S", help="each keyed state's length (1 s)")
    g.add_argument("--drive-tone-hz", type=float, default=1000.0, metavar="F", help="the keying tone (1000 Hz)")
    g.add_argument("--drive-level-dbfs", type=float, default=-6.0, metavar="DB", help="its peak level (-6 dBFS)")


def drive_from_args(args: argparse.Namespace) -> Any:
    """The keying settings, or None without --drive-source."""
    if args.drive_source is None:
        return None
    from ..acquire.source_drive import DriveSettings
    return DriveSettings.at(args.drive_source, state_s=args.drive_state_s, tone_hz=args.drive_tone_hz,
                            level_dbfs=args.drive_level_dbfs)
