"""Every file of ours, each value replaced by a value of the wrong kind, is read without a fault of benchnf:
the command ends with exit 0, 1 or 2 (a clear line for a refusal), never 70. No outside reference: this is the
rule of the project (nothing we read can reach an internal error); the files are the fault suite's seeded
bench (INVENTED DATA) and the demo's own files."""

from __future__ import annotations

import json
import shutil
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent / "faults"))
from fault_bench import make_base  # noqa: E402

from benchnf.cli import main  # noqa: E402
from benchnf.io.toml_file import parse_toml  # noqa: E402

#: Values of every kind a hand-edited file might hold where another kind belongs.
WRONG = [None, 5, -1.0, "hot", [], [1, 2], {"a": 1}, True]


@pytest.fixture(scope="module")
def base(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fuzz-base")
    make_base(folder)
    return folder


def _toml(value):
    import tomli_w
    return tomli_w.dumps(value)


def _variants(data, path=()):
    """(path, spoiled copy) for every key of the top level and of the first level of nested tables/rows."""
    if isinstance(data, dict):
        items = list(data.items())
    elif isinstance(data, list):
        items = list(enumerate(data))[:2]
    else:
        return
    for key, value in items:
        for wrong in WRONG:
            if wrong == value or (wrong is None and isinstance(data, list)):
                continue
            yield (*path, key), wrong
        if len(path) < 2 and isinstance(value, (dict, list)):
            yield from _variants(value, (*path, key))


def _set(data, path, value):
    import copy
    out = copy.deepcopy(data)
    node = out
    for k in path[:-1]:
        node = node[k]
    if value is None and isinstance(node, dict):
        node.pop(path[-1])  # TOML has no null: a missing key stands for it
    else:
        node[path[-1]] = value
    return out


FILES = {
    # file: (reader: json or toml, command with {f} for the spoiled file and {d} for the bench)
    "results.json": ("json", ["check", "--profile", "{d}/known_good_profile.toml", "{f}"]),
    "cal.json": ("json", ["analyze", "--terminated", "{d}/terminated.wav", "--tone", "{d}/tone.wav", "--calibration",
                          "{f}", "--quiet"]),
    "terminated.json": ("json", ["analyze", "--terminated", "{d}/terminated.wav", "--tone", "{d}/tone.wav",
                                 "--volts-per-fs", "2", "--quiet"]),
    "known_good_profile.toml": ("toml", ["check", "--profile", "{f}", "{d}/results.json"]),
    "head_amp_chain.toml": ("toml", ["cascade", "{f}"]),
    "noise_source_enr.toml": ("toml", ["yfactor", "--hot", "{d}/vhf_hot.sigmf-meta", "--cold", "{d}/vhf_cold.sigmf-meta",
                                       "--enr-table", "{f}", "--rows", "2", "--quiet"]),
    "plan.toml": ("toml", ["measure", "{f}", "--yes", "--out-dir", "{d}/out/m", "--device", "no such device"]),
    "vhf_hot.sigmf-meta": ("json", ["yfactor", "--hot", "{f}", "--cold", "{d}/vhf_cold.sigmf-meta", "--enr-db", "5.5",
                                    "--rows", "2", "--quiet"]),
}


def _cases():
    return [(name, kind, argv) for name, (kind, argv) in FILES.items()]


@pytest.mark.parametrize(("name", "kind", "argv"), _cases(), ids=[c[0] for c in _cases()])
def test_wrong_kinds_of_value_never_reach_an_internal_error(base, tmp_path, capsys, name, kind, argv):
    d = tmp_path / "bench"
    shutil.copytree(base, d, symlinks=True)
    original = (d / name).read_text(encoding="utf-8")
    data = json.loads(original) if kind == "json" else parse_toml(original, name)
    faults = []
    for path, wrong in _variants(data):
        spoiled = _set(data, path, wrong)
        try:
            text = json.dumps(spoiled) if kind == "json" else _toml(spoiled)
        except (TypeError, ValueError):
            continue  # a value TOML cannot hold
        (d / name).write_text(text, encoding="utf-8")
        rc = main([a.replace("{f}", str(d / name)).replace("{d}", str(d)) for a in argv])
        err = capsys.readouterr().err
        if rc not in (0, 1, 2, 3) or "internal error" in err:
            faults.append(f"{'.'.join(map(str, path))} = {wrong!r}: exit {rc}: {err.strip()[:160]}")
    (d / name).write_text(original, encoding="utf-8")
    assert not faults, "\n".join(faults)
