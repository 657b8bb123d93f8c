"""The gain-method analysis: captures in, one frozen result out.

This is the one place that strings the pipeline together: integrity checks
and Welch spectra of each capture, gain from a tone (and the response shape
from a two-channel capture), hum and spur lines, floor subtraction, then the
figures of :mod:`benchnf.noise.gain_method`, the 1/f fit, the quasi-peak
reading and the uncertainty budget.  See docs/method.md for every equation.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any, Union

import numpy as np
from numpy.typing import NDArray

from ._json import json_safe
from .capture import Capture, SampleStats
from .dsp.integrate import band_bin_weights
from .dsp.spectrum import Psd, default_segment_length, pool_psds
from .dsp.spurs import LineSearch, find_lines, hum_hints
from .dsp.weighting import Band, weighting_power_gain
from .errors import BenchWarning, CaptureError, MeasurementError, ParameterError
from .noise.floor import band_relative_std, check_band_margin, subtract_floor
from .noise.gain_method import (
    band_noise_factor,
    check_source,
    spot_means,
    spot_noise_factor,
    third_octave_centres_hz,
    third_octave_weights,
)
from .noise.uncertainty import (
    Budget,
    StatedUncertainty,
    dut_power_rel_std,
    ein_budget,
    gain_budget,
    nf_budget,
)
from .streaming import stream_spectrum
from .units import (
    BOLTZMANN_J_PER_K,
    T0_K,
    power_db,
    thermal_density_v2_per_hz,
    vrms_to_dbu,
    vrms_to_dbv,
)

__all__ = ["GainSetup", "GainEstimate", "SpotValue", "SpurValue", "RepeatSummary", "AnalysisResult",
           "analyze_gain_method", "measure_gain", "capture_psd", "SCHEMA_VERSION", "DETECTORS"]

SCHEMA_VERSION = "1"
DETECTORS = ("rms", "qp")
_MAX_TONE_FRAMES = 1 << 17  # 1.4 s at 96 kHz, 2.7 s at 48 kHz: ample for a tone level, cheap to fit
_MAX_QP_SECONDS = 30.0

Progress = Callable[[int], None]
NoiseInput = Union[Capture, Psd]


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
        if self.tone is not None and self.tone_input_channel is not None \
                and self.tone_input_channel == getattr(self.tone, "channel", None):
            raise ParameterError(f"--tone-input-channel {self.tone_input_channel} is also the channel the tone's "
                                 f"output is read from: the gain would read 0 dB; give the channel that records "
                                 f"the DUT input, or --channel for the output")

    @property
    def kind(self) -> str:
        """``tone-1ch``, ``tone-2ch`` or ``stated`` (for the uncertainty budget)."""
        if self.tone is None:
            return "stated"
        return "tone-1ch" if self.tone_input_channel is None else "tone-2ch"


@dataclass(frozen=True)
class GainEstimate:
    """Voltage gain from the source EMF to the DUT output.

    Attributes
    ----------
    gain_db : float
        At `frequency_hz`.
    frequency_hz : float
        Where it was measured or stated.
    gain_rel_std : float
        Relative standard uncertainty of the gain from the sine fits.
    power_gain : numpy.ndarray
        |G(f)|^2 on the spectrum's bins (flat when no response was given).
    response_rel_std : float
        Relative standard uncertainty of |H| averaged over the band (0 without one).
    reference : str
        How |G(f)| was obtained, for the report.
    """

    gain_db: float
    frequency_hz: float
    gain_rel_std: float
    power_gain: NDArray[np.float64]
    response_rel_std: float
    reference: str

    @property
    def gain_std_db(self) -> float:
        return 20 * math.log10(1 + self.gain_rel_std)


@dataclass(frozen=True)
class SpotValue:
    """Values over the one-third-octave band around a spot frequency."""

    freq_hz: float
    input_density_v_per_rthz: float | None
    noise_figure_db: float | None
    output_density_v_per_rthz: float | None
    floor_margin_db: float | None
    voltage_noise_v_per_rthz: float | None
    input_density_expanded_db: float | None = None  # k=2, from the Welch statistics of this band

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class SpurValue:
    """A hum or spur line at the output and referred to the input."""

    freq_hz: float
    output_vrms: float
    input_vrms: float
    family: str
    harmonic: int | None
    excess_db: float

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class RepeatSummary:
    """Scatter and drift of repeated captures of the terminated condition."""

    n: int
    ein_dbu: tuple[float, ...]
    noise_figure_db: tuple[float, ...]
    ein_std_db: float
    noise_figure_std_db: float
    noise_figure_drift_db_per_capture: float

    def to_dict(self) -> dict[str, Any]:
        return {k: (list(v) if isinstance(v, tuple) else v) for k, v in self.__dict__.items()}


@dataclass(frozen=True)
class AnalysisResult:
    """Everything the gain-method analysis found, with its conditions.

    Scalars carry their unit in the name.  ``spectra`` holds the arrays for
    plots and ``budgets`` the full uncertainty budgets (the JSON carries
    their expanded values under ``uncertainty``).
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
    ein_rms_dbu: float
    ein_with_spurs_dbu: float
    thermal_ein_dbu: float
    noise_factor: float
    noise_figure_db: float
    nf_at_1khz_db: float | None
    input_density_at_1khz_v_per_rthz: float | None
    output_noise_vrms: float
    output_noise_dbu: float
    output_noise_with_spurs_vrms: float
    output_noise_uncorrected_vrms: float
    voltage_noise_at_1khz_v_per_rthz: float | None
    voltage_noise_band_vrms: float | None
    flicker_corner_hz: float | None
    flicker_corner_std_hz: float | None
    white_density_v_per_rthz: float | None
    flicker_slope: float | None
    flicker_fit_on: str | None
    snr_db: float | None
    reference_output_vrms: float | None
    mains_hz: float | None
    spurs: tuple[SpurValue, ...]
    hum_hints: tuple[str, ...]
    uncertainty: dict[str, Any]
    repeats: RepeatSummary | None
    sample_rate_hz: float
    segment_length: int
    spectrum_window: str
    rbw_hz: float
    n_averages: int
    dof: float
    volts_per_fs: float | None
    files: dict[str, Any]
    spot: tuple[SpotValue, ...]
    notes: tuple[str, ...]
    budgets: dict[str, Budget] = field(repr=False, compare=False)
    spectra: dict[str, Any] = field(repr=False, compare=False)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dict (NaN becomes None), with ``schema_version``."""
        out: dict[str, Any] = {"schema_version": SCHEMA_VERSION, "kind": "analysis"}
        for key, value in self.__dict__.items():
            if key in ("spectra", "budgets"):
                continue
            if key in ("spot", "spurs"):
                value = [s.to_dict() for s in value]
            elif key == "repeats":
                value = value.to_dict() if value is not None else None
            elif isinstance(value, tuple):
                value = list(value)
            out[key] = value
        return json_safe(out)


# ----------------------------------------------------------------------------------------
def capture_psd(capture: NoiseInput, *, segment_length: int, progress: Progress | None = None,
                purpose: str = "noise analysis") -> Psd:
    """Calibrated Hann Welch PSD of a noise capture, refusing clipped or silent ones.

    A :class:`Psd` (e.g. an instrument trace) is returned as it is, if in volts.
    """
    if isinstance(capture, Psd):
        if capture.unit != "V":
            raise CaptureError("a spectrum given directly must be in volts")
        return capture
    vpfs = capture.volts_per_fs_or_raise(purpose)
    acc, stats = stream_spectrum(capture, segment_length=segment_length, progress=progress, energy=False)
    stats.check_noise()
    if acc.n_averages < 2:
        raise CaptureError(f"{capture.label} lasts {capture.duration_s:.3g} s, too short for a "
                           f"noise spectrum with {segment_length}-sample segments: record at least "
                           f"{3 * segment_length / capture.sample_rate_hz:.2g} s")
    psd = acc.result(unit="V", scale=vpfs)
    _refuse_near_quantisation(capture, psd, vpfs)
    return psd


# A noise capture must lie this far above its format's quantisation noise (10 dB: a standard deviation of
# about one step), else rounding, not the signal, sets what the floor subtraction sees.
QUANTISATION_MARGIN_DB = 10.0


def _refuse_near_quantisation(capture: Capture, psd: Psd, vpfs: float) -> None:
    """Refuse a noise capture within QUANTISATION_MARGIN_DB of its integer format's quantisation noise.

    Rounding to steps of q adds white noise of density q^2/(6 fs) one-sided (q^2/12 over fs/2) only
    while the signal spans several steps; below about one step it adds less and not independently of
    the signal (Widrow and Kollar, Quantization Noise, 2008, ch. 4-5), so no correction is honest there.
    """
    if capture.quantum_fs is None:
        return
    q_v = capture.quantum_fs * vpfs
    quant_density = q_v ** 2 / (6.0 * capture.sample_rate_hz)
    level = float(np.median(psd.psd_v2_per_hz[1:-1]))
    excess_db = 10 * math.log10(level / quant_density) if level > 0 else -math.inf
    if excess_db < QUANTISATION_MARGIN_DB:
        bits = round(1 - math.log2(capture.quantum_fs))
        raise CaptureError(f"{capture.label}: its noise is only {excess_db:.1f} dB above the quantisation noise "
                           f"of its {bits}-bit format (at least {QUANTISATION_MARGIN_DB:g} dB is needed): the "
                           f"format cannot resolve it; add gain before the sound card or record in 24-bit")


def _refuse_mains_tone(f0: float, label: str) -> None:
    """Refuse a tone found at a low mains harmonic (50 or 60 Hz times 1-6) when no frequency was stated:
    the strongest line of a capture without the test tone is usually hum (common practice)."""
    for mains in (50.0, 60.0):
        k = round(f0 / mains)
        if 1 <= k <= 6 and abs(f0 - k * mains) <= 0.005 * k * mains:
            raise MeasurementError(f"the strongest tone in {label} is at {f0:.1f} Hz, harmonic {k} of {mains:g} Hz "
                                   f"mains: this looks like hum, not the test tone; check the generator is "
                                   f"connected, or give --tone-hz {f0:.0f} if it really is your tone")


def _tone_fit(capture: Capture, channel: int, expected_hz: float | None):
    from .dsp.tones import fit_sine, locate_tone
    samples = capture.read(channel=channel, max_frames=_MAX_TONE_FRAMES)
    stats = SampleStats(label=f"{capture.label} channel {channel}")
    stats.update(samples)
    stats.check_tone()
    f0 = locate_tone(samples, sample_rate_hz=capture.sample_rate_hz, expected_hz=expected_hz)
    if expected_hz is None:
        _refuse_mains_tone(f0, capture.label)
    return fit_sine(samples, sample_rate_hz=capture.sample_rate_hz, frequency_hz=f0)


def measure_gain(setup: GainSetup, *, frequency_hz: NDArray[np.float64], rs_ohm: float,
                 segment_length: int, output_volts_per_fs: float | None, band: Band) -> GainEstimate:
    """Gain from the source EMF to the output, on the given bins.

    Single frequency: ``G = (A_out k_out) / (sqrt(2) V_in)`` for a one-channel
    tone (A_out the fitted peak in full scale, k the volts per full scale),
    or ``G = A_out / A_in`` for a two-channel one.  With `zin_ohm`, a gain
    measured at the DUT terminals is multiplied by ``Zin / (Zin + Rs)``.
    With a response capture, ``|G(f)| = G(f_t) |H(f)| / |H(f_t)|``.
    """
    if setup.tone is not None:
        tone = setup.tone
        out_fit = _tone_fit(tone, tone.channel, setup.tone_frequency_hz)
        rel_var = (out_fit.amplitude_std / out_fit.amplitude) ** 2
        if setup.tone_input_channel is not None:
            in_fit = _tone_fit(tone, setup.tone_input_channel, out_fit.frequency_hz)
            gain = out_fit.amplitude / in_fit.amplitude
            rel_var += (in_fit.amplitude_std / in_fit.amplitude) ** 2
            what = f"two-channel tone at {out_fit.frequency_hz:.1f} Hz"
        else:
            vpfs = tone.volts_per_fs if tone.volts_per_fs is not None else output_volts_per_fs
            if vpfs is None:
                tone.volts_per_fs_or_raise("a gain from a one-channel tone")
            in_vrms = float(setup.tone_input_vrms)  # type: ignore[arg-type]
            gain = out_fit.rms * float(vpfs) / in_vrms
            what = f"tone at {out_fit.frequency_hz:.1f} Hz, {in_vrms:.4g} V RMS stated at the source"
        f_gain = out_fit.frequency_hz
        gain_rel_std = math.sqrt(rel_var)
    else:
        gain = 10 ** (float(setup.gain_db) / 20)  # type: ignore[arg-type]
        f_gain = setup.gain_frequency_hz
        gain_rel_std = 0.0
        what = f"stated gain {setup.gain_db:g} dB at {f_gain:g} Hz"
    if setup.zin_ohm is not None:
        gain *= setup.zin_ohm / (setup.zin_ohm + rs_ohm)
        what += f", referred to the source EMF through Zin {setup.zin_ohm:g} ohm"
    response_rel_std = 0.0
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
        shape = np.interp(frequency_hz, h.frequency_hz, mag) / float(np.interp(f_gain, h.frequency_hz, mag))
        power_gain = (gain * shape) ** 2
        in_band = (h.frequency_hz >= band.low_hz) & (h.frequency_hz <= band.high_hz)
        response_rel_std = float(np.mean(h.magnitude_std_rel()[in_band]) / math.sqrt(max(in_band.sum(), 1)))
        reference = f"H(f) from {resp.label} (H1), scaled to the {what}"
    else:
        power_gain = np.full(frequency_hz.shape, gain ** 2)
        reference = f"{what}; response assumed flat"
    return GainEstimate(20 * math.log10(gain), f_gain, gain_rel_std, power_gain, response_rel_std,
                        reference)


def _resolved(weights: NDArray[np.float64], measured: NDArray[np.float64], floor: NDArray[np.float64] | None,
              *, dof_measured: float, dof_floor: float | None, enbw_bins: float) -> bool:
    """True if the excess of `measured` over `floor` in these weighted bins exceeds 3 sigma."""
    if floor is None:
        return True
    m = float(np.dot(weights, measured))
    fl = float(np.dot(weights, floor))
    sm = band_relative_std(weights, measured, dof=dof_measured, enbw_bins=enbw_bins) * m
    sf = band_relative_std(weights, floor, dof=dof_floor, enbw_bins=enbw_bins) * fl
    return m - fl > 3.0 * math.hypot(sm, sf)


def _line_mask(search: LineSearch, size: int) -> NDArray[np.bool_]:
    mask = np.zeros(size, dtype=bool)
    for line in search.lines:
        mask[line.bins[0]:line.bins[1] + 1] = True
    return mask


def _check_rates(fs: float, label: str, inputs: dict[str, Any]) -> None:
    """Every capture (spectrum traces have no sample rate to compare) at one rate."""
    for role, item in inputs.items():
        if isinstance(item, Capture) and item.sample_rate_hz != fs:
            raise CaptureError(f"the {role} capture {item.label} was recorded at {item.sample_rate_hz:g} Hz "
                               f"but {label} at {fs:g} Hz: record all captures at one rate")


def _with_vpfs(cap: NoiseInput | None, vpfs: float | None, role: str, label: str) -> NoiseInput | None:
    """Give an uncalibrated capture the terminated capture's calibration; refuse a different one."""
    if cap is None or isinstance(cap, Psd):
        return cap
    if cap.volts_per_fs is None:
        return cap.replace(volts_per_fs=vpfs) if vpfs is not None else cap
    if vpfs is not None and cap.volts_per_fs != vpfs:
        raise CaptureError(f"the {role} capture has a different calibration ({cap.volts_per_fs:g} "
                           f"V/FS) from {label} ({vpfs:g} V/FS): all noise captures must come from "
                           f"one analyzer input at one gain setting")
    return cap


