"""Gauge R&R by the ANOVA method (AIAG MSA manual, 4th ed., from memory) against a worked example computed by
hand below, and through the records command on a seeded synthetic study (INVENTED DATA)."""

import json
import math

import numpy as np
import pytest

from benchnf.cli import ExitStatus, main
from benchnf.errors import ParameterError
from benchnf.records import CheckRecord, LimitRow, connect
from benchnf.records.grr import gauge_rr

# Five units, two stations, two trials each (INVENTED values, chosen for easy hand arithmetic).
STUDY = {"P1": ((10, 11), (11, 12)), "P2": ((14, 14), (15, 16)), "P3": ((8, 9), (9, 9)),
         "P4": ((12, 13), (12, 14)), "P5": ((16, 15), (17, 17))}


def _rows():
    return [(part, station, v) for part, cells in STUDY.items() for station, trial in zip("AB", cells) for v in trial]


def test_anova_grr_equals_the_hand_computation():
    # By hand: grand mean 254/20 = 12.7; unit means 11, 14.75, 8.75, 12.75, 16.25; station means 12.2, 13.2.
    # SS_part = 2*2*(2.89 + 4.2025 + 15.6025 + 0.0025 + 12.6025) = 4*35.3 = 141.2   df 4, MS 35.3
    # SS_station = 5*2*(0.25 + 0.25) = 5.0                                   df 1, MS 5.0
    # SS_within = (a - b)^2/2 per cell: .5+.5+0+.5+.5+0+.5+2+.5+0 = 5.0         df 10, MS 0.5
    # SS_total = 3378 - 20*12.7^2 = 152.2; SS_interaction = 152.2-141.2-5-5 = 1.0   df 4, MS 0.25
    # F = 0.25/0.5 = 0.5 (p well above 0.05): pooled, MS = (1.0 + 5)/14 = 0.428571...
    ms_pool = 6.0 / 14
    var_e, var_a, var_p = ms_pool, (5.0 - ms_pool) / 10, (35.3 - ms_pool) / 4
    g = gauge_rr(_rows(), figure_name="ein_dbu", tolerance_width=6.0)
    assert g.interaction_pooled and g.interaction_f == pytest.approx(0.5, rel=1e-12)
    assert g.repeatability_sd == pytest.approx(math.sqrt(var_e), rel=1e-12)
    assert g.reproducibility_sd == pytest.approx(math.sqrt(var_a), rel=1e-12)
    assert g.part_sd == pytest.approx(math.sqrt(var_p), rel=1e-12)
    grr, tv = math.sqrt(var_e + var_a), math.sqrt(var_e + var_a + var_p)
    assert g.grr_percent_of_variation == pytest.approx(100 * grr / tv, rel=1e-12)
    assert g.grr_percent_of_variation == pytest.approx(30.37, abs=0.01)  # 100 * 0.94112 / 3.09896
    assert g.ndc == 4  # floor(1.41 * 2.95260 / 0.94112) = floor(4.42)
    assert g.grr_percent_of_tolerance == pytest.approx(100 * 6 * grr / 6.0, rel=1e-12)
    table = {name: (ss, df) for name, ss, df, _ms in g.anova}
    assert table["part"] == pytest.approx((141.2, 4)) and table["station"] == pytest.approx((5.0, 1))
    assert table["total"] == pytest.approx((152.2, 19))


def test_too_few_units_stations_or_trials_are_refused():
    rows = _rows()
    with pytest.raises(ParameterError, match="at least 5 units"):
        gauge_rr([r for r in rows if r[0] != "P5"], figure_name="x")
    with pytest.raises(ParameterError, match="at least 2 stations"):
        gauge_rr([r for r in rows if r[1] == "A"], figure_name="x")
    single = [r for i, r in enumerate(rows) if i % 2 == 0]
    with pytest.raises(ParameterError, match="at least 2 trials"):
        gauge_rr(single, figure_name="x")
    with pytest.raises(ParameterError, match="unit P1 has no record by B"):
        gauge_rr([r for r in rows if not (r[0] == "P1" and r[1] == "B")], figure_name="x")


def _study_records(db):
    """Ten units' EIN, three trials at each of two stations; station 2 reads 0.1 dB high (INVENTED DATA)."""
    store = connect(db)
    rng = np.random.default_rng(3)
    truth = rng.normal(-136.0, 0.6, 10)  # ten units' EIN; two stations; station 2 reads 0.1 dB high
    for trial in range(3):
        for station, bias in (("bench-1", 0.0), ("bench-2", 0.1)):
            for i, t in enumerate(truth):
                v = float(t + bias + rng.normal(0, 0.05))
                store.add(CheckRecord(serial=f"U{i:02d}", verdict="PASS", profile_name="p", profile_sha256=None,
                                      station=station, operator="ann", software="benchnf test",
                                      limits=(LimitRow("ein_dbu", v, "max -130", None, -130.0, -130.0 - v, "dB",
                                                       0.1, "PASS"),)))
    store.close()
    return truth


def test_the_records_command_runs_a_study(tmp_path, capsys):
    db = str(tmp_path / "r.db")
    truth = _study_records(db)
    out = tmp_path / "grr"
    assert main(["records", "--records", db, "grr", "--figure", "ein_dbu", "--tolerance", "4", "-o", str(out),
                 "--json", str(tmp_path / "g.json")]) == ExitStatus.OK
    text = capsys.readouterr().out
    assert "repeatability" in text and "number of distinct categories" in text
    data = json.loads((tmp_path / "g.json").read_text())
    assert data["repeatability_sd"] == pytest.approx(0.05, rel=0.3)
    assert data["reproducibility_sd"] == pytest.approx(0.1 / math.sqrt(2), rel=0.6)
    assert data["part_sd"] == pytest.approx(float(np.std(truth, ddof=1)), rel=0.2)
    assert data["ndc"] >= 5 and 0 < data["grr_percent_of_variation"] < 30
    assert (out / "grr_ein_dbu.png").is_file()
    assert main(["records", "--records", db, "grr", "--figure", "ein_dbu", "--by", "operator"]) == ExitStatus.BAD_INPUT
    assert "at least 2 operators" in capsys.readouterr().err


def test_the_desk_shows_the_same_study(tmp_path, capsys):
    import sys
    from pathlib import Path
    sys.path.insert(0, str(Path(__file__).parent))
    from desk_helpers import call, running_desk
    db = str(tmp_path / "r.db")
    _study_records(db)
    assert main(["records", "--records", db, "grr", "--figure", "ein_dbu", "--json", str(tmp_path / "g.json")]) == 0
    cli = capsys.readouterr().out
    (tmp_path / "folder").mkdir()
    with running_desk(tmp_path / "folder", "--records", db) as (_proc, url):
        status, listing = call(url, "/api/grr")
        assert status == 200 and listing["figures"] == ["ein_dbu"]
        status, view = call(url, "/api/grr?figure=ein_dbu&by=station")
        assert status == 200, view
        status, bad = call(url, "/api/grr?figure=ein_dbu&by=operator")
        assert status == 400 and "at least 2 operators" in bad["error"]
    for h in view["headline"]:  # every figure as the command line printed it
        assert f"{h['value']} {h['unit']}".strip() in cli, h
    assert {p["id"] for p in view["plots"]} == {"components", "by_unit"}
