"""The gain-method analysis: captures in, one frozen result out.

This is the one place that strings the pipeline together: integrity checks
and Welch spectra of each capture, gain from a tone (and the response shape
from a two-channel capture), floor subtraction, then the figures of
:mod:`benchnf.noise.gain_method`.  See docs/method.md for every equation.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from .capture import Capture, SampleStats
from .dsp.integrate import band_bin_weights
from .dsp.spectrum import Psd, WelchAccumulator, default_segment_length
from .dsp.weighting import Band, weighting_power_gain
from .errors import BenchWarning, CaptureError, MeasurementError, ParameterError
from .noise.floor import FloorSubtraction, band_relative_std, check_band_margin, subtract_floor
from .noise.gain_method import (band_noise_factor, band_rms, check_source, spot_means,
                                spot_noise_factor, third_octave_centres_hz, third_octave_weights)
from .units import T0_K, power_db, thermal_vrms, vrms_to_dbu, vrms_to_dbv

__all__ = ["GainSetup", "GainEstimate", "SpotValue", "AnalysisResult", "analyze_gain_method",
           "measure_gain", "capture_psd", "SCHEMA_VERSION"]

SCHEMA_VERSION = "1"
_MAX_TONE_FRAMES = 1 << 18  # 2.7 s at 96 kHz: ample for a tone level, cheap to fit

Progress = Callable[[int], None]


@dataclass(frozen=True)
class GainSetup:
    """How the DUT's gain is to be known.

    Give either a tone capture with the tone's input voltage, or a stated
    gain.  Optionally add a two-channel response capture, whose shape
    |H(f)| is scaled to the single-frequency gain.

    Attributes
    ----------
    tone : Capture, optional
        The DUT output while driven by a sine (its ``channel``), and, when
        `tone_input_channel` is set, the DUT input on that channel.
    tone_input_vrms : float, optional
        RMS of the tone at the source EMF (before Rs).  Required for a
        one-channel tone capture.
    tone_input_channel : int, optional
        Channel of `tone` that records the DUT input.
    tone_frequency_hz : float, optional
        Stated tone frequency; the tone must be found there.
    gain_db : float, optional
        Stated voltage gain from source EMF to output, in dB.
    gain_frequency_hz : float
        Frequency the stated gain holds at (1 kHz).
    response : Capture, optional
        Two-channel capture of a broadband stimulus: DUT input and output.
    response_channels : (int, int)
        (input, output) channels of `response`.
    zin_ohm : float, optional
        DUT input impedance, when the tone was measured at the DUT's
        terminals rather than as the source EMF; the gain is then referred to
        the EMF through the divider Zin / (Zin + Rs).
    """

    tone: Capture | None = None
    tone_input_vrms: float | None = None
    tone_input_channel: int | None = None
    tone_frequency_hz: float | None = None
    gain_db: float | None = None
    gain_frequency_hz: float = 1000.0
    response: Capture | None = None
    response_channels: tuple[int, int] = (0, 1)
    zin_ohm: float | None = None

    def __post_init__(self) -> None:
        if (self.tone is None) == (self.gain_db is None):
            raise ParameterError("give either a tone capture (--tone with --tone-input-vrms) or "
                                 "a stated gain (--gain-db), not both or neither")
        if self.tone is not None and self.tone_input_channel is None:
            v = self.tone_input_vrms
            if v is None or not (math.isfinite(v) and v > 0):
                raise ParameterError("--tone-input-vrms must be a positive voltage in V RMS (the "
                                     "tone's level at the source) for a one-channel tone capture")
        if self.zin_ohm is not None and not (math.isfinite(self.zin_ohm) and self.zin_ohm > 0):
            raise ParameterError(f"--zin-ohm {self.zin_ohm!r} must be > 0")
        if self.gain_db is not None and not math.isfinite(self.gain_db):
            raise ParameterError(f"--gain-db {self.gain_db!r} must be a finite number")


@dataclass(frozen=True)
class GainEstimate:
    """Voltage gain from the source EMF to the DUT output.

    Attributes
    ----------
    gain_db : float
        At `frequency_hz`.
    frequency_hz : float
        Where it was measured or stated.
    gain_std_db : float
        Standard uncertainty from the sine fits (0 for a stated gain).
    power_gain : numpy.ndarray
        |G(f)|^2 on the spectrum's bins (flat when no response was given).
    reference : str
        How |G(f)| was obtained, for the report.
    """

    gain_db: float
    frequency_hz: float
    gain_std_db: float
    power_gain: NDArray[np.float64]
    reference: str


@dataclass(frozen=True)
class SpotValue:
    """Values over the one-third-octave band around a spot frequency."""

    freq_hz: float
    input_density_v_per_rthz: float | None
    noise_figure_db: float | None
    output_density_v_per_rthz: float | None
    floor_margin_db: float | None
    voltage_noise_v_per_rthz: float | None

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class AnalysisResult:
    """Everything the gain-method analysis found, with its conditions.

    Scalars carry their unit in the name.  ``spectra`` holds the arrays for
    plots (not written to JSON).
    """

    gain_db: float
    gain_frequency_hz: float
    gain_std_db: float
    gain_reference: str
    rs_ohm: float
    temperature_k: float
    band_hz: tuple[float, float]
    weighting: str
    detector: str
    floor_corrected: bool
    floor_margin_db: float | None
    ein_vrms: float
    ein_dbu: float
    ein_dbv: float
    thermal_ein_dbu: float
    noise_factor: float
    noise_figure_db: float
    nf_at_1khz_db: float | None
    input_density_at_1khz_v_per_rthz: float | None
    output_noise_vrms: float
    output_noise_dbu: float
    output_noise_uncorrected_vrms: float
    voltage_noise_at_1khz_v_per_rthz: float | None
    voltage_noise_band_vrms: float | None
    sample_rate_hz: float
    segment_length: int
    rbw_hz: float
    n_averages: int
    dof: float
    volts_per_fs: float
    files: dict[str, str | None]
    spot: tuple[SpotValue, ...]
    notes: tuple[str, ...]
    spectra: dict[str, NDArray[np.float64]] = field(repr=False, compare=False)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dict (NaN becomes None), with ``schema_version``."""
        out: dict[str, Any] = {"schema_version": SCHEMA_VERSION}
        for key, value in self.__dict__.items():
            if key == "spectra":
                continue
            if key == "spot":
                value = [s.to_dict() for s in value]
            elif isinstance(value, tuple):
                value = list(value)
            out[key] = value
        return _json_safe(out)


