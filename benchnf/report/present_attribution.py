"""The attribution's part of a gain-method view: what each reference channel explains (a table) and its
coherence with the output against frequency (a plot)."""

from __future__ import annotations

from ..measure.attribution import share_text
from ..measure.results import AnalysisResult
from ..quantity import Quantity
from .view import Plot, Table, Trace, values

__all__ = ["attribution_table", "coherence_plot"]


def attribution_table(r: AnalysisResult) -> Table | None:
    """One row per reference: its own share of the band noise with U, its coherent share, its largest line."""
    if not r.attribution:
        return None
    rows = []
    for a in r.attribution:
        top = max(a.lines, key=lambda s: s.fraction, default=None)
        line = (f"{share_text(top.fraction, top.fraction_u95)} of {Quantity(top.freq_hz, 'Hz', digits=4).text()}"
                if top is not None else "no line in band")
        rows.append((a.reference, str(a.channel), share_text(a.fraction_of_output_power, a.fraction_u95),
                     share_text(a.coherent_fraction), line))
    total = r.attribution_all
    note = (f"all references together: {share_text(total.fraction_of_output_power, total.fraction_u95)} of the band noise "
            f"(U at 95 %, jackknife over {total.batches} parts of the recording); every figure above is of the output "
            f"with the references' coherent parts removed" if total is not None else "")
    return Table("Where the output noise comes from (coherence with each reference channel)",
                 ("reference", "channel", "its own share of the band noise", "coherent share (shared parts too)",
                  "largest share of a hum line"), tuple(rows), note)


def coherence_plot(r: AnalysisResult) -> Plot | None:
    """Each reference's coherence with the output against frequency."""
    s = r.spectra
    if s is None or not s.coherence:
        return None
    f = s.frequency_hz[1:]
    traces = tuple(Trace(name, values(f), values(c[1:])) for name, c in s.coherence)
    return Plot("coherence", "coherence.png", "Coherence of the output with each reference", "Frequency (Hz)",
                "Coherence γ² (0-1)", traces, band=r.band_hz, y_from_zero=True)
