"""Run the main job on the shipped demo captures (invented data, see captures_demo/README.md)."""

from __future__ import annotations

import json
import warnings
from pathlib import Path

from .errors import BenchError, BenchWarning

__all__ = ["demo_folder", "run_demo", "fresh_folder"]


def demo_folder() -> Path:
    """The captures_demo/ folder of the source tree."""
    folder = Path(__file__).resolve().parent.parent / "captures_demo"
    if not (folder / "terminated.flac").is_file():
        raise BenchError(f"the demo captures are not at {folder}: run from a benchnf source "
                         f"checkout, or regenerate them with 'python captures_demo/generate.py'")
    return folder


def fresh_folder(wanted: Path) -> Path:
    """`wanted` if it does not exist, else ``wanted-2``, ``wanted-3``, ...: never reuse one."""
    candidate, n = wanted, 1
    while candidate.exists():
        n += 1
        candidate = wanted.with_name(f"{wanted.name}-{n}")
    candidate.mkdir(parents=True)
    return candidate


def run_demo(*, output: Path = Path("benchnf-results"), quiet: bool = False) -> Path:
    """Calibrate from the demo reference tone, analyse, write JSON, summary and plots.

    Returns the results folder.
    """
    from .analysis import GainSetup, analyze_gain_method
    from .calibration import apply_calibration, calibrate_from_tone
    from .dsp.weighting import Band
    from .io import open_capture
    from .report.json_out import write_json
    from .report.plots import save_plots
    from .report.text import format_summary

    src = demo_folder()
    ref = open_capture(src / "reference.flac", condition="reference")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", BenchWarning)
        cal = calibrate_from_tone(ref, vrms=float(ref.metadata["meter_vrms"]))

        def cap(name: str, condition: str):
            return apply_calibration(open_capture(src / f"{name}.flac", condition=condition), cal)

        terminated = cap("terminated", "terminated")
        tone = cap("tone", "tone")
        result = analyze_gain_method(
            terminated=terminated, floor=cap("floor", "floor"), shorted=cap("shorted", "shorted"),
            gain=GainSetup(tone=tone, tone_input_vrms=float(tone.metadata["tone_input_vrms"]),
                           response=open_capture(src / "response.flac", channel=1)),
            rs_ohm=float(terminated.metadata["rs_ohm"]),
            temperature_k=float(terminated.metadata["temperature_k"]),
            band=Band(20.0, 20_000.0), weighting="none")
    out = fresh_folder(Path(output))
    cal.save(out / "calibration.json")
    write_json(result.to_dict(), out / "results.json")
    summary = format_summary(result)
    (out / "summary.txt").write_text(summary, encoding="utf-8")
    save_plots(result, out)
    truth = json.loads((src / "ground_truth.json").read_text())
    lines = [
        "benchnf demo: a three-stage moving-coil head amplifier (INVENTED DATA), 20 ohm source",
        f"calibration from {ref.path.name}: {cal.volts_per_fs:.6g} V per full scale",
        "",
        summary,
        "Against the model the demo captures were synthesised from (captures_demo/ground_truth.json):",
        f"  gain at 1 kHz        measured {result.gain_db:7.3f} dB   model {truth['gain_db_at_1khz']:7.3f} dB",
        f"  input noise, 1 kHz   measured {result.input_density_at_1khz_v_per_rthz * 1e9:7.3f} nV/rtHz"
        f"   model {truth['input_density_at_1khz_v_per_rthz'] * 1e9:7.3f} nV/rtHz",
        f"  noise figure, 1 kHz  measured {result.nf_at_1khz_db:7.3f} dB   model {truth['nf_at_1khz_db']:7.3f} dB",
        f"  noise figure, band   measured {result.noise_figure_db:7.3f} dB   model {truth['noise_figure_db']:7.3f} dB",
        f"  EIN, hum excluded    measured {result.ein_dbu:7.2f} dBu  model "
        f"{truth['ein_dbu_unweighted_excluding_hum']:7.2f} dBu",
        f"  1/f corner (shorted) measured {result.flicker_corner_hz or float('nan'):7.1f} Hz   model "
        f"{truth['voltage_noise_corner_hz']:7.1f} Hz",
        "",
    ]
    for w in caught:
        if issubclass(w.category, BenchWarning):
            lines.append(f"warning: {w.message}")
    lines.append(f"Results written to {out.resolve()}/ (results.json, summary.txt, calibration.json, "
                 f"output_spectrum.png, input_density.png, noise_figure.png)")
    print("\n".join(lines))
    return out
