"""Write the JSON Schema of every registered result into benchnf/schemas/ (made from the result types by
benchnf.codec, so the schema and the type cannot drift apart). tests/test_schemas.py fails while a shipped
schema differs from what this writes.

    python tools/make_schemas.py
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))


def generated() -> dict[str, str]:
    """File name -> text of every result schema."""
    from benchnf import registry
    out = {}
    for kind in (*registry.kinds(), "check"):
        cls = registry._type_of(kind)
        out[f"{kind}-results-{cls.SCHEMA_VERSION}.json"] = json.dumps(cls.file_schema(), indent=1) + "\n"
    return out


def main() -> None:
    folder = ROOT / "benchnf" / "schemas"
    for name, text in generated().items():
        (folder / name).write_text(text, encoding="utf-8")
        print(f"wrote {folder / name}")


if __name__ == "__main__":
    main()
