"""The budget table as CSV (unrounded numbers, infinite dof as 'inf') for spreadsheets."""

from __future__ import annotations

import csv
import io

from ..engines.gum import GumResult

COLUMNS = ["input", "estimate", "unit", "standard_uncertainty", "type", "distribution", "dof", "sensitivity",
           "contribution", "index"]


def budget_table(result: GumResult) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(COLUMNS)
    for r in result.contributions:
        writer.writerow([r.input, repr(r.value), r.unit, repr(r.standard_uncertainty), r.kind, r.shape, repr(r.dof),
                         repr(r.sensitivity), repr(r.contribution), repr(r.variance_share)])
    return buffer.getvalue()
