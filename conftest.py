"""Root pytest configuration: keep module-level scripts out of doctest collection."""

collect_ignore = ["benchnf/__main__.py", "benchnf/captures_demo/generate.py"]