def _json_safe(value: Any) -> Any:
    if isinstance(value, dict):
        return {k: _json_safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_json_safe(v) for v in value]
    if isinstance(value, (float, np.floating)):
        return float(value) if math.isfinite(value) else None
    if isinstance(value, np.integer):
        return int(value)
    return value


# ----------------------------------------------------------------------------------------
def capture_psd(capture: Capture, *, segment_length: int, progress: Progress | None = None,
                purpose: str = "noise analysis") -> Psd:
    """Calibrated Hann Welch PSD of a noise capture, refusing clipped or silent ones."""
    vpfs = capture.volts_per_fs_or_raise(purpose)
    stats = SampleStats(label=capture.label)
    acc = WelchAccumulator(sample_rate_hz=capture.sample_rate_hz, segment_length=segment_length)
    for block in capture.blocks():
        stats.update(block)
        acc.update(block)
        if progress is not None:
            progress(block.size)
    stats.check_noise()
    if acc.n_averages < 2:
        raise CaptureError(f"{capture.label} lasts {capture.duration_s:.3g} s, too short for a "
                           f"noise spectrum with {segment_length}-sample segments: record at least "
                           f"{3 * segment_length / capture.sample_rate_hz:.2g} s")
    return acc.result(unit="V", scale=vpfs)


