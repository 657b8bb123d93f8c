"""The measurements benchnf makes, each registered once; every front end iterates them.

An entry names, by import path (so that ``benchnf --help`` imports none of them):

* ``result``: the frozen result type (a :class:`benchnf.codec.ResultFile`: ``to_dict``, ``from_dict``, its
  JSON Schema), whose ``KIND`` is the entry's name and the ``kind`` of its results files;
* ``request`` and ``run``: what a user states (paths and values, nothing opened) and the function that
  resolves it and measures (``run(request, progress=None) -> result``);
* ``present``: the one neutral view of a result (:class:`benchnf.report.view.View`) that the terminal, the
  PNG plots, the HTML report and the desk render;
* ``options``: the command line's option groups (``options(parser)``) and ``from_args(args) -> request``.

The command line makes one command per entry, the desk shows any registered result, the records store
keeps and reads any registered result, and the demo runs them. Adding a measurement is one folder under
``measure/`` and one :func:`register` call (docs/architecture.md, "Adding a measurement").
"""

from __future__ import annotations

import dataclasses
import importlib
import json
import warnings
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .errors import BenchWarning, warnings_into

__all__ = ["Measurement", "register", "measurements", "measurement", "kinds", "result_type", "result_from_dict",
           "read_result", "load"]


def load(path: str) -> Any:
    """The object an import path ``package.module:name`` names (the module itself without ``:name``)."""
    module, _, name = path.partition(":")
    obj = importlib.import_module(module)
    return getattr(obj, name) if name else obj


@dataclass(frozen=True)
class Measurement:
    """One measurement: its name (the command and the results' kind) and where its parts live."""

    name: str
    summary: str
    description: str
    result: str
    request: str
    run: str
    present: str
    options: str
    from_args: str
    outputs: str | None = None  # optional: extra files a command writes (args, writer, result) -> None
    stream: str | None = None  # optional: a live run the command takes with --live, (args, writer) -> exit status

    def part(self, which: str) -> Any:
        """One of the parts above, imported now."""
        path = getattr(self, which)
        if path is None:
            raise LookupError(f"the measurement {self.name!r} has no {which}")
        return load(path)


_REGISTRY: dict[str, Measurement] = {}


def register(entry: Measurement) -> Measurement:
    """Add a measurement (its name must be new)."""
    if entry.name in _REGISTRY and _REGISTRY[entry.name] != entry:
        raise ValueError(f"a measurement named {entry.name!r} is registered already")
    _REGISTRY[entry.name] = entry
    return entry


def unregister(name: str) -> None:
    """Remove a measurement (tests register toys and take them away again)."""
    _REGISTRY.pop(name, None)


def measurements() -> Iterator[Measurement]:
    """Every registered measurement, in the order registered."""
    return iter(list(_REGISTRY.values()))


def measurement(kind: str) -> Measurement:
    """The measurement of a results kind; LookupError for one not registered."""
    try:
        return _REGISTRY[kind]
    except KeyError:
        raise LookupError(f"no measurement of kind {kind!r}") from None


def kinds() -> tuple[str, ...]:
    return tuple(_REGISTRY)


def result_type(kind: str) -> type:
    return measurement(kind).part("result")


# Results that are not measurements but are written as files of their own (a unit's check).
_OTHER_RESULTS = {"check": "benchnf.check.limits:CheckResult"}


def _type_of(kind: str) -> Any:
    if kind in _OTHER_RESULTS:
        return load(_OTHER_RESULTS[kind])
    return result_type(kind)


def result_from_dict(data: Any, *, where: str, kinds: tuple[str, ...] | None = None) -> Any:
    """The typed result of a results JSON's data, validated by its shipped JSON Schema (one line naming the
    place, key, what was found and what was expected otherwise)."""
    from .codec import check_header
    allowed = kinds or (*_REGISTRY, *_OTHER_RESULTS)
    kind = check_header(data, where, tuple(allowed))
    from .io.schemas import shipped, validate
    cls = _type_of(kind)
    name = f"{kind}-results-{cls.SCHEMA_VERSION}.json"
    validate(data, name if shipped(name) else cls.file_schema(), where=where)
    return cls.from_dict(data, where=where)


def read_result(path: str | Path, *, kinds: tuple[str, ...] | None = None) -> Any:
    """Read a results JSON of ours as its typed result (see :func:`result_from_dict`)."""
    from .errors import ParameterError
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ParameterError(f"{path}: no such results file") from None
    except IsADirectoryError:
        raise ParameterError(f"{path} is a folder, not a results file") from None
    except UnicodeDecodeError:
        raise ParameterError(f"{path} is not UTF-8 text: it is not a results JSON written by benchnf") from None
    except OSError as err:
        raise ParameterError(f"{path} cannot be read ({err.strerror or err})") from err
    try:
        data = json.loads(text)
    except ValueError as err:
        raise ParameterError(f"{path} is not a readable results JSON ({err})") from err
    return result_from_dict(data, where=str(path), kinds=kinds)


