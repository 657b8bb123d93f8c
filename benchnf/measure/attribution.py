"""Output noise attributed to its sources by coherence with reference channels, and the output conditioned on
them (the DUT's own noise with the references' contributions removed).

With the output ``y`` and q references ``r`` (a probe on the supply rail through a blocking capacitor, a
mains pick-up loop) recorded together, per bin (Bendat and Piersol, *Random Data*, 4th ed., 2010, §7.3 (section from memory)):

- the part of the output coherent with all references, ``S_y:r = S_yr S_rr^-1 S_ry``, and the conditioned
  output ``S_yy|r = S_yy - S_y:r``; the estimate of the conditioned spectrum from n averages is biased low by
  ``(n - q) / n`` and is corrected by its inverse (ibid. §9.3.4 (section from memory), with n = nu / 2 for Welch's nu);
- one reference's ordinary coherent output ``gamma^2_iy S_yy``, and its part not shared with the other
  references, ``S_yy|(r without i) - S_yy|r`` (the conditioned spectra separate sources that are partly
  coherent with each other);
- over the band's noise bins (hum lines excluded) each part as a fraction of the output noise power, and per
  hum line the fraction of the line's power. The uncertainty of every fraction is the delete-one-batch
  jackknife over contiguous batches of segments (Efron and Tibshirani, An Introduction to the Bootstrap,
  1993, ch. 11), expanded with Student's t for the b - 1 degrees of freedom of b batches (95 %).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np
from numpy.typing import NDArray

from ..capture import Capture
from ..dsp.coherence import SpectralMatrix, spectral_matrix
from ..dsp.spectrum import Psd
from ..errors import CaptureError, ParameterError

__all__ = ["parse_reference", "Reference", "LineShare", "Attribution", "AttributionTotal", "Attributed", "attribute",
           "attributed_output", "describe", "share_text",
           "BATCHES"]

BATCHES = 32  # jackknife groups: a stable variance (31 degrees of freedom), each group still many segments


def parse_reference(text: str) -> tuple[int, str]:
    """``N`` or ``N=NAME``: a channel carrying a reference and the name the results give it.

    Raises
    ------
    ParameterError
    """
    number, _, name = text.partition("=")
    try:
        channel = int(number.strip())
    except ValueError:
        channel = -1
    if channel < 0:
        raise ParameterError(f"{text!r}: a reference is a channel number (from 0), optionally =NAME")
    name = name.strip() or f"channel {channel}"
    if not name.isprintable() or len(name) > 40:
        raise ParameterError(f"{text!r}: a reference's name is up to 40 printable characters")
    return channel, name


@dataclass(frozen=True)
class Reference:
    """A channel of the terminated recording that carries a suspected source, with its name."""

    capture: Capture
    name: str


@dataclass(frozen=True)
class LineShare:
    """The fraction of one hum line's output power coherent with a reference (unique to it)."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {"freq_hz": dict(exclusiveMinimum=0)}

    freq_hz: float
    fraction: float
    fraction_u95: float


@dataclass(frozen=True)
class Attribution:
    """What one reference explains of the output (band noise without lines, and each hum line)."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {"channel": dict(minimum=0), "fraction_u95": dict(minimum=0)}

    reference: str
    channel: int
    fraction_of_output_power: float  # its part not shared with the other references
    fraction_u95: float
    coherent_fraction: float  # its ordinary coherent output, shared parts included
    lines: tuple[LineShare, ...]


@dataclass(frozen=True)
class AttributionTotal:
    """What all references together explain; the figures of the result are of the rest."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {"fraction_u95": dict(minimum=0), "batches": dict(minimum=2)}

    fraction_of_output_power: float
    fraction_u95: float
    batches: int


@dataclass(frozen=True)
class Attributed:
    """The conditioned output spectrum, the attribution, and the arrays for plots."""

    conditioned: Psd
    unconditioned: Psd
    references: tuple[Attribution, ...]
    total: AttributionTotal
    coherence: tuple[NDArray[np.float64], ...]  # each reference's ordinary coherence with the output


def _matrix(outputs: Sequence[Capture], refs: Sequence[Reference], segment_length: int,
            progress: Any) -> SpectralMatrix:
    """The spectral matrix of the output channel(s) (one, or two inputs on one output) and the references."""
    output = outputs[0]
    caps = [*outputs, *(r.capture for r in refs)]
    for r in refs:
        if r.capture.n_frames != output.n_frames or r.capture.sample_rate_hz != output.sample_rate_hz:
            raise CaptureError(f"reference {r.name!r} is not a channel of {output.label}: the references must be "
                               f"recorded with the output, in one recording")
        if r.capture.channel in {o.channel for o in outputs}:
            raise ParameterError(f"reference {r.name!r} is an output channel ({r.capture.channel}): give the "
                                 f"channel that carries the reference")

    def blocks() -> Any:
        for parts in zip(*(c.blocks() for c in caps)):
            if progress is not None:
                progress(parts[0].size)
            yield np.stack(parts, axis=1)
    scales = np.array([*(o.volts_per_fs_or_raise("the attribution") for o in outputs), *([1.0] * len(refs))])
    return spectral_matrix(blocks(), n_frames=output.n_frames, sample_rate_hz=output.sample_rate_hz,
                           segment_length=segment_length, batches=BATCHES, scales=scales)


