"""Record the golden outputs (tests/golden/expected/).  Run only in a commit labelled as changing numbers,
and state the difference in its message:  python tests/golden/record.py"""

import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from golden_cases import CASES, make_inputs, run_case, run_demo  # noqa: E402

EXPECTED = Path(__file__).resolve().parent / "expected"


def main() -> None:
    EXPECTED.mkdir(exist_ok=True)
    with tempfile.TemporaryDirectory() as d:
        tmp = Path(d)
        make_inputs(tmp)
        outputs = {"demo": run_demo(tmp)}
        for name in CASES:
            outputs[name] = run_case(name, tmp)
    for case, texts in outputs.items():
        for part, text in texts.items():
            (EXPECTED / f"{case}.{part}.golden").write_text(text, encoding="utf-8")
    print(f"recorded {sum(map(len, outputs.values()))} golden files in {EXPECTED}")


if __name__ == "__main__":
    main()