def _builtin(name: str, summary: str, description: str, *, result: str, request: str, run: str, present: str,
             cli: str, outputs: bool = False, stream: bool = False) -> Measurement:
    return register(Measurement(name, summary, description, result, request, run, present,
                                options=f"{cli}:add_options", from_args=f"{cli}:request_from_args",
                                outputs=f"{cli}:write_extra" if outputs else None,
                                stream=f"{cli}:run_stream" if stream else None))


_builtin("analysis", "gain-method noise analysis of captures",
         "Gain, input-referred noise density, EIN and noise figure from a terminated-input capture and a tone "
         "(or stated gain).",
         result="benchnf.measure.results:AnalysisResult", request="benchnf.measure.requests:GainMethodRequest",
         run="benchnf.measure.requests:run_gain_method", present="benchnf.report.present_analysis:present",
         cli="benchnf.cli.analyze", outputs=True)
_builtin("yfactor", "noise figure by the Y-factor (hot/cold) method",
         "DUT noise figure, noise temperature and gain from hot and cold captures (noise diode ENR or two "
         "temperatures), with the second-stage correction from a calibration pair.",
         result="benchnf.measure.yfactor_result:YFactorResult", request="benchnf.measure.yfactor_request:YFactorRequest",
         run="benchnf.measure.yfactor_request:run_yfactor", present="benchnf.report.present_yfactor:present",
         cli="benchnf.cli.yfactor", stream=True)
_builtin("eni", "amplifier en and in from a source-resistance sweep, NF against Rs",
         "Voltage noise en and current noise in (and their correlation with three or more resistances) per "
         "one-third-octave band, Ropt and NFmin.",
         result="benchnf.measure.stages:EniResult", request="benchnf.measure.stage_requests:SweepRequest",
         run="benchnf.measure.stage_requests:run_en_in", present="benchnf.report.present_stages:present_eni",
         cli="benchnf.cli.eni")
_builtin("budget", "measured stage budget from tap captures, against the prediction",
         "Input-referred noise after each stage, from captures at each stage's output (the chain's input "
         "terminated) with a tone capture for each tap's gain, beside the prediction from the chain file.",
         result="benchnf.measure.stages:BudgetResult", request="benchnf.measure.stage_requests:BudgetRequest",
         run="benchnf.measure.stage_requests:run_budget", present="benchnf.report.present_stages:present_budget",
         cli="benchnf.cli.budget")
_builtin("cascade", "predict a chain's noise figure (Friis) and where to spend",
         "Noise figure, noise temperature and gain of a chain of stages from a chain file (docs/cascade.md), "
         "each stage's share of the excess noise, and what a quieter stage would buy.",
         result="benchnf.measure.cascade:CascadePrediction", request="benchnf.measure.cascade:CascadeRequest",
         run="benchnf.measure.cascade:run_cascade", present="benchnf.report.present_stages:present_cascade",
         cli="benchnf.cli.cascade")

_builtin("bias", "the input device: predicted en, in and NF for a source, and its best current",
         "en, in, spot and band NF and EIN of a bipolar or field-effect input device at its operating point for a "
         "source resistance (through a transformer or with devices in parallel), the current of least NF, "
         "candidate parts ranked, and a built stage's measured en and in explained by its device.",
         result="benchnf.measure.bias_result:BiasResult", request="benchnf.measure.bias:BiasRequest",
         run="benchnf.measure.bias:run_bias", present="benchnf.report.present_bias:present", cli="benchnf.cli.bias")

#: The command name of a measurement whose results kind reads differently on the command line.
COMMAND_NAMES: dict[str, str] = {"analysis": "analyze"}


def command_name(entry: Measurement) -> str:
    return COMMAND_NAMES.get(entry.name, entry.name)


def run_measurement(entry: Measurement, request: Any, *, progress: Callable[[int], None] | None = None) -> Any:
    """Resolve and run a measurement's request; its typed result, carrying every warning of ours raised on
    the way (in its ``warnings``, once each) when its type has that field."""
    warned: list[str] = []
    with warnings_into(warned):
        result = entry.part("run")(request, progress=progress)
    if not any(f.name == "warnings" for f in dataclasses.fields(result)):
        for text in warned:  # a type without the field: the boundary shows them
            warnings.warn(text, BenchWarning, stacklevel=2)
        return result
    own = tuple(result.warnings)
    return dataclasses.replace(result, warnings=(*own, *(w for w in warned if w not in own)))
