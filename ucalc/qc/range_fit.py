"""Uncertainty across the working range: u(c) = sqrt(u0^2 + (b c)^2) fitted to precision at several levels.

An absolute floor u0 (dominant near the detection limit) and a relative part b (dominant at high levels) is the
common form of the level dependence (common practice; ISO 11352:2012 treats the dependence on the level and
asks for the uncertainty over the working range). The standard deviations s_i at levels c_i, with nu_i dof, are
fitted by weighted least squares with var(s_i) ~ u(c_i)^2 / (2 nu_i) (JCGM 100 G.4.2 relation; the weights are
updated from the fitted u(c_i) a few times), u0 and b kept non-negative (scipy.optimize.curve_fit). The dof
given to u0 and b follow the same relation, nu = (1/2) (p / u(p))^2.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class Level:
    """Precision at one level: the mean level c, s, its dof and the number of results."""

    label: str
    level: float
    s: float
    dof: float
    n: int


@dataclass(frozen=True)
class RangeFit:
    """The fitted u0 and b with their standard uncertainties and dof, and the levels with fitted values."""

    u0: float
    b: float
    u_u0: float
    u_b: float
    dof_u0: float
    dof_b: float
    levels: tuple[Level, ...]
    fitted: tuple[float, ...]
    working: tuple[str, ...]

    def u_at(self, c: float) -> float:
        """u(c) = sqrt(u0^2 + (b c)^2)."""
        return math.hypot(self.u0, self.b * c)


def _dof(p: float, u: float) -> float:
    if u <= 0 or not math.isfinite(u):
        return math.inf
    return max(1.0, 0.5 * (p / u) ** 2)


def fit(levels: Sequence[Level]) -> RangeFit:
    """Weighted least-squares fit of s_i = sqrt(u0^2 + (b c_i)^2) (see the module docstring)."""
    import numpy as np
    from scipy.optimize import curve_fit

    if len(levels) < 2:
        raise ValueError(f"a fit across the range needs precision at 2 or more levels (got {len(levels)})")
    c = np.array([abs(lv.level) for lv in levels])
    s = np.array([lv.s for lv in levels])
    nu = np.array([lv.dof for lv in levels])
    if np.any(s <= 0) or np.any(nu < 1):
        raise ValueError("every level needs a positive s with at least 1 dof")
    if len(set(c.tolist())) < 2:
        raise ValueError("the levels must differ to separate the floor from the relative part")
    # start from the linear least squares of s^2 on (1, c^2)
    design = np.column_stack([np.ones_like(c), c**2])
    start = np.linalg.lstsq(design, s**2, rcond=None)[0]
    p0 = [math.sqrt(max(start[0], (0.1 * s.min()) ** 2)), math.sqrt(max(start[1], 1e-12 * (s.max() / c.max()) ** 2))]

    def model(x: Any, u0: float, b: float) -> Any:
        return np.sqrt(u0 * u0 + (b * np.asarray(x)) ** 2)

    scale = np.sqrt(2 * np.minimum(nu, 1e6))
    expected = s
    for _ in range(4):  # weights from the fitted u(c_i), not the observed s_i (which would favour low s_i)
        popt, pcov = curve_fit(model, c, s, p0=p0, sigma=expected / scale, absolute_sigma=True,
                               bounds=([0, 0], [np.inf, np.inf]))
        p0 = [max(float(popt[0]), 1e-300), max(float(popt[1]), 1e-300)]
        expected = np.maximum(model(c, *popt), 1e-300)
    u0, b = float(popt[0]), float(popt[1])
    u_u0, u_b = (float(math.sqrt(max(pcov[i, i], 0.0))) for i in (0, 1))
    fitted = tuple(float(v) for v in model(c, u0, b))
    working = (f"{len(levels)} levels from {c.min():.4g} to {c.max():.4g}",
               f"u0 = {u0:.4g} (u {u_u0:.2g}), b = {b:.4g} (u {u_b:.2g}), weighted by 2 nu_i / u(c_i)^2",
               "u(c) = sqrt(u0^2 + (b c)^2)")
    return RangeFit(u0, b, u_u0, u_b, _dof(u0, u_u0), _dof(b, u_b), tuple(levels), fitted, working)


def levels_from_data(path: str, column: str, level_column: str, run_column: str | None = None) -> list[Level]:
    """Precision per level of a QC or validation file: s of each level's results (runs: one-way ANOVA)."""
    from ..errors import BudgetError, Location
    from ..inputs.reproducibility import from_series
    from .data import read_columns

    cols = read_columns(path, [column], [level_column, *([run_column] if run_column else [])])
    groups: dict[str, list[int]] = {}
    for i, label in enumerate(cols.labels[level_column]):
        groups.setdefault(label, []).append(i)
    out = []
    for label, rows in groups.items():
        values = [cols.numbers[column][i] for i in rows]
        runs = [cols.labels[run_column][i] for i in rows] if run_column else None
        try:
            p = from_series(values, runs, relative=False)
        except ValueError as exc:
            raise BudgetError(f"level '{label}': {exc}", location=Location(path)) from None
        out.append(Level(label, p.level, p.s, p.dof, p.n))
    return sorted(out, key=lambda lv: lv.level)
