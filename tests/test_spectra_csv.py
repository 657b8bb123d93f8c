"""Spectra to take away: the CSV export round-trips against the figures of the JSON.

Demo captures (INVENTED DATA). The round trip uses benchnf's own band weights (so it checks the export,
not the integration, which tests/reference/ checks against scipy and the standards).
"""

import json
import math
from pathlib import Path

import numpy as np
import pytest

from benchnf.cli import main
from benchnf.dsp.integrate import band_bin_weights
from benchnf.dsp.weighting import Band
from benchnf.noise.gain_method import third_octave_weights
from benchnf.report.spectra_csv import SPECTRA_COLUMNS

DEMO = Path(__file__).resolve().parent.parent / "benchnf" / "captures_demo"


@pytest.fixture(scope="module")
def exported(tmp_path_factory):
    d = tmp_path_factory.mktemp("spectra")
    assert main(["analyze", "--terminated", str(DEMO / "terminated.flac"), "--floor", str(DEMO / "floor.flac"),
                 "--tone", str(DEMO / "tone.flac"), "--volts-per-fs", "2", "--quiet", "--json", str(d / "r.json"),
                 "--spectra", str(d / "s.csv")]) == 0
    lines = (d / "s.csv").read_text().splitlines()
    assert lines[0].startswith("# ") and lines[1].startswith("# ") and lines[2] == ",".join(SPECTRA_COLUMNS)
    rows = [[float(c) if c else math.nan for c in line.split(",")] for line in lines[3:]]
    return json.loads((d / "r.json").read_text()), dict(zip(SPECTRA_COLUMNS, np.array(rows).T))


def test_the_band_ein_comes_back_from_the_exported_density(exported):
    r, c = exported
    w = band_bin_weights(c["frequency_hz"], Band(*r["band_hz"]))
    ein = math.sqrt(float(np.nansum(w * c["input_v2_per_hz"])))
    assert ein == pytest.approx(r["ein_vrms"], rel=1e-9)


def test_the_1khz_spot_comes_back_from_the_exported_density(exported):
    r, c = exported
    w = third_octave_weights(c["frequency_hz"], 1000.0)
    spot = math.sqrt(float(np.sum(w * c["input_v2_per_hz"]) / np.sum(w)))
    assert spot == pytest.approx(r["input_density_at_1khz_v_per_rthz"], rel=1e-9)


def test_bin_uncertainty_follows_the_degrees_of_freedom(exported):
    # Where the floor is far below, a bin's power has relative standard deviation sqrt(2/nu) (Welch 1967):
    # k = 2 in amplitude dB is 20/ln10 * sqrt(2/nu) times (1 + floor/excess) for the subtraction.
    r, c = exported
    excess = c["output_v2_per_hz"] - c["floor_v2_per_hz"]
    rel = np.hypot(c["output_v2_per_hz"], c["floor_v2_per_hz"]) * math.sqrt(2 / r["dof"]) / excess
    sel = np.isfinite(c["input_u95_db"])
    np.testing.assert_allclose(c["input_u95_db"][sel], 20 / math.log(10) * rel[sel], rtol=0.02)