def _coherent(g: NDArray[np.complex128], refs: Sequence[int], pair: tuple[int, int]) -> NDArray[np.complex128]:
    """``S_ar S_rr^-1 S_rb`` per bin for the output channels ``pair = (a, b)`` and the reference indices `refs`
    (zero without references): what a and b share through the references."""
    if not refs:
        return np.zeros(g.shape[-1], dtype=np.complex128)
    idx, (a, b) = list(refs), pair
    srr = np.moveaxis(g[np.ix_(idx, idx)], -1, 0)  # (bins, q, q)
    scale = np.einsum("fii->f", srr).real / len(idx)
    srr = srr + (1e-12 * scale + 1e-300)[:, None, None] * np.eye(len(idx))  # DC: the means were removed
    sol = np.linalg.solve(srr, np.moveaxis(g[idx, b], -1, 0)[..., None])[..., 0]
    return np.einsum("fq,fq->f", np.moveaxis(g[idx, a], -1, 0).conj(), sol)


def _conditioned(g: NDArray[np.complex128], refs: Sequence[int], n: float,
                 pair: tuple[int, int]) -> NDArray[np.complex128]:
    """``S_ab|r``: the output's (co-)spectrum conditioned on `refs`, corrected for the bias (n - q) / n."""
    a, b = pair
    return (g[a, b] - _coherent(g, refs, pair)) * (n / (n - len(refs)))


def _fractions(g: NDArray[np.complex128], refs: Sequence[int], n: float, noise_w: NDArray[np.float64],
               lines: Sequence[tuple[int, int]], pair: tuple[int, int]) -> NDArray[np.float64]:
    """[total, unique_1..q, ordinary_1..q, then per line: unique_1..q] as fractions of the output power (the
    co-spectrum's for two inputs on one output)."""
    out_power = g[pair].real
    everyone = list(refs)
    cond_all = _conditioned(g, everyone, n, pair).real
    parts = [out_power - cond_all]
    parts += [_conditioned(g, [j for j in everyone if j != i], n, pair).real - cond_all for i in everyone]
    parts += [out_power - _conditioned(g, [i], n, pair).real for i in everyone]
    out = [float(np.dot(noise_w, p)) / float(np.dot(noise_w, out_power)) for p in parts]
    for lo, hi in lines:
        total = float(out_power[lo:hi + 1].sum())
        out += [float(p[lo:hi + 1].sum()) / total for p in parts[1:len(everyone) + 1]]
    return np.asarray(out)


def attribute(output: Capture, refs: Sequence[Reference], *, segment_length: int, noise_weights: Callable[[Psd], Any],
              lines_of: Callable[[Psd], Sequence[tuple[float, int, int]]], progress: Any = None,
              other: Capture | None = None) -> Attributed:
    """The output conditioned on the references, and what each explains (see the module's docstring).

    `noise_weights(psd)` gives the band's weights with the hum lines' bins at zero, and `lines_of(psd)` the
    hum lines ``(frequency, first bin, last bin)``, both on the unconditioned output. With `other` (a second
    input on the same output) the output is the two inputs' co-spectrum, conditioned as ``S_xy|r`` with the
    variance of a co-spectrum of the conditioned channels (``nu (n - q) / n`` degrees of freedom).
    """
    outputs = [output] if other is None else [output, other]
    sm = _matrix(outputs, refs, segment_length, progress)
    q, pair = len(refs), ((0, 0) if other is None else (0, 1))
    ref_idx = list(range(len(outputs), len(outputs) + q))
    g = sm.density()
    n_full = sm.dof / 2.0
    unconditioned = _output_psd(sm, g, [], n_full, pair)
    w = np.asarray(noise_weights(unconditioned), dtype=np.float64)
    lines = list(lines_of(unconditioned))
    bins = [(lo, hi) for _f, lo, hi in lines]
    full = _fractions(g, ref_idx, n_full, w, bins, pair)
    b = sm.n_batches
    leave = np.array([_fractions(sm.density(k), ref_idx, n_full * (1 - sm.counts[k] / sm.n_averages), w, bins, pair)
                      for k in range(b)])
    from scipy.stats import t as student_t
    k95 = float(student_t.ppf(0.975, b - 1))  # the jackknife variance has b - 1 degrees of freedom
    u95 = k95 * np.sqrt((b - 1) / b * ((leave - leave.mean(axis=0)) ** 2).sum(axis=0))
    atts = []
    for i, ref in enumerate(refs):
        shares = tuple(LineShare(f, float(full[1 + 2 * q + j * q + i]), float(u95[1 + 2 * q + j * q + i]))
                       for j, (f, _lo, _hi) in enumerate(lines))
        atts.append(Attribution(ref.name, ref.capture.channel, float(full[1 + i]), float(u95[1 + i]),
                                float(full[1 + q + i]), shares))
    coherence = tuple(np.abs(g[i, 0]) ** 2 / np.maximum(g[i, i].real * g[0, 0].real, 1e-300) for i in ref_idx)
    return Attributed(conditioned=_output_psd(sm, g, ref_idx, n_full, pair), unconditioned=unconditioned,
                      references=tuple(atts), total=AttributionTotal(float(full[0]), float(u95[0]), b),
                      coherence=coherence)