def _tone_fit(capture: Capture, channel: int, expected_hz: float | None):
    from .dsp.tones import fit_sine, locate_tone
    samples = capture.read(channel=channel, max_frames=_MAX_TONE_FRAMES)
    stats = SampleStats(label=f"{capture.label} channel {channel}")
    stats.update(samples)
    stats.check_tone()
    f0 = locate_tone(samples, sample_rate_hz=capture.sample_rate_hz, expected_hz=expected_hz)
    return fit_sine(samples, sample_rate_hz=capture.sample_rate_hz, frequency_hz=f0)


def measure_gain(setup: GainSetup, *, frequency_hz: NDArray[np.float64], rs_ohm: float,
                 segment_length: int, output_volts_per_fs: float,
                 band: Band) -> GainEstimate:
    """Gain from the source EMF to the output, on the given bins.

    Single frequency: ``G = (A_out k_out) / (sqrt(2) V_in)`` for a one-channel
    tone (A_out the fitted peak in full scale, k the volts per full scale),
    or ``G = (A_out k_out) / (A_in k_in)`` for a two-channel one.  With
    `zin_ohm`, a gain measured at the DUT terminals is multiplied by
    ``Zin / (Zin + Rs)``.  With a response capture,
    ``|G(f)| = G(f_t) |H(f)| / |H(f_t)|``.
    """
    if setup.tone is not None:
        tone = setup.tone
        out_fit = _tone_fit(tone, tone.channel, setup.tone_frequency_hz)
        out_vpfs = tone.volts_per_fs_or_raise("a tone gain") if tone.volts_per_fs else output_volts_per_fs
        out_vrms = out_fit.rms * out_vpfs
        rel_var = (out_fit.amplitude_std / out_fit.amplitude) ** 2
        if setup.tone_input_channel is not None:
            in_fit = _tone_fit(tone, setup.tone_input_channel, out_fit.frequency_hz)
            in_vrms = in_fit.rms * out_vpfs
            rel_var += (in_fit.amplitude_std / in_fit.amplitude) ** 2
            what = f"two-channel tone at {out_fit.frequency_hz:.1f} Hz"
        else:
            in_vrms = float(setup.tone_input_vrms)  # type: ignore[arg-type]
            what = f"tone at {out_fit.frequency_hz:.1f} Hz, {in_vrms:.4g} V RMS stated at the source"
        gain = out_vrms / in_vrms
        f_gain = out_fit.frequency_hz
        gain_std_db = 20 * math.log10(1 + math.sqrt(rel_var))
    else:
        gain = 10 ** (float(setup.gain_db) / 20)  # type: ignore[arg-type]
        f_gain = setup.gain_frequency_hz
        gain_std_db = 0.0
        what = f"stated gain {setup.gain_db:g} dB at {f_gain:g} Hz"
    if setup.zin_ohm is not None:
        gain *= setup.zin_ohm / (setup.zin_ohm + rs_ohm)
        what += f", referred to the source EMF through Zin {setup.zin_ohm:g} ohm"
    if setup.response is not None:
        from .dsp.response import h1_response
        resp = setup.response
        ch_in, ch_out = setup.response_channels
        n_max = int(120 * resp.sample_rate_hz)
        h = h1_response(resp.read(channel=ch_in, max_frames=n_max),
                        resp.read(channel=ch_out, max_frames=n_max),
                        sample_rate_hz=resp.sample_rate_hz, segment_length=segment_length,
                        check_band_hz=(band.low_hz, band.high_hz))
        mag = np.abs(h.h)
        at_tone = float(np.interp(f_gain, h.frequency_hz, mag))
        shape = mag / at_tone
        power_gain = (gain * shape) ** 2
        reference = f"H(f) from {resp.label} (H1), scaled to the {what}"
    else:
        power_gain = np.full(frequency_hz.shape, gain ** 2)
        reference = f"{what}; response assumed flat"
    return GainEstimate(20 * math.log10(gain), f_gain, gain_std_db, power_gain, reference)


