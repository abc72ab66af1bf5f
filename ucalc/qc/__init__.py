"""Uncertainty from quality-control and validation data (the top-down approach of Nordtest TR 537 and
ISO 11352): level dependence, detection limits, the check of a budget against QC data, and proficiency scores.

Each module computes and returns frozen results; reading and printing live in :mod:`ucalc.qc.data` and
:mod:`ucalc.reports.qc`.
"""

from __future__ import annotations

from typing import Any


def plain(obj: Any) -> Any:
    """A frozen result as JSON-ready data: dataclasses become dicts, tuples lists, non-finite floats None."""
    import dataclasses
    import math

    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {f.name: plain(getattr(obj, f.name)) for f in dataclasses.fields(obj)}
    if isinstance(obj, tuple | list):
        return [plain(x) for x in obj]
    if isinstance(obj, dict):
        return {str(k): plain(v) for k, v in obj.items()}
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    return obj
