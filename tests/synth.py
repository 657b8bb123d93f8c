"""Seeded synthetic bench captures with known truth (INVENTED DATA, for tests only).

White Gaussian noise of one-sided density S (V^2/Hz) at sample rate fs has
variance S fs / 2.  The DUT is an ideal flat amplifier of voltage gain G with
input voltage noise en and current noise in, terminated in Rs at T:

    output density = G^2 (en^2 + (in Rs)^2 + 4 k T Rs) + floor density
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from benchnf.capture import Capture

K_B = 1.380649e-23  # exact SI
T0 = 290.0


@dataclass(frozen=True)
class Bench:
    en_v_per_rthz: float = 2.0e-9
    in_a_per_rthz: float = 1.0e-12
    rs_ohm: float = 200.0
    temperature_k: float = 290.0
    gain_db: float = 40.0
    floor_v_per_rthz: float = 20e-9
    volts_per_fs: float = 2.0
    sample_rate_hz: float = 48_000.0
    seconds: float = 10.0
    seed: int = 1

    @property
    def gain(self) -> float:
        return 10 ** (self.gain_db / 20)

    def input_density_v2(self, rs_ohm: float | None = None) -> float:
        rs = self.rs_ohm if rs_ohm is None else rs_ohm
        return (self.en_v_per_rthz ** 2 + (self.in_a_per_rthz * rs) ** 2
                + 4 * K_B * self.temperature_k * rs)

    def noise_factor(self) -> float:
        """F = 1 + (e_ni^2 - 4kTRs) / (4kT0Rs), the truth for these parameters."""
        thermal_t = 4 * K_B * self.temperature_k * self.rs_ohm
        return 1 + (self.input_density_v2() - thermal_t) / (4 * K_B * T0 * self.rs_ohm)

    def _noise(self, rng, density_v2: float) -> np.ndarray:
        n = int(self.seconds * self.sample_rate_hz)
        return rng.normal(0.0, math.sqrt(density_v2 * self.sample_rate_hz / 2), n)

    def captures(self) -> dict[str, Capture]:
        rng = np.random.default_rng(self.seed)
        fs, k = self.sample_rate_hz, self.volts_per_fs
        floor = self._noise(rng, self.floor_v_per_rthz ** 2)
        term = (self._noise(rng, self.gain ** 2 * self.input_density_v2())
                + self._noise(rng, self.floor_v_per_rthz ** 2))
        short = (self._noise(rng, self.gain ** 2 * self.en_v_per_rthz ** 2)
                 + self._noise(rng, self.floor_v_per_rthz ** 2))
        t = np.arange(int(2 * fs)) / fs
        tone_in = 1e-3
        tone = (tone_in * math.sqrt(2) * self.gain * np.sin(2 * np.pi * 1000.0 * t + 0.3)
                + rng.normal(0, 1e-6, t.size))

        def cap(x, cond):
            return Capture.from_array(x / k, sample_rate_hz=fs, volts_per_fs=k, condition=cond)

        return {"floor": cap(floor, "floor"), "terminated": cap(term, "terminated"),
                "shorted": cap(short, "shorted"), "tone": cap(tone, "tone"),
                "tone_input_vrms": tone_in}
