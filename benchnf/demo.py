"""Run the main job on the shipped demo captures (invented data, see captures_demo/README.md).

The demo iterates the registered measurements (:mod:`benchnf.registry`): for each, the scenarios of the
demo's head amplifier that use it (:data:`SCENARIOS`) are run through the measurement's request and
presented by its one view, as the command line would, and written with their provenance. Then three
repaired units are checked against the known-good profile, as ``benchnf batch`` checks them.
"""

from __future__ import annotations

import json
import warnings
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .errors import BenchError, BenchWarning
from .write import Writer

__all__ = ["demo_folder", "run_demo", "SCENARIOS"]


def demo_folder() -> Path:
    """The demo captures, shipped inside the package (``benchnf/captures_demo``), installed or not."""
    folder = Path(__file__).resolve().parent / "captures_demo"
    if not (folder / "terminated.flac").is_file():
        raise BenchError(f"the demo captures are not at {folder}: this installation is incomplete; "
                         f"reinstall benchnf with pip")
    return folder


@dataclass(frozen=True)
class Scenario:
    """One demo run of a measurement: its file stem, what it reads, the request, and how it is told."""

    stem: str
    text_name: str
    inputs: Callable[[Path], list[Path]]
    request: Callable[[Path, Any], Any]
    tell: Callable[[Any, Any, dict[str, Any]], list[str]]


def _gain_request(src: Path, cal: Any) -> Any:
    from .measure.requests import GainMethodRequest
    return GainMethodRequest(terminated=(src / "terminated.flac",), floor=src / "floor.flac",
                             shorted=src / "shorted.flac", tone=src / "tone.flac", response=src / "response.flac",
                             calibration=cal, band_hz=(20.0, 20_000.0), weighting="none")


def _tell_gain(result: Any, view: Any, truth: dict[str, Any]) -> list[str]:
    from .report.render_text import render_text
    return [render_text(view),
            "Against the model the demo captures were synthesised from (captures_demo/ground_truth.json):",
            f"  gain at 1 kHz        measured {result.gain_db:7.3f} dB   model {truth['gain_db_at_1khz']:7.3f} dB",
            f"  input noise, 1 kHz   measured {result.input_density_at_1khz_v_per_rthz * 1e9:7.3f} nV/rtHz"
            f"   model {truth['input_density_at_1khz_v_per_rthz'] * 1e9:7.3f} nV/rtHz",
            f"  noise figure, 1 kHz  measured {result.nf_at_1khz_db:7.3f} dB   model {truth['nf_at_1khz_db']:7.3f} dB",
            f"  noise figure, band   measured {result.noise_figure_db:7.3f} dB   model {truth['noise_figure_db']:7.3f} dB",
            f"  EIN, hum excluded    measured {result.ein_dbu:7.2f} dBu  model "
            f"{truth['ein_dbu_unweighted_excluding_hum']:7.2f} dBu",
            f"  1/f corner (shorted) measured {result.flicker_corner_hz or float('nan'):7.1f} Hz   model "
            f"{truth['voltage_noise_corner_hz']:7.1f} Hz", ""]


def _budget_request(src: Path, cal: Any) -> Any:
    from .measure.stage_requests import BudgetRequest, CaptureOptions
    return BudgetRequest(taps=((src / "tap1.flac", src / "tap1_tone.flac"), (src / "tap2.flac", src / "tap2_tone.flac"),
                               (src / "terminated.flac", src / "tone.flac")),
                         chain=src / "head_amp_chain.toml", floor=src / "floor.flac", options=CaptureOptions(calibration=cal))


def _eni_request(src: Path, cal: Any) -> Any:
    from .measure.stage_requests import CaptureOptions, SweepRequest
    return SweepRequest(captures=tuple((src / f"{name}.flac", rs, None) for name, rs in
                                       (("shorted", 0.0), ("terminated", 20.0), ("rs_100", 100.0), ("rs_1000", 1000.0))),
                        tone=src / "tone.flac", floor=src / "floor.flac", options=CaptureOptions(calibration=cal))


