"""A built stage held against its device: the device parameters that explain the en and in an ``eni`` sweep
measured at a stated operating point, and what that device would reach at its best current.

Bipolar: from ``in^2 = 2 q Ic (1/beta + 1/beta^2)`` (:mod:`benchnf.noise.devices`, no flicker at the
measured frequency), ``1/beta = (sqrt(1 + 4a) - 1)/2`` with ``a = in^2 / (2 q Ic)``; then ``R0 = rbb' + RE``
is the positive root of

.. math:: (2qI_b + 2qI_c/\\beta^2) R_0^2 + (4kT + 4kT/\\beta) R_0 + (2kT V_t / I_c - e_n^2) = 0

(``4 q Ic / (gm beta) = 4kT/beta``, ``2 q Ic / gm^2 = 2kT Vt / Ic``).  Field-effect: ``Ig = in^2 / (2q)``,
``gm = 4kT gamma / (en^2 - 4kT RS - 2 q Ig RS^2)``.  Their expanded uncertainties follow from the measured
en's and in's (k = 2) by the sensitivities (GUM, JCGM 100:2008, 5.1.2), taken by central differences, the
two inputs uncorrelated.

References
----------
.. [1] C. D. Motchenbacher and J. A. Connelly, "Low-Noise Electronic System Design", Wiley 1993 (finding
       rbb' and beta from measured en and in) -- from memory.
.. [2] JCGM 100:2008 (GUM), 5.1.2.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import replace
from typing import TYPE_CHECKING, Any

from ..errors import ParameterError
from ..noise.devices import Bjt, Device, Fet, device_current
from ..units import BOLTZMANN_J_PER_K, ELEMENTARY_CHARGE_C
from .bias_result import Explained, Optimum

if TYPE_CHECKING:
    from .bias import BiasRequest

__all__ = ["explain", "bjt_from_en_in", "fet_from_en_in"]


def bjt_from_en_in(device: Bjt, en: float, in_: float | None) -> Bjt:
    """The bipolar device (rbb' and the effective beta replaced) whose en and in at its current are these."""
    q, kt = ELEMENTARY_CHARGE_C, BOLTZMANN_J_PER_K * device.temperature_k
    ic, n = device.ic_a, device.count
    en2, in2 = en * en * n, None if in_ is None else in_ * in_ / n  # per device
    if in2 is not None:
        a = in2 / (2 * q * ic)
        beta = 2 / (math.sqrt(1 + 4 * a) - 1)
    else:
        beta = device.beta_effective
    vt = device.thermal_voltage_v
    aa = 2 * q * ic / beta + 2 * q * ic / beta ** 2
    bb = 4 * kt * (1 + 1 / beta)
    cc = 2 * kt * vt / ic - en2
    r0 = (-bb + math.sqrt(bb * bb - 4 * aa * cc)) / (2 * aa)
    if r0 < device.re_ohm:
        raise ParameterError(f"the measured en ({en:.3g} V/rtHz) is below what a bipolar transistor at {ic:g} A with "
                             f"{device.re_ohm:g} ohm of emitter resistance gives even with rbb' = 0: check --ic, --re "
                             f"and --parallel against the stage, or the sweep's gain")
    return replace(device, beta=beta, vaf_v=None, vce_v=None, rbb_ohm=r0 - device.re_ohm, kf=0.0, corner_hz=None)


def fet_from_en_in(device: Fet, en: float, in_: float | None) -> Fet:
    """The field-effect device (gm at its current and Ig replaced) whose en and in are these."""
    q, four_kt = ELEMENTARY_CHARGE_C, 4 * BOLTZMANN_J_PER_K * device.temperature_k
    n = device.count
    ig = device.ig_a if in_ is None else in_ * in_ / n / (2 * q)
    white = en * en * n - four_kt * device.rs_ohm - 2 * q * ig * device.rs_ohm ** 2
    if white <= 0:
        raise ParameterError(f"the measured en ({en:.3g} V/rtHz) is at or below the source-lead resistance's own "
                             f"noise: check --rs-lead against the stage, or the sweep's gain")
    gm = four_kt * device.gamma / white
    return replace(device, gm_s=gm, gm_at_a=device.id_a, idss_a=None, vp_v=None, ig_a=ig, kf=0.0, corner_hz=None)


def _fit(device: Device, en: float, in_: float | None) -> Device:
    return bjt_from_en_in(device, en, in_) if isinstance(device, Bjt) else fet_from_en_in(device, en, in_)


def _u95(fn: Callable[[float, float | None], float], en: float, u_en: float, in_: float | None,
         u_in: float) -> float:
    """Expanded U of fn(en, in) from U(en), U(in) by central differences (both at k = 2, so U out at k = 2)."""
    h_en = max(u_en, en * 1e-6) / 10
    d_en = (fn(en + h_en, in_) - fn(en - h_en, in_)) / (2 * h_en) * u_en
    d_in = 0.0
    if in_ is not None and u_in > 0:
        h_in = max(u_in, in_ * 1e-6) / 10
        d_in = (fn(en, in_ + h_in) - fn(en, in_ - h_in)) / (2 * h_in) * u_in
    return math.hypot(d_en, d_in)


def _measured(req: "BiasRequest") -> tuple[str, float, float, float, float | None, float]:
    from ..registry import read_result
    eni = read_result(req.from_eni, kinds=("eni",))  # type: ignore[arg-type]
    row = eni.at_1khz
    if row.en_v_per_rthz is None or row.en_std_v_per_rthz is None:
        raise ParameterError(f"{req.from_eni}: the sweep did not determine en at {row.freq_hz:g} Hz, so there is "
                             f"nothing to explain; sweep again with a shorted input or a low Rs")
    in_std = row.in_std_a_per_rthz or 0.0
    return (str(req.from_eni), row.freq_hz, row.en_v_per_rthz, 2 * row.en_std_v_per_rthz, row.in_a_per_rthz,
            2 * in_std if row.in_a_per_rthz is not None else 0.0)


def explain(device: Device, req: "BiasRequest") -> tuple[Device, Explained, Optimum]:
    """The device that explains the sweep's en and in at its stated current, and its best current (with the
    U of its NF from the sweep's U)."""
    from ..quantity import Quantity, resistance_text
    from .bias import figure_at, optimum, source_of
    path, freq, en, u_en, in_, u_in = _measured(req)
    if in_ is None and isinstance(device, Bjt) and "beta" not in dict(req.parameters):
        raise ParameterError(f"{path}: the sweep did not determine in at {freq:g} Hz, so beta cannot be found from "
                             f"it: state --beta (the stage's transistor's current gain)")
    fitted = _fit(device, en, in_)
    source = source_of(req)
    best = optimum(fitted, source, req)
    now_nf = figure_at(fitted, source, freq)

    def best_nf(e: float, i: float | None) -> float:
        return figure_at(_fit(device, e, i).at_current(best.ic_a), source, freq)

    params = _parameters(device, fitted, en, u_en, in_, u_in)
    now_i, best_i = Quantity(device_current(device), "A").text(), Quantity(best.ic_a, "A").text()
    summary = (f"this stage runs at {now_i}; at {best_i} it would reach {best.noise_figure_db:.2f} dB instead of "
               f"{now_nf:.2f} dB at {resistance_text(req.rs_ohm)}")
    u_best = _u95(best_nf, en, u_en, in_, u_in)
    return fitted, Explained(path, freq, en, u_en, in_ if in_ is not None else math.nan, u_in, now_nf, best.ic_a,
                             best.noise_figure_db, u_best, summary, **params), \
        replace(best, noise_figure_u95_db=u_best)


def _parameters(device: Device, fitted: Device, en: float, u_en: float, in_: float | None,
                u_in: float) -> dict[str, Any]:
    if isinstance(device, Bjt):
        return dict(rbb_ohm=fitted.rbb_ohm,  # type: ignore[union-attr]
                    rbb_u95_ohm=_u95(lambda e, i: bjt_from_en_in(device, e, i).rbb_ohm, en, u_en, in_, u_in),
                    beta=fitted.beta,  # type: ignore[union-attr]
                    beta_u95=_u95(lambda e, i: bjt_from_en_in(device, e, i).beta, en, u_en, in_, u_in))
    return dict(gm_s=fitted.transconductance_s,  # type: ignore[union-attr]
                gm_u95_s=_u95(lambda e, i: fet_from_en_in(device, e, i).transconductance_s, en, u_en, in_, u_in),
                ig_a=fitted.ig_a,  # type: ignore[union-attr]
                ig_u95_a=_u95(lambda e, i: fet_from_en_in(device, e, i).ig_a, en, u_en, in_, u_in))
