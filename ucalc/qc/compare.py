"""The reality check of a bottom-up budget: its combined standard uncertainty set against the within-laboratory
reproducibility that QC data show at the same level.

For each control level: the QC data give s_Rw with nu_QC dof (a series, or a one-way layout of runs, as in
:mod:`ucalc.inputs.reproducibility`); the budget gives u_c with nu_eff (JCGM 100 G.4.1), scaled to the QC mean
as a relative uncertainty, u_b = (u_c/y) * mean_QC. Then
- the ratio u_b / s_Rw;
- F = s_Rw^2 / u_b^2 against the F distribution with (nu_QC, nu_eff) dof, two-sided at 5 % (the variance-ratio
  test, e.g. ISO 5725-2's comparisons of variances; scipy.stats.f);
- the share of the observed variance the budget explains, u_b^2 / s_Rw^2;
- a verdict: consistent (F not significant), misses sources (s_Rw significantly larger), or pessimistic (u_b
  significantly larger). A budget also holds effects that do not vary between QC runs (a reference value's
  uncertainty, a bias), so a u_b somewhat above s_Rw is expected.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

DOF_CAP = 1e6  # infinite dof enter the F distribution as a very large number


@dataclass(frozen=True)
class LevelCheck:
    """One QC level against the budget."""

    level: str
    qc_mean: float
    qc_n: int
    s_rw: float
    dof_qc: float
    u_budget: float
    dof_budget: float
    ratio: float
    f: float
    p_value: float
    share_explained: float
    verdict: str
    qc_source: str


@dataclass(frozen=True)
class Comparison:
    measurand: str
    unit: str
    budget_value: float
    budget_u: float
    budget_dof: float
    levels: tuple[LevelCheck, ...]
    notes: tuple[str, ...]


VERDICTS = {
    "consistent": "consistent: the budget's u agrees with the scatter the QC data show",
    "misses sources": "misses sources: the QC data scatter more than the budget allows; look for effects the "
                      "budget leaves out",
    "pessimistic": "pessimistic: the budget's u is larger than the QC scatter; some components may be "
                   "overestimated (or are effects that do not vary between runs)",
}


def check_level(level: str, qc_mean: float, qc_n: int, s_rw: float, dof_qc: float, u_budget: float,
                dof_budget: float, source: str = "", alpha: float = 0.05) -> LevelCheck:
    """Ratio, F-test (two-sided, alpha) and share explained for one level."""
    from scipy import stats

    if s_rw <= 0 or u_budget <= 0:
        raise ValueError("both the QC standard deviation and the budget's u must be positive")
    f = (s_rw / u_budget) ** 2
    d1, d2 = min(dof_qc, DOF_CAP), min(dof_budget, DOF_CAP)
    p = float(min(1.0, 2 * min(stats.f.cdf(f, d1, d2), stats.f.sf(f, d1, d2))))
    if p >= alpha:
        verdict = "consistent"
    else:
        verdict = "misses sources" if f > 1 else "pessimistic"
    return LevelCheck(level, qc_mean, qc_n, s_rw, dof_qc, u_budget, dof_budget, u_budget / s_rw, f, p,
                      (u_budget / s_rw) ** 2, verdict, source)


def compare(budget_path: str | Path, data_path: str | Path, column: str | None = None,
            run_column: str | None = None, level_column: str | None = None) -> Comparison:
    """Evaluate the budget (GUM) and check it against each level of the QC data file."""
    from ..errors import BudgetError, Location, UcalcError
    from ..inputs.reproducibility import from_series
    from ..qc.data import read_columns
    from ..tables import read_table
    from ..workflow import evaluate

    gum = evaluate(budget_path).gum
    if gum.value == 0:
        raise UcalcError(f"{budget_path}: the budget's value is 0, so its u cannot be scaled to the QC level")
    if column is None:
        names = list(read_table(data_path).columns)
        column = next((c for c in (gum.measurand, "value", "result") if c in names), None)
        if column is None:
            raise BudgetError(f"no column '{gum.measurand}', 'value' or 'result'; name the results column with "
                              "--column", location=Location(str(data_path), 1, 1))
    text = [c for c in (run_column, level_column) if c]
    cols = read_columns(data_path, [column], text)
    values = cols.numbers[column]
    groups: dict[str, list[int]] = {}
    for i in range(len(values)):
        groups.setdefault(cols.labels[level_column][i] if level_column else "", []).append(i)
    rel = gum.standard_uncertainty / abs(gum.value)
    checks = []
    notes = []
    for level, rows in groups.items():
        vals = [values[i] for i in rows]
        runs = [cols.labels[run_column][i] for i in rows] if run_column else None
        try:
            p = from_series(vals, runs, relative=False)
        except ValueError as exc:
            raise BudgetError(f"{'level ' + repr(level) + ': ' if level else ''}{exc}",
                              location=Location(str(data_path))) from None
        u_b = rel * abs(p.level)
        try:
            checks.append(check_level(level, p.level, p.n, p.s, p.dof, u_b, gum.effective_dof, p.source))
        except ValueError as exc:
            raise UcalcError(f"{data_path}: {exc}") from None
        if not 0.5 <= abs(p.level) / abs(gum.value) <= 2:
            notes.append(f"{'level ' + repr(level) + ': ' if level else ''}the QC mean {p.level:.4g} is far from "
                         f"the budget's value {gum.value:.4g}; its relative u was applied there, which holds only "
                         "if the budget's uncertainty is proportional to the level")
    return Comparison(gum.measurand, gum.unit, gum.value, gum.standard_uncertainty, gum.effective_dof,
                      tuple(checks), tuple(notes))
