"""How the DUT's gain is known: a tone (one or two channels), a stated gain, and the response shape.

See docs/method.md ("Gain") for the equations.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..capture import Capture, SampleStats
from ..dsp.weighting import Band
from ..errors import MeasurementError, ParameterError

__all__ = ["GainSetup", "GainEstimate", "measure_gain"]

_MAX_TONE_FRAMES = 1 << 17  # 1.4 s at 96 kHz, 2.7 s at 48 kHz: ample for a tone level, cheap to fit


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
    from ..dsp.tones import fit_sine, locate_tone
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
            gain = out_fit.rms * float(vpfs) / in_vrms  # type: ignore[arg-type]  # raised above when None
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
        from ..dsp.response import h1_response
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
