"""Finding a played tone in a recording by its envelope (seeded synthetic recordings, INVENTED DATA): the
span must come out right where the recording cuts the tone short, the case cross-correlation cannot place."""

import numpy as np

from benchnf.acquire.signals import tone_span

FS = 48_000


def _recording(start_s, tone_s, total_s, seed=1):
    rng = np.random.default_rng(seed)
    x = rng.normal(0, 1e-4, int(total_s * FS))
    t = np.arange(int(tone_s * FS)) / FS
    tone = 0.3 * np.sin(2 * np.pi * 400 * t)
    i = int(start_s * FS)
    end = min(i + tone.size, x.size)
    x[i:end] += tone[:end - i]
    return x, tone, i, end


def test_span_of_a_whole_tone_is_found_to_within_the_window():
    x, _tone, i, end = _recording(0.37, 2.0, 3.0)
    start, stop = tone_span(x, FS)
    assert abs(start - i) <= FS * 0.005 and abs(stop - end) <= FS * 0.005


def test_span_of_a_tone_cut_short_by_the_recording_end():
    x, _tone, i, end = _recording(0.8, 2.0, 2.5)  # latency longer than the silence after the tone
    start, stop = tone_span(x, FS)
    assert abs(start - i) <= FS * 0.005 and stop == x.size


def test_silence_has_no_span():
    assert tone_span(np.zeros(FS), FS) == (0, 0)
