"""Needs a physical sound card: skipped unless BENCHNF_HARDWARE=1 (the loopback tests cover the code path)."""

import numpy as np
import pytest


@pytest.mark.hardware
def test_default_input_records_something():
    from benchnf.acquire.record import SoundcardRecorder
    x = SoundcardRecorder(None).record(48_000, sample_rate_hz=48_000.0)
    assert x.shape == (48_000, 1) and np.any(x != 0)  # a real input is never digitally silent
