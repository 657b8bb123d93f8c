"""FFTW's measured plans kept between runs (benchnf.dsp.fftw_backend): made once, found again by a new
process, never needed for a right answer. Transforms of every origin are checked against numpy's FFT
(a reference library) to a stated tolerance. Seeded synthetic data (INVENTED DATA)."""

from __future__ import annotations

import json
import os
import subprocess
import sys

import numpy as np
import pytest

pytest.importorskip("pyfftw")

from benchnf.dsp import fftw_backend  # noqa: E402
from benchnf.dsp.spectrum import FFTW_AFTER_SEGMENTS, SEGMENTS_PER_BATCH, BatchFft  # noqa: E402

N = 384  # a length no other test plans, so that this file's first plan is measured here


def _transform(fft: BatchFft, m: int = SEGMENTS_PER_BATCH, seed: int = 1) -> None:
    """Fill a batch, transform it, and check it against numpy's FFT (single precision: 1e-5 of the peak)."""
    z = np.random.default_rng(seed).normal(size=(m, N)) + 1j * np.random.default_rng(seed + 1).normal(size=(m, N))
    fft.input(m)[...] = z
    out = fft.execute(m)
    ref = np.fft.fft(z, axis=-1)
    np.testing.assert_allclose(out, ref, atol=1e-5 * np.abs(ref).max())


def _long(fft: BatchFft) -> BatchFft:
    fftw_backend.module(wait=True)
    fft.expect(FFTW_AFTER_SEGMENTS, single=True)
    assert fft.backend == "fftw" and fft.single
    return fft


def test_a_long_streams_plan_is_measured_once_kept_and_found_by_a_new_process(tmp_path, monkeypatch):
    path = tmp_path / "cache" / "wisdom.json"
    monkeypatch.setenv("BENCHNF_FFTW_WISDOM", str(path))
    first = _long(BatchFft(N, complex_input=True))
    _transform(first)
    _transform(first, m=3)  # a stream's last, shorter batch: not measured
    assert first.plan_origin == {SEGMENTS_PER_BATCH: "measured", 3: "estimated"}
    kept = json.loads(path.read_text())
    # double, single, long double: the single-precision wisdom holds entries beyond its header line
    assert kept["format"] == "benchnf-fftw-wisdom-1" and len(kept["wisdom"]) == 3
    assert kept["wisdom"][1].startswith("(fftw-") and kept["wisdom"][1].count("\n") > 2
    again = _long(BatchFft(N, complex_input=True))
    _transform(again, seed=5)
    assert again.plan_origin == {SEGMENTS_PER_BATCH: "wisdom"}
    script = (f"from benchnf.dsp import fftw_backend as f; from benchnf.dsp.spectrum import BatchFft\n"
              f"f.module(wait=True); b = BatchFft({N}, complex_input=True); b.expect(10**6, single=True)\n"
              f"b.input({SEGMENTS_PER_BATCH}); print(b.plan_origin[{SEGMENTS_PER_BATCH}])")
    fresh = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, check=True)
    assert fresh.stdout.strip() == "wisdom"


def test_without_a_place_for_wisdom_nothing_is_measured_or_written(tmp_path, monkeypatch):
    monkeypatch.setenv("BENCHNF_FFTW_WISDOM", "off")
    assert fftw_backend.wisdom_path() is None
    fft = _long(BatchFft(N + 2, complex_input=True))  # no wisdom for this length anywhere
    fft.input(SEGMENTS_PER_BATCH)
    assert fft.plan_origin == {SEGMENTS_PER_BATCH: "estimated"}
    assert list(tmp_path.iterdir()) == []


def _plan_in_a_new_process(path, n=416) -> str:
    script = ("from benchnf.dsp import fftw_backend as f; from benchnf.dsp.spectrum import BatchFft\n"
              f"f.module(wait=True); b = BatchFft({n}, complex_input=True); b.expect(10**6, single=True)\n"
              "b.input(8); print(b.plan_origin[8])")
    env = {**os.environ, "BENCHNF_FFTW_WISDOM": str(path)}
    run = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, env=env)
    assert (run.returncode, run.stderr) == (0, "")
    return run.stdout.strip()


@pytest.mark.parametrize("kept", ["damaged", "another host"])
def test_wisdom_that_is_damaged_or_from_another_machine_is_ignored_and_replaced(kept, tmp_path):
    path = tmp_path / "wisdom.json"
    if kept == "damaged":
        path.write_text("{not json")
    else:
        assert _plan_in_a_new_process(path) == "measured" and _plan_in_a_new_process(path) == "wisdom"
        made = json.loads(path.read_text())
        path.write_text(json.dumps({**made, "host": "elsewhere/" + made["host"]}))
    assert _plan_in_a_new_process(path) == "measured"
    assert json.loads(path.read_text())["format"] == "benchnf-fftw-wisdom-1"


def test_the_default_place_is_in_the_users_cache_folder(monkeypatch, tmp_path):
    monkeypatch.delenv("BENCHNF_FFTW_WISDOM")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    assert fftw_backend.wisdom_path() == tmp_path / "benchnf" / "fftw-wisdom.json"
