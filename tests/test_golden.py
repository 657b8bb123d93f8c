"""Golden outputs: the demo and seeded command-line runs must print and write what was recorded.

The recorded files (tests/golden/expected/) were made by benchnf itself before a restructuring; they
are a regression guard, not an outside reference. The text around the numbers must match exactly and each
number within a stated tolerance (tests/golden/compare.py: relative 1e-9), so another CPU or a library patch
release passes and a real change still fails. A commit that changes output regenerates them with
`python tests/golden/record.py`, starts its message with "Changes output" and states the difference.
"""

import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent / "golden"))
from compare import first_difference  # noqa: E402
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
        difference = first_difference(text, want)
        assert difference is None, f"{case}: {part} differs from its golden output: {difference}"


def test_demo_outputs_are_unchanged(inputs):
    _compare("demo", run_demo(inputs))


@pytest.mark.parametrize("case", sorted(CASES))
def test_cli_outputs_are_unchanged(inputs, case):
    _compare(case, run_case(case, inputs))


# The comparison itself: last-digit noise passes, a real change does not (hand-made texts, no outside source).
@pytest.mark.parametrize(("got", "want"), [
    ('{"gain_db": 35.97938424769822}', '{"gain_db": 35.97938424769821}'),
    ("drift -0.000 dB", "drift +0.000 dB"),
    ("NF 2.94 dB +/- 0.12 (k=2)", "NF 2.94 dB +/- 0.12 (k=2)"),
    ('"sha256": "7cb2439d5"', '"sha256": "7cb2439d5"'),
])
def test_last_digit_noise_passes(got, want):
    assert first_difference(got, want) is None


@pytest.mark.parametrize(("got", "want"), [
    ('{"gain_db": 35.97938}', '{"gain_db": 35.97939}'),   # a figure changed in its 7th digit
    ("NF 2.94 dB", "NF 2.95 dB"),                          # a printed figure changed
    ("NF 2.94 dB", "EIN 2.94 dB"),                         # the words changed
    ('"sha256": "7cb2439d5"', '"sha256": "7cb2439d6"'),    # digits inside a word are text
    ("1 2 3", "1 2"),                                      # a number more
])
def test_real_changes_fail(got, want):
    assert first_difference(got, want) is not None