def _resolved(weights: NDArray[np.float64], measured: Psd, floor: Psd | None,
              difference: NDArray[np.float64]) -> bool:
    """True if the excess over the floor in these weighted bins exceeds 3 sigma."""
    if floor is None:
        return True
    enbw = measured.enbw_hz / measured.bin_width_hz
    m = float(np.dot(weights, measured.psd_per_hz))
    fl = float(np.dot(weights, floor.psd_per_hz))
    sm = band_relative_std(weights, measured.psd_per_hz, dof=measured.dof, enbw_bins=enbw) * m
    sf = band_relative_std(weights, floor.psd_per_hz, dof=floor.dof, enbw_bins=enbw) * fl
    return float(np.dot(weights, difference)) > 3.0 * math.hypot(sm, sf)


def analyze_gain_method(*, terminated: Capture, gain: GainSetup, rs_ohm: float,
                        temperature_k: float = T0_K, floor: Capture | None = None,
                        shorted: Capture | None = None, band: Band = Band(20.0, 20_000.0),
                        weighting: str = "none", segment_length: int | None = None,
                        progress: Progress | None = None) -> AnalysisResult:
    """Gain, input-referred noise density, EIN and noise figure from captures.

    Parameters
    ----------
    terminated : Capture
        DUT output with its input terminated in `rs_ohm`; calibrated.
    gain : GainSetup
        How the gain is known.
    rs_ohm : float
        Source resistance in ohm, > 0.
    temperature_k : float
        Physical temperature of the source resistor in kelvin (290 K).
    floor : Capture, optional
        Analyzer alone, input terminated; subtracted in linear power.
    shorted : Capture, optional
        DUT output with its input shorted: the DUT's voltage noise alone.
    band : Band
        Integration band (20 Hz-20 kHz).
    weighting : str
        ``"none"`` or ``"A"``.
    segment_length : int, optional
        Welch segment length; default about 10 Hz bins.
    progress : callable, optional
        Called with the number of frames read, as reading proceeds.

    Returns
    -------
    AnalysisResult

    Raises
    ------
    BenchError
        Bad or mismatched captures, impossible parameters, DUT not resolved
        above the floor.

    References
    ----------
    .. [1] See :mod:`benchnf.noise.gain_method` and docs/method.md.
    """
    check_source(rs_ohm=rs_ohm, temperature_k=temperature_k)
    weighting_power_gain(weighting, np.array([1000.0]))  # validates the name
    fs = terminated.sample_rate_hz
    others = {"floor": floor, "shorted": shorted, "tone": gain.tone, "response": gain.response}
    for role, cap in others.items():
        if cap is not None and cap.sample_rate_hz != fs:
            raise CaptureError(f"the {role} capture {cap.label} was recorded at {cap.sample_rate_hz:g} Hz "
                               f"but {terminated.label} at {fs:g} Hz: record all captures at one rate")
    band.check_within(fs)
    seg = default_segment_length(fs) if segment_length is None else int(segment_length)
    vpfs = terminated.volts_per_fs_or_raise("EIN and noise figure")
    for role, cap in (("floor", floor), ("shorted", shorted)):
        if cap is not None and cap.volts_per_fs is None:
            others[role] = cap.replace(volts_per_fs=vpfs)
    floor, shorted = others["floor"], others["shorted"]
    for role, cap in (("floor", floor), ("shorted", shorted)):
        if cap is not None and cap.volts_per_fs != vpfs:
            raise CaptureError(f"the {role} capture has a different calibration ({cap.volts_per_fs:g} "
                               f"V/FS) from {terminated.label} ({vpfs:g} V/FS): all noise captures "
                               f"must come from one analyzer input at one gain setting")

    notes: list[str] = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", BenchWarning)
        p_term = capture_psd(terminated, segment_length=seg, progress=progress)
        p_floor = capture_psd(floor, segment_length=seg, progress=progress) if floor else None
        p_short = capture_psd(shorted, segment_length=seg, progress=progress) if shorted else None
        f = p_term.frequency_hz
        g = measure_gain(gain, frequency_hz=f, rs_ohm=rs_ohm, segment_length=seg,
                         output_volts_per_fs=vpfs, band=band)
        w_band = band_bin_weights(f, band, weighting=weighting)
        used = w_band > 0
        if p_floor is not None:
            sub_term: FloorSubtraction = subtract_floor(p_term.psd_per_hz, p_floor.psd_per_hz)
            enbw_bins = p_term.enbw_hz / p_term.bin_width_hz
            margin_db = check_band_margin(
                measured_v2=float(np.dot(w_band[used], p_term.psd_per_hz[used])),
                floor_v2=float(np.dot(w_band[used], p_floor.psd_per_hz[used])),
                measured_rel_std=band_relative_std(w_band, p_term.psd_per_hz, dof=p_term.dof,
                                                   enbw_bins=enbw_bins),
                floor_rel_std=band_relative_std(w_band, p_floor.psd_per_hz, dof=p_floor.dof,
                                                enbw_bins=enbw_bins),
                what=f"terminated capture {terminated.label}")
            out_diff = sub_term.difference
        else:
            margin_db = None
            out_diff = p_term.psd_per_hz
            notes.append("no floor capture given: the analyzer's own noise is included in every "
                         "figure (they read high)")
    notes.extend(str(w.message) for w in caught if issubclass(w.category, BenchWarning))
    for w in caught:
        if not issubclass(w.category, BenchWarning):
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)

    # Input-referred density (1) and the band figures (3), (4).
    e2_diff = out_diff / g.power_gain
    ein = math.sqrt(max(float(np.dot(w_band[used], e2_diff[used])), 0.0))
    if not ein > 0:
        raise MeasurementError("the input-referred noise came out at zero or below: check the captures")
    noise_factor = band_noise_factor(f, e2_diff, band, weighting=weighting, rs_ohm=rs_ohm,
                                     temperature_k=temperature_k)
    thermal = math.sqrt(thermal_vrms(resistance_ohm=rs_ohm, temperature_k=temperature_k,
                                     bandwidth_hz=1.0) ** 2 * float(w_band.sum()))
    out_noise = math.sqrt(max(float(np.dot(w_band[used], out_diff[used])), 0.0))
    out_raw = band_rms(f, p_term.psd_per_hz, band, weighting=weighting)

    # Shorted input: the DUT's voltage noise alone, referred through the gain at its terminals.
    en_diff = short_diff = None
    if p_short is not None:
        terminals = 1.0 if gain.zin_ohm is None else (gain.zin_ohm + rs_ohm) / gain.zin_ohm
        short_diff = (subtract_floor(p_short.psd_per_hz, p_floor.psd_per_hz).difference
                      if p_floor is not None else p_short.psd_per_hz)
        en_diff = short_diff / (g.power_gain * terminals ** 2)
        if p_floor is not None and not _resolved(w_band, p_short, p_floor, short_diff):
            notes.append(f"the shorted capture {shorted.label} cannot be told from the analyzer "
                         f"floor in the band: its voltage noise is not reported")
            en_diff = None

    # Spots: one-third-octave means.
    spot_band = Band(band.low_hz, min(band.high_hz, fs / 2 / 10 ** (1 / 20)))
    # A spot band narrower than one bin would only repeat its neighbour's value.
    centres = [c for c in third_octave_centres_hz(spot_band)
               if c[1] * (10 ** (1 / 20) - 10 ** (-1 / 20)) >= p_term.bin_width_hz]
    spot_w = [third_octave_weights(f, exact) for _label, exact in centres]
    e2_spot = spot_means(spot_w, e2_diff)
    out_spot = spot_means(spot_w, out_diff)
    nf_spot = spot_noise_factor(e2_spot, rs_ohm=rs_ohm, temperature_k=temperature_k)
    en_spot = spot_means(spot_w, en_diff) if en_diff is not None else None
    spots = []
    low_margin = []
    for i, ((label, _exact), w_s) in enumerate(zip(centres, spot_w)):
        ok = _resolved(w_s, p_term, p_floor, out_diff) and e2_spot[i] > 0
        m_db = (float(power_db(np.dot(w_s, p_term.psd_per_hz) / np.dot(w_s, p_floor.psd_per_hz)))
                if p_floor is not None else None)
        if m_db is not None and m_db < 3.0:
            low_margin.append(label)
        en_ok = (en_spot is not None and en_spot[i] > 0
                 and _resolved(w_s, p_short, p_floor, short_diff))
        spots.append(SpotValue(
            freq_hz=label,
            input_density_v_per_rthz=math.sqrt(e2_spot[i]) if ok else None,
            noise_figure_db=float(power_db(nf_spot[i])) if ok and nf_spot[i] > 0 else None,
            output_density_v_per_rthz=math.sqrt(out_spot[i]) if ok else None,
            floor_margin_db=m_db,
            voltage_noise_v_per_rthz=math.sqrt(en_spot[i]) if en_ok else None,
        ))
    if low_margin:
        notes.append("less than 3 dB above the analyzer floor at " +
                     ", ".join(f"{x:g} Hz" for x in low_margin) + ": those spot values are uncertain")
    if not any(s.input_density_v_per_rthz for s in spots):
        notes.append("no spot frequency is resolved above the floor")
    at_1k = next((s for s in spots if s.freq_hz == 1000.0), None)

    with np.errstate(divide="ignore", invalid="ignore"):
        nf_curve = power_db(spot_noise_factor(np.where(e2_diff > 0, e2_diff, np.nan), rs_ohm=rs_ohm,
                                              temperature_k=temperature_k))
    spectra = {
        "frequency_hz": f,
        "output_v2_per_hz": p_term.psd_per_hz,
        "floor_v2_per_hz": p_floor.psd_per_hz if p_floor is not None else None,
        "output_corrected_v2_per_hz": np.where(out_diff > 0, out_diff, np.nan),
        "input_v2_per_hz": np.where(e2_diff > 0, e2_diff, np.nan),
        "voltage_noise_v2_per_hz": (np.where(en_diff > 0, en_diff, np.nan)
                                    if en_diff is not None else None),
        "noise_figure_db": nf_curve,
        "power_gain": g.power_gain,
        "band_weights": w_band,
    }
    files = {"terminated": terminated.path, "floor": floor.path if floor else None,
             "shorted": shorted.path if shorted else None,
             "tone": gain.tone.path if gain.tone else None,
             "response": gain.response.path if gain.response else None}
    en_band = (math.sqrt(max(float(np.dot(w_band[used], en_diff[used])), 0.0))
               if en_diff is not None else None)
    return AnalysisResult(
        gain_db=g.gain_db,
        gain_frequency_hz=g.frequency_hz,
        gain_std_db=g.gain_std_db,
        gain_reference=g.reference,
        rs_ohm=float(rs_ohm),
        temperature_k=float(temperature_k),
        band_hz=(band.low_hz, band.high_hz),
        weighting=weighting,
        detector="rms",
        floor_corrected=p_floor is not None,
        floor_margin_db=margin_db,
        ein_vrms=ein,
        ein_dbu=float(vrms_to_dbu(ein)),
        ein_dbv=float(vrms_to_dbv(ein)),
        thermal_ein_dbu=float(vrms_to_dbu(thermal)),
        noise_factor=noise_factor,
        noise_figure_db=float(power_db(noise_factor)) if noise_factor > 0 else math.nan,
        nf_at_1khz_db=at_1k.noise_figure_db if at_1k else None,
        input_density_at_1khz_v_per_rthz=at_1k.input_density_v_per_rthz if at_1k else None,
        output_noise_vrms=out_noise,
        output_noise_dbu=float(vrms_to_dbu(out_noise)),
        output_noise_uncorrected_vrms=out_raw,
        voltage_noise_at_1khz_v_per_rthz=at_1k.voltage_noise_v_per_rthz if at_1k else None,
        voltage_noise_band_vrms=en_band,
        sample_rate_hz=fs,
        segment_length=seg,
        rbw_hz=p_term.enbw_hz,
        n_averages=p_term.n_averages,
        dof=p_term.dof,
        volts_per_fs=vpfs,
        files={k: (str(v) if v is not None else None) for k, v in files.items()},
        spot=tuple(spots),
        notes=tuple(notes),
        spectra=spectra,
    )
