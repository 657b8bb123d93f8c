"""``python -m benchnf``."""

from .cli import main

raise SystemExit(main())
