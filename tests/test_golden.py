"""Golden outputs: the demo and seeded command-line runs must print and write exactly what was recorded.

The recorded files (tests/golden/expected/) were made by benchnf itself before a restructuring; they
are a regression guard, not an outside reference. A commit that changes a number regenerates them with
`python tests/golden/record.py`, says so in its message and states the difference.
"""

import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent / "golden"))
from golden_cases import CASES, make_inputs, run_case, run_demo  # noqa: E402

EXPECTED = Path(__file__).resolve().parent / "golden" / "expected"


@pytest.fixture(scope="module")
def inputs(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("golden")
    make_inputs(tmp)
    return tmp


def _compare(case: str, texts: dict[str, str]) -> None:
    expected = sorted(p.name for p in EXPECTED.glob(f"{case}.*.golden"))
    assert sorted(f"{case}.{part}.golden" for part in texts) == expected
    for part, text in texts.items():
        want = (EXPECTED / f"{case}.{part}.golden").read_text(encoding="utf-8")
        assert text == want, f"{case}: {part} differs from its golden output"


def test_demo_outputs_are_unchanged(inputs):
    _compare("demo", run_demo(inputs))


@pytest.mark.parametrize("case", sorted(CASES))
def test_cli_outputs_are_unchanged(inputs, case):
    _compare(case, run_case(case, inputs))
