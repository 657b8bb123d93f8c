"""Run the main job on the shipped demo captures (invented data, see captures_demo/README.md)."""

from __future__ import annotations

import json
import warnings
from pathlib import Path

from .errors import BenchError, BenchWarning
from .write import Writer

__all__ = ["demo_folder", "run_demo"]


def demo_folder() -> Path:
    """The demo captures, shipped inside the package (``benchnf/captures_demo``), installed or not."""
    folder = Path(__file__).resolve().parent / "captures_demo"
    if not (folder / "terminated.flac").is_file():
        raise BenchError(f"the demo captures are not at {folder}: this installation is incomplete; "
                         f"reinstall benchnf with pip")
    return folder


def run_demo(*, output: Path = Path("benchnf-results"), quiet: bool = False, writer: Writer | None = None) -> Path:
    """Calibrate from the demo reference tone, analyse, write JSON, summary and plots.

    Returns the results folder.
    """
    from .calibration import calibrate_from_tone
    from .io import open_capture
    from .measure import analyze_gain_method
    from .measure.requests import GainMethodRequest, resolve_gain_method
    from .report.plots import analysis_figures
    from .report.text import format_summary

    src = demo_folder()
    writer = writer or Writer()
    ref = open_capture(src / "reference.flac", condition="reference")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", BenchWarning)
        cal = calibrate_from_tone(ref, vrms=float(ref.metadata["meter_vrms"]))
        inputs = resolve_gain_method(GainMethodRequest(
            terminated=(src / "terminated.flac",), floor=src / "floor.flac", shorted=src / "shorted.flac",
            tone=src / "tone.flac", response=src / "response.flac", calibration=cal, band_hz=(20.0, 20_000.0),
            weighting="none"))
        result = analyze_gain_method(**inputs)
    out = writer.fresh_folder(Path(output))
    writer.json(out / "calibration.json", cal.to_dict())
    from .measure.provenance import provenance
    read = [src / f"{n}.flac" for n in ("reference", "terminated", "floor", "shorted", "tone", "response")]
    writer.json(out / "results.json", {**result.to_dict(), "provenance": provenance(read, root=out)})
    summary = format_summary(result)
    writer.text(out / "summary.txt", summary)
    _figures(writer, out, analysis_figures(result))
    truth = json.loads((src / "ground_truth.json").read_text())
    lines = [
        "benchnf demo: a three-stage moving-coil head amplifier (INVENTED DATA), 20 ohm source",
        f"calibration from {ref.label}: {cal.volts_per_fs:.6g} V per full scale",
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
    lines += _stage_demos(src, out, cal, writer)
    lines += _yfactor_demos(src, out, truth, writer)
    lines += _check_demo(src, out, writer, ref_cal_path=out / "calibration.json")
    for w in caught:
        if issubclass(w.category, BenchWarning):
            lines.append(f"warning: {w.message}")
    lines.append(f"Results written to {out.resolve()}/ (results.json, summary.txt, calibration.json, "
                 f"output_spectrum.png, input_density.png, noise_figure.png, budget.json, stage_budget.png, "
                 f"eni.json, en_in.png, nf_vs_rs.png, yfactor_vhf.json, yfactor_vhf.png, yfactor_bath.json, "
                 f"yfactor_bath.png, check/)")
    print("\n".join(lines))
    return out


def _figures(writer: Writer, out: Path, figures: list) -> None:
    for name, fig in figures:
        writer.figure(out / name, fig)


def _stage_demos(src: Path, out: Path, cal, writer: Writer) -> list[str]:
    """The head amplifier's measured stage budget against its part data, and en/in from an Rs sweep."""
    from .measure.stage_requests import BudgetRequest, CaptureOptions, SweepRequest, run_budget, run_en_in
    from .report.plots import budget_figures, eni_figures
    from .report.stages_text import format_budget, format_eni
    options = CaptureOptions(calibration=cal)
    budget = run_budget(BudgetRequest(
        taps=((src / "tap1.flac", src / "tap1_tone.flac"), (src / "tap2.flac", src / "tap2_tone.flac"),
              (src / "terminated.flac", src / "tone.flac")),
        chain=src / "head_amp_chain.toml", floor=src / "floor.flac", options=options))
    eni = run_en_in(SweepRequest(
        captures=tuple((src / f"{name}.flac", rs, None) for name, rs in (("shorted", 0.0), ("terminated", 20.0),
                                                                          ("rs_100", 100.0), ("rs_1000", 1000.0))),
        tone=src / "tone.flac", floor=src / "floor.flac", options=options))
    from .measure.provenance import provenance
    taps = [src / f"{n}.flac" for n in ("tap1", "tap1_tone", "tap2", "tap2_tone", "terminated", "tone", "floor")]
    writer.json(out / "budget.json", {**budget.to_dict(), "provenance": provenance(
        [*taps, src / "head_amp_chain.toml", src / "reference.flac"], root=out)})
    sweep = [src / f"{n}.flac" for n in ("shorted", "terminated", "rs_100", "rs_1000", "tone", "floor", "reference")]
    writer.json(out / "eni.json", {**eni.to_dict(), "provenance": provenance(sweep, root=out)})
    _figures(writer, out, budget_figures(budget) + eni_figures(eni))
    return ["", format_budget(budget), format_eni(eni)]


def _check_demo(src: Path, out: Path, writer: Writer, *, ref_cal_path: Path) -> list[str]:
    """Three repaired units against the known-good profile: verdicts, reports, summary and JUnit XML."""
    from .check.batch import (
        HISTORY_HEADER,
        check_batch,
        history_lines,
        junit_xml,
        summary_csv,
    )
    from .check.profile import load_profile
    from .report.html import unit_report_html
    profile = load_profile(src / "known_good_profile.toml")
    folder = writer.folder(out / "check")
    outcomes = check_batch(src / "units", str(src / "known_good_profile.toml"),
                           settings={"calibration": str(ref_cal_path), "floor": str(src / "floor.flac")})
    lines = [f"Known-good check of {len(outcomes)} repaired units (INVENTED DATA; reports in check/):"]
    for o in outcomes:
        writer.text(folder / f"{o.serial}.html", unit_report_html(
            serial=o.serial, verdict=o.verdict, check=o.check, results=o.results, profile=profile, error=o.error))
        failed = [v for v in (o.check or {}).get("limits", []) if v["verdict"] != "PASS"]
        worst = min((v for v in failed if v["hint"]), key=lambda v: v["margin"] if v["margin"] is not None else -1e9,
                    default=None)
        hint = worst["hint"] if worst else ""
        lines.append(f"  {o.serial}  {o.verdict:8s} " + (", ".join(v["name"] for v in failed) or "all limits passed")
                     + (f"\n              suggestion: {hint}" if hint else ""))
    writer.text(folder / "summary.csv", summary_csv(outcomes))
    writer.text(folder / "junit.xml", junit_xml(outcomes, profile=profile.name))
    writer.append_lines(folder / "history.csv", HISTORY_HEADER, history_lines(outcomes, profile=profile.name))
    return lines + [""]


def _yfactor_demos(src: Path, out: Path, truth: dict, writer: Writer) -> list[str]:
    """The two Y-factor scenarios: VHF preamp with a noise diode (SigMF), audio preamp in hot/cold baths."""
    from .io import open_capture
    from .io.sigmf_iq import open_sigmf
    from .noise.yfactor import load_enr_table
    from .report.plots import yfactor_figures
    from .report.yfactor_text import format_yfactor
    from .measure.yfactor import HotColdSource, analyze_yfactor

    vhf = analyze_yfactor(hot=open_sigmf(src / "vhf_hot.sigmf-meta"), cold=open_sigmf(src / "vhf_cold.sigmf-meta"),
                          cal_hot=open_sigmf(src / "vhf_cal_hot.sigmf-meta"),
                          cal_cold=open_sigmf(src / "vhf_cal_cold.sigmf-meta"),
                          source=HotColdSource(enr=load_enr_table(src / "noise_source_enr.toml")), n_rows=8)
    a = truth["yfactor_audio"]
    bath = analyze_yfactor(hot=open_capture(src / "bath_hot.flac"), cold=open_capture(src / "bath_cold.flac"),
                           floor=open_capture(src / "bath_floor.flac"),
                           source=HotColdSource(t_hot_k=a["t_hot_k"], t_cold_k=a["t_cold_k"]), n_rows=6)
    from .measure.provenance import provenance
    read = {"vhf": [*(src / f"vhf_{n}.sigmf-{h}" for n in ("hot", "cold", "cal_hot", "cal_cold") for h in ("meta", "data")),
                    src / "noise_source_enr.toml"],
            "bath": [src / f"bath_{n}.flac" for n in ("hot", "cold", "floor")]}
    for name, res in (("vhf", vhf), ("bath", bath)):
        writer.json(out / f"yfactor_{name}.json", {**res.to_dict(), "provenance": provenance(read[name], root=out)})
        writer.text(out / f"yfactor_{name}.txt", format_yfactor(res))
        _figures(writer, out, yfactor_figures(res, name=f"yfactor_{name}.png"))
    v = truth["yfactor_vhf"]
    return [
        "Y-factor demos (INVENTED DATA; full tables in yfactor_vhf.txt and yfactor_bath.txt):",
        f"  VHF preamp, SDR and noise diode:  NF {vhf.noise_figure_db:.3f} dB +/- "
        f"{vhf.uncertainty['noise_figure_db']:.2f} (k=2), gain {vhf.gain_db:.2f} dB; model NF "
        f"{v['dut_nf_db']:.3f} dB, gain {v['dut_gain_db']:.2f} dB",
        f"  audio preamp, 1 kohm at 100 C / 0 C: NF {bath.noise_figure_db:.3f} dB +/- "
        f"{bath.uncertainty['noise_figure_db']:.2f} (k=2); model NF {a['dut_noise_figure_db']:.3f} dB",
        "",
    ]
