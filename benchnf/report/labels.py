"""Human labels and readable values for the figures a check reports ("EIN (RMS, A-weighted)", "-128.4 dBu",
"1.06 nV/rtHz", "4.65 uV") instead of keys and raw floats."""

from __future__ import annotations

import re

from ..units import eng

__all__ = ["limit_label", "value_text", "condition_rows"]

_LABELS = {"gain_db": "gain", "ein_dbu": "EIN", "ein_dbv": "EIN", "noise_figure_db": "noise figure, band",
           "nf_at_1khz_db": "noise figure, 1 kHz (1/3 octave)", "flicker_corner_hz": "1/f corner",
           "output_noise_vrms": "output noise", "input_density_at_1khz_v_per_rthz": "input noise, 1 kHz"}
def limit_label(name: str, *, weighting: str | None = None) -> str:
    """'ein_dbu' -> 'EIN (RMS, A-weighted)'; 'mask input_density_v_per_rthz (worst at 80 Hz)' ->
    'input noise density, mask (worst at 80 Hz)'; 'hum ripple' -> 'hum, ripple family'."""
    w = "unweighted" if weighting in (None, "none") else f"{weighting}-weighted"
    if name in ("ein_dbu", "ein_dbv", "output_noise_vrms"):
        return f"{_LABELS[name]} (RMS, {w})"
    if name == "noise_figure_db":
        return f"noise figure, band ({w})"
    if name in _LABELS:
        return _LABELS[name]
    m = re.fullmatch(r"mask (\w+)( \(worst at [^)]*\))?", name)
    if m:
        what = "input noise density" if m.group(1) == "input_density_v_per_rthz" else m.group(1)
        return f"{what}, mask{m.group(2) or ''}"
    m = re.fullmatch(r"hum (\w+)", name)
    if m:
        return f"hum, {m.group(1)} family"
    return name


def value_text(name: str, value: float | None) -> str:
    """A measured value with its unit, readable."""
    if value is None:
        return "-"
    if name.endswith("_dbu"):
        return f"{value:.2f} dBu"
    if name.endswith("_dbv"):
        return f"{value:.2f} dBV"
    if name.endswith("_db"):
        return f"{value:.2f} dB"
    if name.endswith("_hz"):
        return f"{value:.3g} Hz"
    if "v_per_rthz" in name:
        return f"{value * 1e9:.3g} nV/rtHz"
    if name.startswith("hum") or name.endswith("_vrms"):
        return eng(value, "V")
    return f"{value:.4g}"


def condition_rows(cond: dict[str, object]) -> list[tuple[str, str]]:
    """Measurement conditions in words: ('source resistance', '20 ohm'), ('band', '20-20000 Hz'), ..."""
    names = {"rs_ohm": ("source resistance", "{:g} ohm"), "temperature_k": ("source temperature", "{:.2f} K"),
             "sample_rate_hz": ("sample rate", "{:g} Hz"), "weighting": ("weighting", "{}"),
             "detector": ("detector", "{}"), "gain_setting": ("gain setting", "{}")}
    out = []
    for key, value in cond.items():
        if key == "band_hz" and isinstance(value, (list, tuple)) and len(value) == 2:
            out.append(("band", f"{float(value[0]):g}-{float(value[1]):g} Hz"))
        elif key == "floor_corrected":
            out.append(("analyzer floor subtracted", "yes" if value else "no"))
        elif key in names and value is not None:
            label, fmt = names[key]
            out.append((label, fmt.format(value)))
        else:
            out.append((key, str(value)))
    return out