def _output_psd(sm: SpectralMatrix, g: NDArray[np.complex128], refs: Sequence[int], n: float,
                pair: tuple[int, int]) -> Psd:
    """The output conditioned on `refs` as a spectrum: a chi-square auto-spectrum (2 (n - q) degrees of
    freedom), or for two inputs the co-spectrum with each bin's variance."""
    q = len(refs)
    cond = _conditioned(g, refs, n, pair)
    if pair[0] == pair[1]:
        return _psd(sm, cond.real, 2.0 * (n - q))
    from ..dsp.cross import co_spectrum_psd
    sxx, syy = (_conditioned(g, refs, n, (k, k)).real for k in pair)
    nu = sm.dof * (n - q) / n
    var = np.maximum(sxx * syy + cond.real ** 2 - cond.imag ** 2, 0.0) / nu
    return co_spectrum_psd(sm.frequency_hz, cond.real, var, sample_rate_hz=sm.sample_rate_hz,
                           segment_length=sm.segment_length, hop=sm.hop, n_averages=sm.n_averages, dof=nu)


def _psd(sm: SpectralMatrix, density: NDArray[np.float64], dof: float) -> Psd:
    return Psd(frequency_hz=sm.frequency_hz, psd_per_hz=np.maximum(density, 0.0), unit="V",
               sample_rate_hz=sm.sample_rate_hz, segment_length=sm.segment_length, hop=sm.hop, window="hann",
               enbw_hz=sm.enbw_hz, n_averages=sm.n_averages, dof=float(dof))


def share_text(v: float, u: float | None = None) -> str:
    """A share in per cent (one estimated a hair below zero is none), with its U."""
    return f"{max(v, 0.0) * 100:.1f}" + (f" ± {u * 100:.1f}" if u is not None else "") + " %"


def describe(total: AttributionTotal, refs: Sequence[Attribution]) -> str:
    """One sentence for the notes and the diagnosis: the largest line share and the band share per reference."""
    parts = []
    for a in refs:
        line = max(a.lines, key=lambda s: s.fraction, default=None)
        on_line = (f"{share_text(line.fraction)} of the {line.freq_hz:.4g} Hz line and "
                   if line is not None and line.fraction > max(line.fraction_u95, 0.05) else "")
        parts.append(f"{on_line}{share_text(a.fraction_of_output_power, a.fraction_u95)} of the band noise arrive "
                     f"through the {a.reference} reference")
    together = (f"; all references together {share_text(total.fraction_of_output_power, total.fraction_u95)}"
                if len(refs) > 1 else "")
    return "; ".join(parts) + together + " (U at 95 %); the figures above are of the output with them removed"


def attributed_output(output: Capture, refs: Sequence[Reference], *, segment_length: int, band: Any, weighting: str,
                      mains_hz: float | None, progress: Any = None, other: Capture | None = None) -> Attributed:
    """:func:`attribute` over the analysis band's noise bins (its weighting applied, hum lines left out) and
    the hum lines found on the unconditioned output."""
    from ..dsp.integrate import band_bin_weights
    from ..dsp.spurs import find_lines

    def noise_weights(psd: Psd) -> NDArray[np.float64]:
        w = band_bin_weights(psd.frequency_hz, band, weighting=weighting).copy()
        for line in find_lines(psd, mains_hz=mains_hz).lines:
            w[line.bins[0]:line.bins[1] + 1] = 0.0
        return w

    def lines_of(psd: Psd) -> list[tuple[float, int, int]]:
        return [(ln.freq_hz, ln.bins[0], ln.bins[1]) for ln in find_lines(psd, mains_hz=mains_hz).lines
                if band.low_hz <= ln.freq_hz <= band.high_hz]
    return attribute(output, refs, segment_length=segment_length, noise_weights=noise_weights, lines_of=lines_of,
                     progress=progress, other=other)

