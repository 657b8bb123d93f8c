"""One registry entry adds a measurement to every front end: a toy measurement (tests/toy_measurement.py,
the thermal noise of a resistor) registered once appears as a command, in the desk's result view and in the
records store, with no other file touched. Its figure is checked against sqrt(4kTR) (computed; 1 kohm at
290 K is 4.0019 nV/rtHz, ../shared/REFERENCES.md)."""

from __future__ import annotations

import json

import pytest

from benchnf import registry
from benchnf.cli import main

TOY = registry.Measurement(
    "toy", "thermal noise of a stated resistor (a test's toy)", "The noise density of a resistor, sqrt(4kTR).",
    result="toy_measurement:ToyResult", request="toy_measurement:ToyRequest", run="toy_measurement:run",
    present="toy_measurement:present", options="toy_measurement:add_options", from_args="toy_measurement:request_from_args")


@pytest.fixture()
def toy():
    registry.register(TOY)
    yield TOY
    registry.unregister("toy")


def test_the_toy_is_a_command_and_its_result_reads_back(toy, tmp_path, capsys):
    out = tmp_path / "toy.json"
    assert main(["toy", "--rs", "1000", "--json", str(out), "--plot", str(tmp_path / "plots"), "--quiet"]) == 0
    printed = capsys.readouterr().out
    assert "thermal noise density" in printed and "4.00 nV/rtHz" in printed  # 4.0019 nV/rtHz (computed)
    data = json.loads(out.read_text())
    assert data["kind"] == "toy" and data["density_v_per_rthz"] == pytest.approx(4.0019e-9, rel=1e-4)
    back = registry.read_result(out)
    assert back.to_dict() == data and (tmp_path / "plots" / "toy.png").is_file()


def test_the_toy_shows_in_the_desk(toy, tmp_path):
    from benchnf.desk.folder import DeskFolder
    from benchnf.desk.views import result_view
    assert main(["toy", "--rs", "1000", "--json", str(tmp_path / "toy.json"), "--quiet"]) == 0
    view = result_view(tmp_path / "toy.json", "toy.json", DeskFolder(tmp_path))
    assert view["kind"] == "toy" and view["headline"][0]["text"] == "4.00 nV/√Hz"
    assert view["plots"][0]["traces"][0]["y"][0] == pytest.approx(4.0019, rel=1e-4)


def test_the_toy_is_kept_in_the_records(toy, tmp_path, capsys):
    db = tmp_path / "records.sqlite"
    assert main(["toy", "--rs", "1000", "--record", "R-1", "--records", str(db), "--quiet"]) == 0
    capsys.readouterr()
    assert main(["records", "--records", str(db), "show", "R-1", "--results"]) == 0
    shown = capsys.readouterr().out
    assert "MEASURED" in shown and "thermal noise density" in shown and "4.00 nV/rtHz" in shown


def test_an_unknown_kind_is_one_line(tmp_path):
    from benchnf.errors import ParameterError
    (tmp_path / "x.json").write_text(json.dumps({"schema_version": "1", "kind": "toy"}))
    with pytest.raises(ParameterError, match="'toy' results where"):
        registry.read_result(tmp_path / "x.json")
