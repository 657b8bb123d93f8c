"""The notes every measurement gives about what it assumed, written once (analyze, eni, budget, yfactor)."""

from __future__ import annotations

__all__ = ["NO_FLOOR", "temperature_assumed", "COLD_ASSUMED"]

NO_FLOOR = ("no floor capture given: the analyzer's own noise is included in every figure (they read high)")


def temperature_assumed(default_k: float) -> str:
    """The note for a source temperature that nothing stated.

    A resistor's noise power is proportional to its temperature, so every 6 K of error moves the source's
    own noise by about 0.09 dB (10 lg(296/290); common practice).
    """
    return (f"no source temperature was stated (--temperature-k, or temperature_k in a sidecar): {default_k:g} K "
            f"assumed; every 6 K of error moves the source's own noise by about 0.09 dB")


COLD_ASSUMED = ("the noise source's cold (off) temperature was not stated: T0 = 290 K assumed; give --t-cold-k "
                "with its physical temperature, or cold_k in the ENR table")
