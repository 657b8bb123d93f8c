"""The view of an input-device prediction (``benchnf bias``): its figures for the source, the current of least
NF, a built stage explained by its device, candidate parts ranked; NF against current and against Rs."""

from __future__ import annotations

from ..measure.bias_result import BiasResult, Curve, DeviceStated, Explained
from ..quantity import Quantity, resistance_text
from .view import Headline, Plot, Table, Trace, View, values

__all__ = ["present"]

_DEVICE_ROWS = (("beta", "β (BF)", ""), ("beta_effective", "β at the operating point", ""),
                ("rbb_ohm", "rbb'", "Ω"), ("re_ohm", "emitter resistance", "Ω"), ("vaf_v", "Early voltage", "V"),
                ("vce_v", "Vce", "V"), ("is_a", "IS", "A"), ("gm_s", "gm", "S"), ("idss_a", "IDSS", "A"),
                ("vp_v", "Vp", "V"), ("gamma", "γ", ""), ("ig_a", "gate leakage", "A"),
                ("rs_lead_ohm", "source-lead resistance", "Ω"), ("kf", "KF", ""), ("af", "AF", ""),
                ("corner_hz", "1/f corner", "Hz"))


def _conditions(r: BiasResult) -> tuple[tuple[str, str], ...]:
    source = resistance_text(r.rs_ohm)
    if r.turns != 1.0 or r.winding_ohm:
        source += f" through a 1:{r.turns:g} transformer ({resistance_text(r.winding_ohm)} winding)"
    band = f"{Quantity(r.band_hz[0], 'Hz').text()} to {Quantity(r.band_hz[1], 'Hz').text()}"
    weighting = "unweighted" if r.weighting == "none" else f"{r.weighting}-weighted"
    out = [("source", source), ("spot figures at", Quantity(r.frequency_hz, "Hz").text()),
           ("band", f"{band}, {weighting}"), ("device temperature", f"{r.temperature_k:g} K")]
    if r.device is not None:
        d = r.device
        what = "bipolar transistor" if d.kind == "bjt" else "field-effect transistor"
        current = "collector" if d.kind == "bjt" else "drain"
        count = f"{d.count} in parallel, each " if d.count > 1 else ""
        out.insert(0, ("device", f"{what}, {count}at a {current} current of {Quantity(d.current_a, 'A').text()}"))
    return tuple(out)


def _headline(r: BiasResult) -> list[Headline]:
    f = Quantity(r.frequency_hz, "Hz").text()
    weighting = "" if r.weighting == "none" else f", {r.weighting}-weighted"
    return [Headline(f"voltage noise en, {f}", Quantity(r.en_v_per_rthz, "V/√Hz"), key="en_v_per_rthz"),
            Headline(f"current noise in, {f}", Quantity(r.in_a_per_rthz, "A/√Hz"), key="in_a_per_rthz"),
            Headline(f"Ropt = en/in, {f}", Quantity(r.ropt_ohm, "Ω"), "at the device's input", "ropt_ohm"),
            Headline(f"noise figure, {f}", Quantity(r.noise_figure_db, "dB", digits=3), f"Rs {resistance_text(r.rs_ohm)}",
                     "noise_figure_db"),
            Headline(f"NFmin, {f}", Quantity(r.nfmin_db, "dB", digits=3), "at Ropt", "nfmin_db"),
            Headline("noise figure over the band", Quantity(r.band_noise_figure_db, "dB", digits=3), weighting.lstrip(", "),
                     "band_noise_figure_db"),
            Headline(f"EIN{weighting}", Quantity(r.ein_dbu, "dBu"), "source noise included", "ein_dbu")]


def _device_table(d: DeviceStated) -> Table:
    rows = tuple((label, Quantity(getattr(d, key), unit) if unit else Quantity(getattr(d, key), "", digits=4))
                 for key, label, unit in _DEVICE_ROWS if getattr(d, key) is not None)
    return Table("The device as the model took it", ("parameter", "value"), rows)


def _explained(e: Explained) -> tuple[list[Headline], Table]:
    head = [Headline("the built stage now", Quantity(e.noise_figure_db, "dB", digits=3), e.summary, "explained")]
    pairs = [("rbb' explaining the measured en", Quantity(e.rbb_ohm, "Ω", e.rbb_u95_ohm)),
             ("β explaining the measured in", Quantity(e.beta, "", e.beta_u95, digits=4)),
             ("gm explaining the measured en", Quantity(e.gm_s, "S", e.gm_u95_s)),
             ("gate leakage explaining the measured in", Quantity(e.ig_a, "A", e.ig_u95_a)),
             ("en measured", Quantity(e.measured_en_v_per_rthz, "V/√Hz", e.measured_en_u95_v_per_rthz)),
             ("in measured", Quantity(e.measured_in_a_per_rthz, "A/√Hz", e.measured_in_u95_a_per_rthz)),
             ("NF at the best current", Quantity(e.best_noise_figure_db, "dB", e.best_noise_figure_u95_db, digits=3))]
    rows = tuple(pair for pair in pairs if pair[1].known)
    return head, Table(f"The built stage explained by its device (from {e.eni_file}, at "
                       f"{Quantity(e.frequency_hz, 'Hz').text()}; U: expanded, k=2)", ("", "value"), rows)


