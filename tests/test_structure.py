"""House rules that keep the code easy to walk (the team's design notes): small functions and modules,
imports that point inward, a fast --help. Structural checks, no outside reference needed."""

import ast
import subprocess
import sys
from pathlib import Path

import pytest

PKG = Path(__file__).resolve().parent.parent / "benchnf"
MAX_FUNCTION_LINES = 80  # code lines of one function, its docstring not counted
MAX_MODULE_LINES = 500

# Lower layers never import higher ones: (layer, layers it must not import).
FORBIDDEN = {
    "dsp": ("noise", "measure", "check", "report", "cli", "write", "acquire", "io"),
    "noise": ("measure", "check", "report", "cli", "acquire"),
    "io": ("measure", "check", "report", "cli", "noise"),  # a trace reader makes a dsp Psd
    "measure": ("check", "report", "cli"),
    "report": ("cli", "measure.gain_method", "measure.requests"),
    "write": ("measure", "check", "report", "cli", "io", "dsp", "noise"),
    "desk": ("cli",),  # a front end beside cli/: neither imports the other's modules
}
# Only the command line starts the desk: no library layer imports it.
for _layer in ("dsp", "noise", "io", "measure", "report", "write"):
    FORBIDDEN[_layer] += ("desk",)


def _modules():
    # The demo data's generator is a script that ships beside the captures, not part of the library.
    return sorted(p for p in PKG.rglob("*.py") if "__pycache__" not in p.parts and "captures_demo" not in p.parts)


def _code_lines(node: ast.AST) -> int:
    lines = node.end_lineno - node.lineno + 1
    body = getattr(node, "body", [])
    if body and isinstance(body[0], ast.Expr) and isinstance(getattr(body[0], "value", None), ast.Constant) \
            and isinstance(body[0].value.value, str):
        lines -= body[0].end_lineno - body[0].lineno + 1
    return lines


def test_no_function_is_longer_than_80_code_lines():
    long = []
    for path in _modules():
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)) and _code_lines(node) > MAX_FUNCTION_LINES:
                long.append(f"{path.relative_to(PKG)}:{node.lineno} {node.name} ({_code_lines(node)})")
    assert not long, long


def test_no_module_is_longer_than_500_lines():
    big = [f"{p.relative_to(PKG)} ({n})" for p in _modules()
           if (n := len(p.read_text().splitlines())) > MAX_MODULE_LINES]
    assert not big, big


@pytest.mark.parametrize("layer", sorted(FORBIDDEN))
def test_lower_layers_do_not_import_higher_ones(layer):
    bad = []
    for path in (PKG / layer).rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.ImportFrom) and node.level >= 2 and node.module:
                for higher in FORBIDDEN[layer]:
                    if node.module == higher or node.module.startswith(higher + "."):
                        bad.append(f"{path.relative_to(PKG)}:{node.lineno} imports ..{node.module}")
    assert not bad, bad


def test_help_loads_no_numpy():
    code = ("import sys\nfrom benchnf.cli import main\n"
            "try:\n    main(['--help'])\nexcept SystemExit:\n    pass\n"
            "print('numpy' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip().splitlines()[-1] == "False"


def test_every_option_a_message_names_exists():
    """A message that tells the user to give --some-option must name an option the parser knows."""
    import re

    from benchnf.cli import build_parser
    import argparse

    def options(parser) -> set:
        found = set(parser._option_string_actions)
        for action in parser._actions:
            if isinstance(action, argparse._SubParsersAction):
                for sub in action.choices.values():
                    found |= options(sub)
        return found
    known = options(build_parser())
    named = set()
    for path in _modules():
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.Constant) and isinstance(node.value, str):
                named |= set(re.findall(r"(?<![\w-])--[a-z][a-z0-9-]+", node.value))
    assert not sorted(named - known), sorted(named - known)


def test_the_version_is_written_once():
    """pyproject.toml takes the version from benchnf.__version__ (dynamic); the installed metadata agrees."""
    from importlib.metadata import version
    try:
        import tomllib
    except ModuleNotFoundError:  # Python 3.10
        import tomli as tomllib

    import benchnf
    project = tomllib.loads((PKG.parent / "pyproject.toml").read_text())
    assert "version" not in project["project"] and "version" in project["project"]["dynamic"]
    assert version("benchnf") == benchnf.__version__


# Where JSON may be parsed, and why: a results file becomes its typed result at once (registry, records), every
# other file of ours is read by its own reader (io/, calibration, provenance), the desk parses the browser's
# requests, the demo its ground truth. Nowhere else can a results file exist as a dict read by string keys.
JSON_READERS = {
    "registry.py": "results files, typed at once (read_result, result_from_dict)",
    "records/store.py": "a result kept in the store, typed at once through the registry",
    "calibration.py": "calibration files",
    "measure/provenance.py": "a calibration's identity for the provenance",
    "io/sidecar.py": "sidecars", "io/sigmf_iq.py": "SigMF metadata", "io/schemas.py": "the shipped schemas",
    "desk/server.py": "the browser's requests (not a file)",
    "demo.py": "the demo's ground truth",
    "dsp/fftw_backend.py": "FFTW's kept plans (a cache of its own)",
}


def test_results_files_are_read_only_as_typed_results():
    found = {}
    for path in _modules():
        rel = path.relative_to(PKG).as_posix()
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.Attribute) and node.attr in ("load", "loads") and \
                    isinstance(node.value, ast.Name) and node.value.id == "json":
                found.setdefault(rel, node.lineno)
    assert set(found) <= set(JSON_READERS), {k: v for k, v in found.items() if k not in JSON_READERS}


def test_typed_results_are_not_read_by_key():
    """No result type can be read like a dict (the one exception: an Uncertainty gives a figure's U by its
    budget's name, ``u["ein_db"]``)."""
    from benchnf import registry
    for kind in (*registry.kinds(), "check"):
        cls = registry._type_of(kind)
        assert not hasattr(cls, "__getitem__") and not hasattr(cls, "get"), kind
