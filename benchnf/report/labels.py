"""Human labels for the figures a check reports ("EIN (RMS, A-weighted)", "input noise density, mask (worst at
80 Hz)", "hum, ripple family") instead of keys, and the measurement conditions of a check in words."""

from __future__ import annotations

import re

from ..check.limits import CheckConditions
from ..quantity import Quantity, resistance_text

__all__ = ["limit_label", "condition_rows"]

_LABELS = {"gain_db": "gain", "ein_dbu": "EIN", "ein_dbv": "EIN", "ein_with_spurs_dbu": "EIN with hum and spurs",
           "noise_figure_db": "noise figure, band", "nf_at_1khz_db": "noise figure, 1 kHz (1/3 octave)",
           "flicker_corner_hz": "1/f corner", "output_noise_vrms": "output noise", "output_noise_dbu": "output noise",
           "input_density_at_1khz_v_per_rthz": "input noise density, 1 kHz",
           "voltage_noise_at_1khz_v_per_rthz": "voltage noise (shorted), 1 kHz",
           "white_density_v_per_rthz": "white noise level", "snr_db": "SNR", "floor_margin_db": "margin over the floor"}


def limit_label(name: str, *, weighting: str | None = None) -> str:
    """'ein_dbu' -> 'EIN (RMS, A-weighted)'; 'mask input_density_v_per_rthz (worst at 80 Hz)' ->
    'input noise density, mask (worst at 80 Hz)'; 'hum ripple' -> 'hum, ripple family'."""
    w = "unweighted" if weighting in (None, "none") else f"{weighting}-weighted"
    if name in ("ein_dbu", "ein_dbv", "output_noise_vrms", "output_noise_dbu", "ein_with_spurs_dbu"):
        return f"{_LABELS[name]} (RMS, {w})"
    if name == "noise_figure_db":
        return f"noise figure, band ({w})"
    if name in _LABELS:
        return _LABELS[name]
    m = re.fullmatch(r"mask (\w+)( \(worst at [^)]*\))?", name)
    if m:
        what = {"input_density_v_per_rthz": "input noise density", "output_density_v_per_rthz": "output noise density",
                "noise_figure_db": "spot noise figure"}.get(m.group(1), m.group(1))
        return f"{what}, mask{m.group(2) or ''}"
    m = re.fullmatch(r"hum (\w+)", name)
    if m:
        return f"hum, {m.group(1)} family"
    return name


def condition_rows(c: CheckConditions) -> list[tuple[str, str]]:
    """Measurement conditions in words: ('source resistance', '20 Ω'), ('band', '20 Hz to 20 kHz'), ..."""
    out = []
    if c.rs_ohm is not None:
        out.append(("source resistance", resistance_text(c.rs_ohm)))
    if c.temperature_k is not None:
        out.append(("source temperature", f"{c.temperature_k:.2f} K"))
    if c.band_hz is not None:
        out.append(("band", f"{Quantity(c.band_hz[0], 'Hz').text()} to {Quantity(c.band_hz[1], 'Hz').text()}"))
    if c.weighting is not None:
        out.append(("weighting", "none" if c.weighting == "none" else c.weighting))
    if c.detector is not None:
        out.append(("detector", "quasi-peak" if c.detector == "qp" else "RMS"))
    if c.floor_corrected is not None:
        out.append(("analyzer floor", "subtracted" if c.floor_corrected else "NOT subtracted"))
    if c.sample_rate_hz is not None:
        out.append(("sample rate", Quantity(c.sample_rate_hz, "Hz").text()))
    return out
