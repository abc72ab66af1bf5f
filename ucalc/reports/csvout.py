"""The budget table as CSV (unrounded numbers, infinite dof as 'inf') for spreadsheets.

Columns in the order of the GUM's worked examples (input, estimate, u(x_i), dof, c_i, |c_i|·u(x_i), share of
u_c²), then how u(x_i) was evaluated; the names match the JSON keys (docs/json-output.md).
"""

from __future__ import annotations

import csv
import io

from ..engines.gum import GumResult

COLUMNS = ["input", "estimate", "unit", "standard_uncertainty", "dof", "sensitivity", "contribution",
           "variance_share", "type", "distribution"]


def budget_table(result: GumResult) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(COLUMNS)
    for r in result.contributions:
        writer.writerow([r.input, repr(r.value), r.unit, repr(r.standard_uncertainty), repr(r.dof),
                         repr(r.sensitivity), repr(r.contribution), repr(r.variance_share), r.kind, r.shape])
    return buffer.getvalue()
