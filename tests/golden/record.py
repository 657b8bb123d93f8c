"""Record the golden outputs (tests/golden/expected/).  Run only in a commit whose message starts with
"Changes output" and states the difference:  python tests/golden/record.py [--all]

A golden file is rewritten only where the new output differs from it beyond the comparison's tolerance
(tests/golden/compare.py), so a change shows as the lines that really changed, not as last-digit noise of
the machine that recorded it; --all rewrites every file.
"""

import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from compare import first_difference  # noqa: E402
from golden_cases import CASES, make_inputs, run_case, run_demo  # noqa: E402

EXPECTED = Path(__file__).resolve().parent / "expected"


def main() -> None:
    everything = "--all" in sys.argv[1:]
    EXPECTED.mkdir(exist_ok=True)
    with tempfile.TemporaryDirectory() as d:
        tmp = Path(d)
        make_inputs(tmp)
        outputs = {"demo": run_demo(tmp)}
        for name in CASES:
            outputs[name] = run_case(name, tmp)
    written = 0
    for case, texts in outputs.items():
        for part, text in texts.items():
            path = EXPECTED / f"{case}.{part}.golden"
            old = path.read_text(encoding="utf-8") if path.is_file() else None
            if everything or old is None or first_difference(text, old) is not None:
                path.write_text(text, encoding="utf-8")
                written += 1
                print(f"recorded {path.name}")
    print(f"{written} of {sum(map(len, outputs.values()))} golden files recorded in {EXPECTED}")


if __name__ == "__main__":
    main()
