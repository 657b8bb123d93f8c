"""Every results JSON benchnf writes validates against its schema shipped in the package (benchnf/schemas/),
checked with the jsonschema library (PyPI), and reads back as the same typed result; the shipped schemas are
the ones the result types give (tools/make_schemas.py). The JSON comes from the demo and the golden runs."""

import json
import sys
from pathlib import Path

import pytest

jsonschema = pytest.importorskip("jsonschema")
from referencing import Registry, Resource  # noqa: E402  (installed with jsonschema)

sys.path.insert(0, str(Path(__file__).resolve().parent / "golden"))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tools"))
from golden_cases import CASES, DEMO, make_inputs  # noqa: E402
from make_schemas import generated  # noqa: E402

from benchnf.cli import main  # noqa: E402
from benchnf.registry import result_from_dict  # noqa: E402

SCHEMAS = Path(__file__).resolve().parent.parent / "benchnf" / "schemas"


def _validator(name):
    registry = Registry().with_resources(
        (f"benchnf/{p.name}", Resource.from_contents(json.loads(p.read_text()))) for p in SCHEMAS.glob("*.json"))
    schema = json.loads((SCHEMAS / name).read_text())
    jsonschema.Draft202012Validator.check_schema(schema)
    return jsonschema.Draft202012Validator(schema, registry=registry)


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("schemas")
    make_inputs(tmp)
    assert main(["demo", "-o", str(tmp / "demo"), "--quiet"]) == 0
    for name, (argv, _outputs) in CASES.items():
        main([a.format(demo=DEMO, tmp=tmp) for a in argv])
    return [p for p in tmp.rglob("*.json") if p.parent.name != "units"]


def test_the_shipped_schemas_are_the_result_types_own():
    for name, text in generated().items():
        assert (SCHEMAS / name).read_text() == text, f"{name} is stale: run python tools/make_schemas.py"


def test_every_results_json_validates_and_reads_back_exactly(written):
    kinds = set()
    for path in written:
        data = json.loads(path.read_text())
        if "schema_version" not in data:
            continue
        _validator(f"{data['kind']}-results-1.json").validate(data)
        assert "provenance" in data, path  # every results JSON says where it came from
        assert result_from_dict(data, where=str(path)).to_dict() == data, path
        kinds.add(data["kind"])
    assert kinds == {"analysis", "yfactor", "eni", "budget", "cascade", "bias", "check"}


def test_calibrations_and_sidecars_validate(written):
    cal, side = _validator("calibration-1.json"), _validator("sidecar-1.json")
    cals = [p for p in written if json.loads(p.read_text()).get("schema") == "benchnf.calibration/1"]
    assert cals
    for p in cals:
        cal.validate(json.loads(p.read_text()))
    sidecars = [p for p in DEMO.rglob("*.json") if p.name != "ground_truth.json"]
    for p in sidecars:
        side.validate(json.loads(p.read_text()))
