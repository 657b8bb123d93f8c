"""Reading inputs from files: one opener for every kind (:mod:`.opener`), sidecars, readers."""

from .audio_file import open_capture
from .opener import AUDIO_SUFFIXES, input_kind, open_input
from .sidecar import find_sidecar, read_sidecar, write_sidecar

__all__ = ["AUDIO_SUFFIXES", "open_capture", "open_input", "input_kind", "find_sidecar", "read_sidecar",
           "write_sidecar"]
