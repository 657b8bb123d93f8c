"""The one error boundary of the command line.

* A :class:`~benchnf.errors.BenchError` is one line on stderr and exit status 2 (3 for a missing
  dependency or device).
* An operating-system error that escaped a reader (a file vanished, no permission) is one line and 2.
* Ctrl-C, SIGTERM and the end of standard input stop quietly with 130; a closed pipe with 141.
* Anything else is a fault of benchnf: one line saying what failed and where a full report was
  written, exit status 70. Never 1, which means only "a limit check failed".
* Warnings become one line each: ``benchnf: warning:`` for ours, ``benchnf: note:`` for a library's.
"""

from __future__ import annotations

import argparse
import os
import signal
import sys
import warnings
from typing import Any

from ..errors import (
    BenchError,
    BenchWarning,
    DeviceNotFoundError,
    MissingDependencyError,
)
from ..write import Writer
from ._common import input_paths
from .status import ExitStatus

__all__ = ["run_guarded"]


def _show_warning(message: Any, category: type[Warning], filename: str, lineno: int,
                  file: Any = None, line: str | None = None) -> None:
    text = " ".join(str(message).split())
    if issubclass(category, BenchWarning):
        print(f"benchnf: warning: {text}", file=sys.stderr)
    else:
        origin = os.path.basename(os.path.dirname(filename)) or os.path.basename(filename)
        print(f"benchnf: note: {text} (from {origin})", file=sys.stderr)


def _on_sigterm(signum: int, frame: Any) -> None:
    raise KeyboardInterrupt  # handled like Ctrl-C: recordings close their files and sidecars


def _crash_report(args: argparse.Namespace, err: BaseException) -> str:
    """Write the traceback to a new file in the temporary folder; return its path."""
    import datetime as _dt
    import tempfile
    import traceback

    from .. import __version__
    fd, path = tempfile.mkstemp(prefix="benchnf-crash-", suffix=".txt")
    with os.fdopen(fd, "w", encoding="utf-8") as fh:
        fh.write(f"benchnf {__version__}, Python {sys.version.split()[0]}, {sys.platform}\n")
        fh.write(f"time: {_dt.datetime.now(_dt.timezone.utc).isoformat(timespec='seconds')}\n")
        fh.write(f"command: {' '.join(sys.argv)}\narguments: {vars(args)!r}\n\n")
        fh.write("".join(traceback.format_exception(type(err), err, err.__traceback__)))
    return path


def _quiet_stdout() -> None:
    """After a broken pipe: point stdout at /dev/null so the interpreter's final flush stays silent."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass


def run_guarded(args: argparse.Namespace) -> int:
    """Run ``args.run`` behind the boundary; return the exit status."""
    traceback_wanted = getattr(args, "traceback", False)
    previous = signal.getsignal(signal.SIGTERM)
    in_main_thread = True
    try:
        signal.signal(signal.SIGTERM, _on_sigterm)
    except ValueError:  # not the main thread (an embedding program): leave SIGTERM alone
        in_main_thread = False
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("always", BenchWarning)
            warnings.showwarning = _show_warning
            writer = Writer(inputs=input_paths(args), overwrite=getattr(args, "overwrite", False))
            return int(args.run(args, writer))
    except KeyboardInterrupt:
        print("benchnf: interrupted", file=sys.stderr)
        return ExitStatus.INTERRUPTED
    except EOFError:
        print("benchnf: the input ended; stopped", file=sys.stderr)
        return ExitStatus.INTERRUPTED
    except BrokenPipeError:
        _quiet_stdout()
        return ExitStatus.BROKEN_PIPE
    except BenchError as err:
        if traceback_wanted:
            raise
        print(f"benchnf: error: {' '.join(str(err).split())}", file=sys.stderr)
        return (ExitStatus.MISSING_DEPENDENCY if isinstance(err, (MissingDependencyError, DeviceNotFoundError))
                else ExitStatus.BAD_INPUT)
    except OSError as err:
        if traceback_wanted:
            raise
        where = f"{err.filename}: " if err.filename else ""
        print(f"benchnf: error: {where}{err.strerror or err}: check the path and its permissions",
              file=sys.stderr)
        return ExitStatus.BAD_INPUT
    except MemoryError:
        print("benchnf: error: not enough memory for this input: use shorter captures or a smaller --segment",
              file=sys.stderr)
        return ExitStatus.BAD_INPUT
    except Exception as err:  # noqa: BLE001 - the boundary: a fault of ours, reported, never exit 1
        if traceback_wanted:
            raise
        report = _crash_report(args, err)
        print(f"benchnf: internal error ({type(err).__name__}: {' '.join(str(err).split())[:200]}); "
              f"this is a fault of benchnf, not of your input; details in {report}", file=sys.stderr)
        return ExitStatus.INTERNAL_ERROR
    finally:
        if in_main_thread:
            signal.signal(signal.SIGTERM, previous)