def _vhf_request(src: Path, cal: Any) -> Any:
    from .measure.yfactor_request import YFactorRequest
    return YFactorRequest(hot=(src / "vhf_hot.sigmf-meta",), cold=(src / "vhf_cold.sigmf-meta",),
                          cal_hot=src / "vhf_cal_hot.sigmf-meta", cal_cold=src / "vhf_cal_cold.sigmf-meta",
                          enr_table=src / "noise_source_enr.toml", rows=8)


def _bath_request(src: Path, cal: Any) -> Any:
    from .measure.yfactor_request import YFactorRequest
    a = json.loads((src / "ground_truth.json").read_text())["yfactor_audio"]
    return YFactorRequest(hot=(src / "bath_hot.flac",), cold=(src / "bath_cold.flac",), floor=src / "bath_floor.flac",
                          t_hot_k=a["t_hot_k"], t_cold_k=a["t_cold_k"], rows=6)


def _bias_request(src: Path, cal: Any) -> Any:
    from .measure.bias import BiasRequest
    pair = (("ic_a", 1.5e-3), ("beta", 300.0), ("rbb_ohm", 6.0), ("re_ohm", 1.0))
    return BiasRequest("bjt", 20.0, pair, temperature_k=296.15, count=2, optimise=True, current_range_a=(1e-4, 3e-2))


def _tell(what: str, model: Callable[[dict[str, Any]], str] | None = None) -> Callable[..., list[str]]:
    def tell(_result: Any, view: Any, truth: dict[str, Any]) -> list[str]:
        return [f"  {what}: {view.summary}" + (f"; model {model(truth)}" if model else "")]
    return tell


def _files(*names: str) -> Callable[[Path], list[Path]]:
    return lambda src: [src / n for n in names]


_SIGMF = tuple(f"vhf_{n}.sigmf-{h}" for n in ("hot", "cold", "cal_hot", "cal_cold") for h in ("meta", "data"))

#: The demo's scenarios by measurement kind (INVENTED DATA: a three-stage moving-coil head amplifier, a VHF
#: preamplifier with a noise diode, an audio preamplifier between two resistor baths).
SCENARIOS: dict[str, tuple[Scenario, ...]] = {
    "analysis": (Scenario("results", "summary.txt", _files("reference.flac", "terminated.flac", "floor.flac",
                                                            "shorted.flac", "tone.flac", "response.flac"),
                          _gain_request, _tell_gain),),
    "budget": (Scenario("budget", "budget.txt", _files("tap1.flac", "tap1_tone.flac", "tap2.flac", "tap2_tone.flac",
                                                       "terminated.flac", "tone.flac", "floor.flac",
                                                       "head_amp_chain.toml", "reference.flac"),
                        _budget_request, _tell("stage budget of the head amplifier")),),
    "eni": (Scenario("eni", "eni.txt", _files("shorted.flac", "terminated.flac", "rs_100.flac", "rs_1000.flac",
                                              "tone.flac", "floor.flac", "reference.flac"),
                     _eni_request, _tell("en and in from four source resistances")),),
    "yfactor": (Scenario("yfactor_vhf", "yfactor_vhf.txt", _files(*_SIGMF, "noise_source_enr.toml"), _vhf_request,
                         _tell("VHF preamp, SDR and noise diode",
                               lambda t: f"NF {t['yfactor_vhf']['dut_nf_db']:.3f} dB, gain "
                                         f"{t['yfactor_vhf']['dut_gain_db']:.2f} dB")),
                Scenario("yfactor_bath", "yfactor_bath.txt", _files("bath_hot.flac", "bath_cold.flac", "bath_floor.flac"),
                         _bath_request, _tell("audio preamp, 1 kohm at 100 C / 0 C",
                                              lambda t: f"NF {t['yfactor_audio']['dut_noise_figure_db']:.3f} dB"))),
    "bias": (Scenario("bias", "bias.txt", _files(), _bias_request,
                      _tell("the head amplifier's input pair (two transistors) for its 20 ohm source")),),
}


def _present(entry: Any, result: Any, stem: str) -> Any:
    present = entry.part("present")
    return present(result, file_stem=stem) if entry.name == "yfactor" else present(result)