def _label(x: NoiseInput) -> str:
    return x.label if isinstance(x, Capture) else "spectrum trace"


def analyze_gain_method(*, terminated: NoiseInput | Sequence[NoiseInput], gain: GainSetup, rs_ohm: float,
                        temperature_k: float = T0_K, floor: NoiseInput | None = None,
                        shorted: NoiseInput | None = None, band: Band = Band(20.0, 20_000.0),
                        weighting: str = "none", detector: str = "rms", segment_length: int | None = None,
                        mains_hz: float | None = None, flicker_range_hz: tuple[float, float] | None = None,
                        flicker_free_slope: bool = False, stated: StatedUncertainty = StatedUncertainty(),
                        reference_output_vrms: float | None = None,
                        progress: Progress | None = None) -> AnalysisResult:
    """Gain, input-referred noise density, EIN and noise figure from captures.

    Parameters
    ----------
    terminated : Capture, Psd, or a sequence of them
        DUT output with its input terminated in `rs_ohm`; calibrated.  Several
        captures of the one condition are pooled, and their scatter and drift
        reported.
    gain : GainSetup
        How the gain is known.
    rs_ohm : float
        Source resistance in ohm, > 0.
    temperature_k : float
        Physical temperature of the source resistor in kelvin (290 K).
    floor : Capture or Psd, optional
        Analyzer alone, input terminated; subtracted in linear power.
    shorted : Capture or Psd, optional
        DUT output with its input shorted: the DUT's voltage noise alone.
    band : Band
        Integration band (20 Hz-20 kHz).
    weighting : str
        ``none``, ``A``, ``C``, ``468`` or ``468-2k``.
    detector : str
        ``rms``, or ``qp`` (the BS.468-4 quasi-peak meter, with ``468`` only).
    segment_length : int, optional
        Welch segment length; default about 3 Hz bins.
    mains_hz : float, optional
        Mains fundamental; found among 50 and 60 Hz when omitted.
    flicker_range_hz : (float, float), optional
        Range of the 1/f fit (default: the band's bottom to 10 kHz).
    flicker_free_slope : bool
        Fit the 1/f exponent too.
    stated : StatedUncertainty
        Limits of the user-stated quantities, for the uncertainty budget.
    reference_output_vrms : float, optional
        Output level for an SNR figure.
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
    if detector not in DETECTORS:
        raise ParameterError(f"detector {detector!r} is not one of {', '.join(DETECTORS)}")
    if detector == "qp" and weighting != "468":
        raise ParameterError("--detector qp is defined only with --weighting 468 (ITU-R BS.468-4); "
                             "use the RMS detector with other weightings")
    if reference_output_vrms is not None and not (math.isfinite(reference_output_vrms)
                                                  and reference_output_vrms > 0):
        raise ParameterError(f"reference output {reference_output_vrms!r} V must be > 0")
    runs = list(terminated) if isinstance(terminated, (list, tuple)) else [terminated]
    if not runs:
        raise ParameterError("give at least one terminated capture")
    first = runs[0]
    fs = first.sample_rate_hz
    if isinstance(first, Capture):
        _check_rates(fs, _label(first), {"floor": floor, "shorted": shorted, "tone": gain.tone,
                                         "response": gain.response,
                                         **{f"repeat {i + 1}": r for i, r in enumerate(runs[1:])}})
    else:
        if first.enbw_hz > band.width_hz:
            raise ParameterError(f"the trace's noise bandwidth ({first.enbw_hz:g} Hz) is coarser than the "
                                 f"band {band.label()}: narrow the RBW or widen the band")
        if not (first.frequency_hz[0] <= band.low_hz and band.high_hz <= first.frequency_hz[-1]):
            raise ParameterError(f"the trace covers {first.frequency_hz[0]:g}-{first.frequency_hz[-1]:g} Hz, "
                                 f"not the whole band {band.label()}: choose a band inside it")
    band.check_within(fs)
    if isinstance(first, Psd):
        seg = first.segment_length
        vpfs = None
    else:
        seg = default_segment_length(fs) if segment_length is None else int(segment_length)
        vpfs = first.volts_per_fs_or_raise("EIN and noise figure")
    runs = [_with_vpfs(r, vpfs, "repeated terminated", _label(first)) for r in runs]
    floor = _with_vpfs(floor, vpfs, "floor", _label(first))
    shorted = _with_vpfs(shorted, vpfs, "shorted", _label(first))

    notes: list[str] = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", BenchWarning)
        p_runs = [capture_psd(r, segment_length=seg, progress=progress) for r in runs]
        p_term = pool_psds(p_runs)
        p_floor = capture_psd(floor, segment_length=seg, progress=progress) if floor is not None else None
        p_short = capture_psd(shorted, segment_length=seg, progress=progress) if shorted is not None else None
        for p, role in ((p_floor, "floor"), (p_short, "shorted")):
            if p is not None and p.frequency_hz.shape != p_term.frequency_hz.shape:
                raise CaptureError(f"the {role} spectrum has other frequency bins than the terminated "
                                   f"one: use one segment length (or one instrument setting) for all")
        f = p_term.frequency_hz
        g = measure_gain(gain, frequency_hz=f, rs_ohm=rs_ohm, segment_length=seg,
                         output_volts_per_fs=vpfs, band=band)
        w_band = band_bin_weights(f, band, weighting=weighting)
        used = w_band > 0
        if not used.any():
            raise ParameterError(f"no spectrum bin lies in the band {band.label()}")

        # Lines, found on each spectrum, are replaced by their baseline for the broadband figures.
        s_term = find_lines(p_term, mains_hz=mains_hz)
        s_floor = find_lines(p_floor, mains_hz=s_term.mains_hz) if p_floor is not None else None
        s_short = find_lines(p_short, mains_hz=s_term.mains_hz) if p_short is not None else None
        term_clean = s_term.cleaned
        floor_clean = s_floor.cleaned if s_floor is not None else None

        enbw_bins = p_term.enbw_hz / p_term.bin_width_hz
        m_band = float(np.dot(w_band[used], term_clean[used]))
        m_rel = band_relative_std(w_band, term_clean, dof=p_term.dof, enbw_bins=enbw_bins)
        if p_floor is not None:
            f_band = float(np.dot(w_band[used], floor_clean[used]))
            f_rel = band_relative_std(w_band, floor_clean, dof=p_floor.dof, enbw_bins=enbw_bins)
            margin_db = check_band_margin(measured_v2=m_band, floor_v2=f_band, measured_rel_std=m_rel,
                                          floor_rel_std=f_rel,
                                          what=f"terminated capture {_label(first)}")
            out_diff = subtract_floor(term_clean, floor_clean).difference
            out_diff_spurs = subtract_floor(p_term.psd_per_hz, p_floor.psd_per_hz).difference
        else:
            f_band = f_rel = None
            margin_db = None
            out_diff = term_clean
            out_diff_spurs = p_term.psd_per_hz
            notes.append("no floor capture given: the analyzer's own noise is included in every "
                         "figure (they read high)")
    notes.extend(str(w.message) for w in caught if issubclass(w.category, BenchWarning))
    for w in caught:
        if not issubclass(w.category, BenchWarning):
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)

    # Input-referred density (1) and the band figures (3), (4).
    e2_diff = out_diff / g.power_gain
    ein_power = float(np.dot(w_band[used], e2_diff[used]))
    if not ein_power > 0:
        raise MeasurementError("the input-referred noise came out at zero or below: check the captures")
    ein = math.sqrt(ein_power)
    ein_spurs = math.sqrt(max(float(np.dot(w_band[used], (out_diff_spurs / g.power_gain)[used])), ein_power))
    noise_factor = band_noise_factor(f, e2_diff, band, weighting=weighting, rs_ohm=rs_ohm,
                                     temperature_k=temperature_k)
    b_w = float(w_band.sum())
    thermal = math.sqrt(float(thermal_density_v2_per_hz(resistance_ohm=rs_ohm,
                                                         temperature_k=temperature_k)) * b_w)
    out_noise = math.sqrt(max(float(np.dot(w_band[used], out_diff[used])), 0.0))
    out_spurs = math.sqrt(max(float(np.dot(w_band[used], out_diff_spurs[used])), 0.0))
    out_raw = math.sqrt(float(np.dot(w_band[used], p_term.psd_per_hz[used])))

    # Quasi-peak reading (BS.468-4), floor-corrected on the RMS ratio, referred through G(1 kHz).
    ein_reported = ein
    if detector == "qp":
        ein_reported = _qp_ein(runs[0], p_term, p_floor, w_band, g, notes)

    # Shorted input: the DUT's voltage noise alone, referred through the gain at its terminals.
    en_diff = None
    if p_short is not None:
        terminals = 1.0 if gain.zin_ohm is None else (gain.zin_ohm + rs_ohm) / gain.zin_ohm
        short_clean = s_short.cleaned  # type: ignore[union-attr]
        short_diff = (subtract_floor(short_clean, floor_clean).difference
                      if floor_clean is not None else short_clean)
        en_diff = short_diff / (g.power_gain * terminals ** 2)
        if p_floor is not None and not _resolved(w_band, short_clean, floor_clean, dof_measured=p_short.dof,
                                                 dof_floor=p_floor.dof, enbw_bins=enbw_bins):
            notes.append(f"the shorted capture {_label(shorted)} cannot be told from the analyzer "
                         f"floor in the band: its voltage noise is not reported")
            en_diff = None

    spots = _spots(f, band, fs, p_term, p_floor, p_short, term_clean, floor_clean,
                   s_short.cleaned if s_short is not None else None, out_diff, e2_diff, en_diff,
                   rs_ohm, temperature_k, notes)
    at_1k = next((s for s in spots if s.freq_hz == 1000.0), None)

    # Hum and spurs, referred to the input through the gain at their frequency.
    spurs = tuple(SpurValue(ln.freq_hz, ln.vrms, ln.vrms / math.sqrt(float(np.interp(ln.freq_hz, f, g.power_gain))),
                            ln.family, ln.harmonic, ln.excess_db) for ln in s_term.lines)

    # 1/f corner: on the voltage noise (shorted) when given, else on the total input noise.
    flicker, flicker_on = _flicker(f, en_diff, e2_diff, s_term, p_term, band, flicker_range_hz,
                                   flicker_free_slope, notes)

    # Uncertainty budgets.
    n0 = 4 * BOLTZMANN_J_PER_K * T0_K * rs_ohm * b_w
    dut_rel = dut_power_rel_std(measured=m_band, measured_rel_std=m_rel, floor=f_band, floor_rel_std=f_rel)
    budgets = {
        "ein_db": ein_budget(value_db=float(vrms_to_dbu(ein_reported)), dut_rel_std=dut_rel,
                             floor_corrected=p_floor is not None, gain_kind=gain.kind,
                             gain_rel_std=g.gain_rel_std, stated=stated, response_rel_std=g.response_rel_std),
        "noise_figure_db": nf_budget(quantity="noise_figure_db", noise_factor=noise_factor,
                                     excess_over_n0=ein_power / n0, dut_rel_std=dut_rel,
                                     floor_corrected=p_floor is not None, gain_kind=gain.kind,
                                     gain_rel_std=g.gain_rel_std, stated=stated,
                                     response_rel_std=g.response_rel_std),
        "gain_db": gain_budget(value_db=g.gain_db, gain_kind=gain.kind, gain_rel_std=g.gain_rel_std,
                               stated=stated),
    }
    if at_1k is not None and at_1k.noise_figure_db is not None:
        budgets["nf_at_1khz_db"] = _spot_nf_budget(f, 1000.0, p_term, p_floor, term_clean, floor_clean,
                                                   g, gain, stated, rs_ohm, temperature_k)
    nf_band_db = float(power_db(noise_factor)) if noise_factor > 0 else None
    if nf_band_db is not None and nf_band_db + budgets["noise_figure_db"].expanded_db < 0.0:
        notes.append(f"the band noise figure ({nf_band_db:.2f} dB) is below 0 dB beyond its uncertainty: "
                     f"less noise than {rs_ohm:g} ohm makes by itself at {temperature_k:.1f} K, which no "
                     f"amplifier can give; check the gain (the tone's stated level and where it was "
                     f"read), the calibration, --rs and --temperature-k, and that the input was "
                     f"terminated in Rs")
    uncertainty = {"coverage_factor": 2.0, "stated": stated.describe(),
                   **{k: b.expanded_db for k, b in budgets.items()},
                   "budgets": {k: b.to_dict() for k, b in budgets.items()}}

    repeats = _repeats(p_runs, p_floor, floor_clean, g, w_band, used, f, band, weighting, rs_ohm,
                       temperature_k, mains_hz=s_term.mains_hz) if len(p_runs) > 1 else None
    if repeats is not None and abs(repeats.noise_figure_drift_db_per_capture) * (repeats.n - 1) > \
            2 * max(repeats.noise_figure_std_db, 1e-12):
        notes.append(f"the noise figure drifts by {repeats.noise_figure_drift_db_per_capture:+.3f} dB per "
                     f"capture across the {repeats.n} repeats: let the setup settle and measure again")

    snr = (float(20 * math.log10(reference_output_vrms / out_noise))
           if reference_output_vrms is not None and out_noise > 0 else None)

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
        "lines": s_term.lines,
        "flicker": flicker,
    }
    files = {"terminated": [_path(r) for r in runs] if len(runs) > 1 else _path(runs[0]),
             "floor": _path(floor), "shorted": _path(shorted),
             "tone": _path(gain.tone), "response": _path(gain.response)}
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
        detector=detector,
        floor_corrected=p_floor is not None,
        floor_margin_db=margin_db,
        ein_vrms=ein_reported,
        ein_dbu=float(vrms_to_dbu(ein_reported)),
        ein_dbv=float(vrms_to_dbv(ein_reported)),
        ein_rms_dbu=float(vrms_to_dbu(ein)),
        ein_with_spurs_dbu=float(vrms_to_dbu(ein_spurs * ein_reported / ein)),
        thermal_ein_dbu=float(vrms_to_dbu(thermal)),
        noise_factor=noise_factor,
        noise_figure_db=nf_band_db if nf_band_db is not None else math.nan,
        nf_at_1khz_db=at_1k.noise_figure_db if at_1k else None,
        input_density_at_1khz_v_per_rthz=at_1k.input_density_v_per_rthz if at_1k else None,
        output_noise_vrms=out_noise,
        output_noise_dbu=float(vrms_to_dbu(out_noise)),
        output_noise_with_spurs_vrms=out_spurs,
        output_noise_uncorrected_vrms=out_raw,
        voltage_noise_at_1khz_v_per_rthz=at_1k.voltage_noise_v_per_rthz if at_1k else None,
        voltage_noise_band_vrms=en_band,
        flicker_corner_hz=flicker.corner_hz if flicker else None,
        flicker_corner_std_hz=flicker.corner_std_hz if flicker else None,
        white_density_v_per_rthz=flicker.white_density_v_per_rthz if flicker else None,
        flicker_slope=flicker.slope if flicker else None,
        flicker_fit_on=flicker_on,
        snr_db=snr,
        reference_output_vrms=reference_output_vrms,
        mains_hz=s_term.mains_hz,
        spurs=spurs,
        hum_hints=tuple(hum_hints(s_term.lines)),
        uncertainty=uncertainty,
        repeats=repeats,
        sample_rate_hz=fs,
        segment_length=seg,
        spectrum_window=p_term.window,
        rbw_hz=p_term.enbw_hz,
        n_averages=p_term.n_averages,
        dof=p_term.dof,
        volts_per_fs=vpfs,
        files=files,
        spot=tuple(spots),
        notes=tuple(notes),
        budgets=budgets,
        spectra=spectra,
    )


def _path(x: Any) -> str | None:
    p = getattr(x, "path", None)
    return str(p) if p is not None else None


def _spots(f, band, fs, p_term, p_floor, p_short, term_clean, floor_clean, short_clean, out_diff,
           e2_diff, en_diff, rs_ohm, temperature_k, notes) -> list[SpotValue]:
    """One-third-octave spot values; a band narrower than one bin is not listed."""
    spot_band = Band(band.low_hz, min(band.high_hz, fs / 2 / 10 ** (1 / 20)))
    centres = [c for c in third_octave_centres_hz(spot_band)
               if c[1] * (10 ** (1 / 20) - 10 ** (-1 / 20)) >= p_term.bin_width_hz]
    spot_w = [third_octave_weights(f, exact) for _label, exact in centres]
    e2_spot = spot_means(spot_w, e2_diff)
    out_spot = spot_means(spot_w, out_diff)
    nf_spot = spot_noise_factor(e2_spot, rs_ohm=rs_ohm, temperature_k=temperature_k)
    en_spot = spot_means(spot_w, en_diff) if en_diff is not None else None
    enbw_bins = p_term.enbw_hz / p_term.bin_width_hz
    floor_dof = p_floor.dof if p_floor is not None else None
    spots, low_margin = [], []
    for i, ((label, _exact), w_full) in enumerate(zip(centres, spot_w)):
        span = _nonzero_span(w_full)  # a band's few bins: the rest weigh nothing
        w_s, term_s = w_full[span], term_clean[span]
        floor_s = floor_clean[span] if floor_clean is not None else None
        ok = e2_spot[i] > 0 and _resolved(w_s, term_s, floor_s, dof_measured=p_term.dof,
                                          dof_floor=floor_dof, enbw_bins=enbw_bins)
        m_band = float(np.dot(w_s, term_s))
        f_band = float(np.dot(w_s, floor_s)) if floor_s is not None else None
        m_db = float(power_db(m_band / f_band)) if f_band is not None else None
        if m_db is not None and m_db < 3.0:
            low_margin.append(label)
        en_ok = (en_spot is not None and en_spot[i] > 0
                 and _resolved(w_s, short_clean[span], floor_s, dof_measured=p_short.dof,
                               dof_floor=floor_dof, enbw_bins=enbw_bins))
        rel = dut_power_rel_std(
            measured=m_band, measured_rel_std=band_relative_std(w_s, term_s, dof=p_term.dof, enbw_bins=enbw_bins),
            floor=f_band, floor_rel_std=(band_relative_std(w_s, floor_s, dof=floor_dof, enbw_bins=enbw_bins)
                                         if floor_s is not None else None))
        spots.append(SpotValue(
            freq_hz=label,
            input_density_v_per_rthz=math.sqrt(e2_spot[i]) if ok else None,
            noise_figure_db=float(power_db(nf_spot[i])) if ok and nf_spot[i] > 0 else None,
            output_density_v_per_rthz=math.sqrt(out_spot[i]) if ok else None,
            floor_margin_db=m_db,
            voltage_noise_v_per_rthz=math.sqrt(en_spot[i]) if en_ok else None,
            # A density's amplitude has half the relative uncertainty of its power: U = 2 * 8.686 * rel / 2 dB.
            input_density_expanded_db=float(8.686 * rel) if ok and math.isfinite(rel) else None,
        ))
    if low_margin:
        notes.append("less than 3 dB above the analyzer floor at " +
                     ", ".join(f"{x:g} Hz" for x in low_margin) + ": those spot values are uncertain")
    if not any(s.input_density_v_per_rthz for s in spots):
        notes.append("no spot frequency is resolved above the floor")
    return spots


def _nonzero_span(weights: NDArray[np.float64]) -> slice:
    """The slice from the first to the last non-zero weight."""
    nz = np.flatnonzero(weights)
    return slice(int(nz[0]), int(nz[-1]) + 1) if nz.size else slice(0, 0)


def _flicker(f, en_diff, e2_diff, s_term, p_term, band, range_hz, free_slope, notes):
    from .noise.flicker import fit_flicker
    target, on = ((en_diff, "shorted (amplifier voltage noise)") if en_diff is not None
                  else (e2_diff, "terminated (total input noise, source included)"))
    rng = range_hz if range_hz is not None else (max(band.low_hz, 2 * p_term.bin_width_hz),
                                                 min(band.high_hz, 10_000.0))
    try:
        fit = fit_flicker(f, target, dof=p_term.dof, enbw_bins=p_term.enbw_hz / p_term.bin_width_hz,
                          range_hz=rng, exclude=_line_mask(s_term, f.size), free_slope=free_slope)
    except MeasurementError as err:
        notes.append(f"no 1/f corner: {err}")
        return None, None
    if fit.corner_hz < rng[0] / 3:
        notes.append(f"the 1/f corner ({fit.corner_hz:.2g} Hz) lies below the fit range's bottom "
                     f"({rng[0]:g} Hz): it is an extrapolation")
    return fit, on


def _qp_ein(capture: NoiseInput, p_term: Psd, p_floor: Psd | None, w_band, g: GainEstimate,
            notes: list[str]) -> float:
    from .dsp.quasipeak import qp_reading
    if not isinstance(capture, Capture):
        raise ParameterError("a quasi-peak reading needs a time-domain capture, not a spectrum trace")
    x = capture.read(max_frames=int(_MAX_QP_SECONDS * capture.sample_rate_hz))
    reading = qp_reading(x * float(capture.volts_per_fs), sample_rate_hz=capture.sample_rate_hz)
    qp = reading.median
    if p_floor is not None:
        ratio = float(np.dot(w_band, p_floor.psd_per_hz) / np.dot(w_band, p_term.psd_per_hz))
        qp *= math.sqrt(max(1.0 - ratio, 0.0))
        notes.append("quasi-peak reading floor-corrected by the weighted RMS ratio of floor to DUT "
                     "(assumes the same peak-to-RMS behaviour for both noises)")
    g_1k = math.sqrt(float(np.interp(1000.0, p_term.frequency_hz, g.power_gain)))
    notes.append(f"quasi-peak: median indication over {reading.seconds_used:.1f} s after settling "
                 f"(95th percentile {reading.p95 / reading.median:.2f} times higher), referred through "
                 f"the gain at 1 kHz")
    return qp / g_1k


def _spot_nf_budget(f, centre_hz, p_term, p_floor, term_clean, floor_clean, g, gain, stated, rs_ohm,
                    temperature_k) -> Budget:
    w = third_octave_weights(f, centre_hz)
    enbw_bins = p_term.enbw_hz / p_term.bin_width_hz
    m = float(np.dot(w, term_clean))
    m_rel = band_relative_std(w, term_clean, dof=p_term.dof, enbw_bins=enbw_bins)
    fl = fl_rel = None
    if p_floor is not None:
        fl = float(np.dot(w, floor_clean))
        fl_rel = band_relative_std(w, floor_clean, dof=p_floor.dof, enbw_bins=enbw_bins)
    e2 = (m - (fl or 0.0)) / float(np.dot(w, g.power_gain)) * w.sum()
    b = float(w.sum())
    n0 = 4 * BOLTZMANN_J_PER_K * T0_K * rs_ohm * b
    nt = float(thermal_density_v2_per_hz(resistance_ohm=rs_ohm, temperature_k=temperature_k)) * b
    factor = 1 + (e2 - nt) / n0
    return nf_budget(quantity="nf_at_1khz_db", noise_factor=factor, excess_over_n0=e2 / n0,
                     dut_rel_std=dut_power_rel_std(measured=m, measured_rel_std=m_rel, floor=fl,
                                                   floor_rel_std=fl_rel),
                     floor_corrected=p_floor is not None, gain_kind=gain.kind,
                     gain_rel_std=g.gain_rel_std, stated=stated, response_rel_std=g.response_rel_std)


def _repeats(p_runs, p_floor, floor_clean, g, w_band, used, f, band, weighting, rs_ohm, temperature_k,
             *, mains_hz) -> RepeatSummary:
    eins, nfs = [], []
    for p in p_runs:
        clean = find_lines(p, mains_hz=mains_hz).cleaned
        diff = clean - floor_clean if floor_clean is not None else clean
        e2 = diff / g.power_gain
        eins.append(float(vrms_to_dbu(math.sqrt(max(float(np.dot(w_band[used], e2[used])), 1e-300)))))
        nfs.append(float(power_db(max(band_noise_factor(f, e2, band, weighting=weighting, rs_ohm=rs_ohm,
                                                        temperature_k=temperature_k), 1e-12))))
    idx = np.arange(len(nfs), dtype=np.float64)
    slope = float(np.polyfit(idx, nfs, 1)[0]) if len(nfs) > 1 else 0.0
    return RepeatSummary(len(nfs), tuple(eins), tuple(nfs), float(np.std(eins, ddof=1)),
                         float(np.std(nfs, ddof=1)), slope)
