"""The measurement layer every front end shares: resolving what the user gave into validated inputs.

See :mod:`benchnf.measure.inputs` for the one priority rule.
"""

from .inputs import agree, distinct_files, open_calibrated

__all__ = ["agree", "distinct_files", "open_calibrated"]
