"""pyFFTW for long streams: imported beside the stream, and its measured plans kept between runs.

**The import.** Importing pyFFTW costs about 0.15 s here, nearly all of it scipy.fft, which pyFFTW's
package loads for its interfaces and nothing else of a noise analysis needs. Imported in a streaming
thread, that time stalls both cores (the other part waits on the import lock); imported in its own thread
(:func:`start`), it overlaps the decoding and numpy transforms of the first blocks, which release the GIL.
A stream takes :func:`module` at each batch and moves to FFTW at the first batch after the import.

**The plans.** FFTW chooses a plan by estimate (``FFTW_ESTIMATE``, instant) or by timing candidates
(``FFTW_MEASURE``): at 32768 points in single precision the measured plan ran 0.071-0.086 ms per
transform here against 0.117 ms estimated, but measuring costs about 0.35 s. FFTW's *wisdom* records a
measured plan so that a later planner finds it at once (the FFTW manual, "Words of Wisdom"). A long
stream (:func:`plan` with ``measure=True``) has its whole batches' plan measured once per machine and
shape; the wisdom is kept in a small JSON file of benchnf's own (:func:`wisdom_path`: ``$BENCHNF_FFTW_WISDOM``, or
``fftw-wisdom.json`` in ``$XDG_CACHE_HOME/benchnf`` or ``~/.cache/benchnf``; ``BENCHNF_FFTW_WISDOM=off``
keeps none and never measures). Wisdom changes only the speed: every plan computes the same transform.
The file may be deleted at any time; one that cannot be read, or was measured by another FFTW or on
another machine (a cache folder shared between hosts), is ignored and replaced.
"""

from __future__ import annotations

import os
import threading
from pathlib import Path
from types import ModuleType
from typing import Any

__all__ = ["installed", "start", "module", "plan", "wisdom_path"]

_lock = threading.Lock()
_plan_lock = threading.Lock()  # benchnf's planning and its wisdom export, one at a time
_thread: threading.Thread | None = None
_module: ModuleType | None = None
_installed: bool | None = None
_WISDOM_FORMAT = "benchnf-fftw-wisdom-1"


def installed() -> bool:
    """True when pyFFTW can be imported (found on the path; not imported)."""
    global _installed
    if _installed is None:
        import importlib.util
        _installed = importlib.util.find_spec("pyfftw") is not None
    return _installed


def wisdom_path() -> Path | None:
    """Where measured plans are kept, or None when ``BENCHNF_FFTW_WISDOM`` is ``off`` (or empty)."""
    chosen = os.environ.get("BENCHNF_FFTW_WISDOM")
    if chosen is not None:
        return None if chosen.strip().lower() in ("", "off") else Path(chosen).expanduser()
    cache = os.environ.get("XDG_CACHE_HOME") or str(Path("~/.cache").expanduser())
    return Path(cache) / "benchnf" / "fftw-wisdom.json"


def _version(fftw: Any) -> str:
    return str(fftw._fftw_version_dict.get("32", "")) + "/" + str(fftw._fftw_version_dict.get("64", ""))


def _host() -> str:
    """The machine wisdom was measured on: a cache folder shared between machines keeps one's only."""
    import platform
    return f"{platform.node()}/{platform.machine()}"


def _load_wisdom(fftw: Any) -> None:
    path = wisdom_path()
    if path is None:
        return
    import json
    try:
        kept = json.loads(path.read_text(encoding="ascii"))
        if (kept.get("format"), kept.get("fftw"), kept.get("host")) == (_WISDOM_FORMAT, _version(fftw), _host()):
            fftw.import_wisdom(tuple(w.encode("ascii") for w in kept["wisdom"]))
    except (OSError, ValueError, TypeError, KeyError, AttributeError):
        pass  # none yet, or damaged: planned afresh and replaced


def _save_wisdom(fftw: Any) -> None:
    path = wisdom_path()
    if path is None:
        return
    import json
    import tempfile
    text = json.dumps({"format": _WISDOM_FORMAT, "fftw": _version(fftw), "host": _host(),
                       "wisdom": [w.decode("ascii") for w in fftw.export_wisdom()]})
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        with tempfile.NamedTemporaryFile("w", encoding="ascii", dir=path.parent, prefix=".wisdom-",
                                         delete=False) as fh:
            fh.write(text)
        os.replace(fh.name, path)  # whole or not at all, also with another benchnf writing at once
    except OSError:
        pass  # a read-only cache: the next long run measures again


def _load() -> None:
    global _module
    try:
        import pyfftw
    except ImportError:  # found but broken (a missing FFTW library): numpy stays
        return
    with _plan_lock:
        _load_wisdom(pyfftw)
    _module = pyfftw


def start() -> None:
    """Begin the import in its own thread, once per process (a no-op when pyFFTW is not installed).

    The thread is not a daemon: a process that ends while it runs waits for it, rather than finalising the
    interpreter under an import.
    """
    global _thread
    with _lock:
        if _thread is None and installed():
            _thread = threading.Thread(target=_load, name="benchnf-fftw-import")
            _thread.start()


def module(*, wait: bool = False) -> ModuleType | None:
    """pyFFTW when its import has finished (after waiting for it with `wait`), else None."""
    if wait:
        start()
        if _thread is not None:
            _thread.join()
    return _module


def plan(fftw: ModuleType, a: Any, b: Any, *, measure: bool) -> tuple[Any, str]:
    """An FFTW plan from `a` to `b` along their last axis, and how it was made: ``"wisdom"`` (a measured
    plan known), ``"measured"`` (with `measure`, where wisdom can be kept: measured now and kept) or
    ``"estimated"``."""
    kw: dict[str, Any] = dict(axes=(a.ndim - 1,), threads=1)
    with _plan_lock:
        try:
            return fftw.FFTW(a, b, flags=("FFTW_MEASURE", "FFTW_WISDOM_ONLY", "FFTW_DESTROY_INPUT"), **kw), "wisdom"
        except RuntimeError:
            pass
        if not (measure and wisdom_path() is not None):
            return fftw.FFTW(a, b, flags=("FFTW_ESTIMATE", "FFTW_DESTROY_INPUT"), **kw), "estimated"
        made = fftw.FFTW(a, b, flags=("FFTW_MEASURE", "FFTW_DESTROY_INPUT"), **kw)
        _save_wisdom(fftw)
        return made, "measured"
