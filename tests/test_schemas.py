"""Every JSON benchnf writes validates against the schema files shipped in the package (benchnf/schemas/),
checked with the jsonschema library (PyPI). The JSON comes from the demo and the golden command-line runs."""

import json
import sys
from pathlib import Path

import pytest

jsonschema = pytest.importorskip("jsonschema")
from referencing import Registry, Resource  # noqa: E402  (installed with jsonschema)

sys.path.insert(0, str(Path(__file__).resolve().parent / "golden"))
from golden_cases import CASES, DEMO, make_inputs  # noqa: E402

from benchnf.cli import main  # noqa: E402

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


def test_every_results_json_validates(written):
    analysis, other = _validator("analysis-results-1.json"), _validator("results-1.json")
    checked = 0
    for path in written:
        data = json.loads(path.read_text())
        if "schema_version" not in data:
            continue
        (analysis if data.get("kind") == "analysis" else other).validate(data)
        assert "provenance" in data, path  # every results JSON says where it came from
        checked += 1
    assert checked >= 8


def test_calibrations_and_sidecars_validate(written):
    cal, side = _validator("calibration-1.json"), _validator("sidecar-1.json")
    cals = [p for p in written if json.loads(p.read_text()).get("schema") == "benchnf.calibration/1"]
    assert cals
    for p in cals:
        cal.validate(json.loads(p.read_text()))
    sidecars = [p for p in DEMO.rglob("*.json") if p.name != "ground_truth.json"]
    for p in sidecars:
        side.validate(json.loads(p.read_text()))
    assert len(sidecars) > 20