def _run_scenarios(src: Path, out: Path, cal: Any, truth: dict[str, Any], writer: Writer) -> list[str]:
    """Every registered measurement's demo scenarios, run, presented and written as the command line would."""
    from . import registry
    from .measure.provenance import provenance
    from .report.render_png import figures
    from .report.render_text import render_text
    lines: list[str] = []
    for entry in registry.measurements():
        for sc in SCENARIOS.get(entry.name, ()):
            result = registry.run_measurement(entry, sc.request(src, cal))
            result = result.with_provenance(provenance(sc.inputs(src), root=out))
            view = _present(entry, result, sc.stem)
            writer.json(out / f"{sc.stem}.json", result.to_dict())
            writer.text(out / sc.text_name, render_text(view))
            for name, fig in figures(view):
                writer.figure(out / name, fig)
            if entry.name != "analysis" and not any(x.startswith("Where the noise") for x in lines):
                lines.append("Where the noise comes from, and Y-factor demos (INVENTED DATA; full text in the .txt "
                             "files):")
            lines += sc.tell(result, view, truth)
    return lines + [""]


def _check_demo(src: Path, out: Path, writer: Writer, *, ref_cal_path: Path) -> list[str]:
    """Three repaired units against the known-good profile: verdicts, reports, summary and JUnit XML."""
    from .check.batch import UnitSettings, check_batch
    from .check.profile import load_profile
    from .report.batch_files import HISTORY_HEADER, history_lines, junit_xml, summary_csv
    from .report.html import unit_report_html
    profile = load_profile(src / "known_good_profile.toml")
    folder = writer.folder(out / "check")
    outcomes = check_batch(src / "units", str(src / "known_good_profile.toml"),
                           settings=UnitSettings(calibration=ref_cal_path, floor=src / "floor.flac"))
    lines = [f"Known-good check of {len(outcomes)} repaired units (INVENTED DATA; reports in check/):"]
    for o in outcomes:
        writer.text(folder / f"{o.serial}.html", unit_report_html(
            serial=o.serial, verdict=o.verdict, check=o.check, results=o.results, profile=profile, error=o.error))
        failed = [v for v in (o.check.limits if o.check else ()) if v.verdict != "PASS"]
        worst = min((v for v in failed if v.hint), key=lambda v: v.margin if v.margin is not None else -1e9,
                    default=None)
        hint = worst.hint if worst else ""
        lines.append(f"  {o.serial}  {o.verdict:8s} " + (", ".join(v.name for v in failed) or "all limits passed")
                     + (f"\n              suggestion: {hint}" if hint else ""))
    writer.text(folder / "summary.csv", summary_csv(outcomes))
    writer.text(folder / "junit.xml", junit_xml(outcomes, profile=profile.name))
    writer.append_lines(folder / "history.csv", HISTORY_HEADER, history_lines(outcomes, profile=profile.name))
    return lines + [""]


def run_demo(*, output: Path = Path("benchnf-results"), quiet: bool = False, writer: Writer | None = None) -> Path:
    """Calibrate from the demo reference tone, run every registered measurement's demo scenarios, check three
    repaired units, and write JSON, text, plots and reports. Returns the results folder."""
    from .calibration import calibrate_from_tone
    from .io import open_capture
    src = demo_folder()
    writer = writer or Writer()
    ref = open_capture(src / "reference.flac", condition="reference")
    truth = json.loads((src / "ground_truth.json").read_text())
    out = writer.fresh_folder(Path(output))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", BenchWarning)
        cal = calibrate_from_tone(ref, vrms=float(ref.metadata["meter_vrms"]))
        writer.json(out / "calibration.json", cal.to_dict())
        lines = ["benchnf demo: a three-stage moving-coil head amplifier (INVENTED DATA), 20 ohm source",
                 f"calibration from {ref.label}: {cal.volts_per_fs:.6g} V per full scale", ""]
        lines += _run_scenarios(src, out, cal, truth, writer)
        lines += _check_demo(src, out, writer, ref_cal_path=out / "calibration.json")
    for w in caught:
        if issubclass(w.category, BenchWarning):
            lines.append(f"warning: {w.message}")
    written = sorted(p.name + ("/" if p.is_dir() else "") for p in out.iterdir())
    lines.append(f"Results written to {out.resolve()}/ ({', '.join(written)})")
    from .quantity import ascii_text
    print(ascii_text("\n".join(lines)))
    return out
