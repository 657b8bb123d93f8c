"""Reading captures from files."""

from .audio_file import AUDIO_SUFFIXES, open_capture
from .sidecar import find_sidecar, read_sidecar, write_sidecar

__all__ = ["AUDIO_SUFFIXES", "open_capture", "find_sidecar", "read_sidecar", "write_sidecar"]
