"""Import optional or heavy libraries at call time, through one helper."""

from __future__ import annotations

import importlib
from types import ModuleType

from .errors import MissingDependencyError


def require(module: str, *, extra: str | None, purpose: str) -> ModuleType:
    """Import `module` or raise :class:`MissingDependencyError` with an install hint.

    Parameters
    ----------
    module : str
        Dotted module name, e.g. ``"matplotlib.pyplot"``.
    extra : str or None
        The ``benchnf[extra]`` that provides it; None for a core dependency.
    purpose : str
        What the caller wanted to do, for the message.

    Raises
    ------
    MissingDependencyError
        The module, or a C library it loads, is missing.
    """
    try:
        return importlib.import_module(module)
    except (ImportError, OSError) as err:  # OSError: a C library such as PortAudio not found
        target = f"'benchnf[{extra}]'" if extra else "benchnf"
        raise MissingDependencyError(
            f"{purpose} needs {module!r} ({err}); install it with: pip install {target}"
        ) from err
