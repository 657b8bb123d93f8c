"""Exit statuses of the benchnf command (scripts rely on them)."""

from __future__ import annotations

from enum import IntEnum

__all__ = ["ExitStatus"]


class ExitStatus(IntEnum):
    """0 done or every limit passed; 1 only "a limit check failed"; never 1 for anything else."""

    OK = 0
    CHECK_FAILED = 1        # a unit failed its limits
    BAD_INPUT = 2           # bad arguments, files or outputs: one line on stderr says what and what to do
    MISSING_DEPENDENCY = 3  # an optional library or the audio device is missing
    INTERNAL_ERROR = 70     # a fault in benchnf itself (sysexits EX_SOFTWARE): a report file is written
    INTERRUPTED = 130       # Ctrl-C, SIGTERM or end of input (128 + SIGINT)
    BROKEN_PIPE = 141       # the reader of the output went away (128 + SIGPIPE)