def _curve_traces(curves: tuple[Curve, ...], scale: float = 1.0) -> tuple[Trace, ...]:
    return tuple(Trace(c.label, values(c.x, scale), values(c.noise_figure_db)) for c in curves)


def _plots(r: BiasResult) -> list[Plot]:
    plots = []
    if r.nf_vs_current:
        title = ("Candidate parts: noise figure against current" if r.parts
                 else "Noise figure against the device's current, for several sources")
        traces = list(_curve_traces(r.nf_vs_current, 1e3))
        if r.optimum is not None:
            traces.append(Trace("least NF", (r.optimum.ic_a * 1e3,), (r.optimum.noise_figure_db,), "markers"))
        plots.append(Plot("nf_current", "bias_nf_vs_current.png", f"{title} (Rs {resistance_text(r.rs_ohm)})"
                          if r.parts else title, "Current (mA)", "Noise figure (dB)", tuple(traces), y_from_zero=True))
    if r.nf_vs_rs is not None:
        plots.append(Plot("nf_rs", "bias_nf_vs_rs.png", "Noise figure against source resistance (best SNR is at "
                          "the lowest Rs)", "Source resistance (Ω)", "Noise figure (dB)", _curve_traces((r.nf_vs_rs,)),
                          y_from_zero=True))
    if r.spectrum is not None:
        s = r.spectrum
        plots.append(Plot("en_in", "bias_en_in.png", "The device's en and in against frequency", "Frequency (Hz)",
                          "en (nV/√Hz), in (pA/√Hz)",
                          (Trace("en (nV/√Hz)", values(s.frequency_hz), values(s.en_v_per_rthz, 1e9)),
                           Trace("in (pA/√Hz)", values(s.frequency_hz), values(s.in_a_per_rthz, 1e12))), log_y=True))
    return plots


def _parts_table(r: BiasResult) -> Table:
    rows = tuple((str(p.rank), p.name, p.kind, Quantity(p.best_noise_figure_db, "dB", digits=3),
                  Quantity(p.best_ic_a, "A"),
                  f"{Quantity(p.ic_range_a[0], 'A').text()} to {Quantity(p.ic_range_a[1], 'A').text()}",
                  Quantity(p.en_v_per_rthz, "V/√Hz"), Quantity(p.in_a_per_rthz, "A/√Hz"),
                  Quantity(p.stated_noise_figure_db, "dB", digits=3)) for p in r.parts)
    return Table(f"Candidate parts for Rs {resistance_text(r.rs_ohm)}, best first",
                 ("rank", "part", "kind", "least NF (dB)", "at", "within 0.1 dB", "en there", "in there",
                  "NF at its stated current (dB)"), rows)


def present(r: BiasResult) -> View:
    """The view of a ``bias`` result."""
    head, tables = ([], [_parts_table(r)]) if r.parts else (_headline(r), [])
    if r.device is not None:
        tables.append(_device_table(r.device))
    if r.optimum is not None and not r.parts:
        o = r.optimum
        edge = ("; the search reached the end of its range (a JFET's ends at IDSS): widen --ic-range if it can go "
                "further" if o.at_edge else "")
        head.append(Headline("least noise figure", Quantity(o.noise_figure_db, "dB", o.noise_figure_u95_db, digits=3),
                             f"at {Quantity(o.ic_a, 'A').text()}; within {o.within_db:g} dB from "
                             f"{Quantity(o.ic_range_a[0], 'A').text()} to {Quantity(o.ic_range_a[1], 'A').text()}"
                             f"{edge}", "optimum"))
    if r.explained is not None:
        more, table = _explained(r.explained)
        head += more
        tables.append(table)
    if r.parts:
        best = r.parts[0]
        summary = f"best for {resistance_text(r.rs_ohm)}: {best.name}, {best.best_noise_figure_db:.2f} dB"
    else:
        summary = (f"NF {r.noise_figure_db:.2f} dB at {resistance_text(r.rs_ohm)}, en "
                   f"{Quantity(r.en_v_per_rthz, 'V/√Hz').text()}, in {Quantity(r.in_a_per_rthz, 'A/√Hz').text()}")
    title = "candidate input devices for the source" if r.parts else "the input device at its operating point"
    return View("bias", title, _conditions(r), tuple(head), tuple(tables), tuple(_plots(r)), tuple(r.notes),
                tuple(r.warnings), (), summary)
