"""Within-laboratory reproducibility u(Rw) from quality-control and validation data.

Three sources, alone or together (the standard deviations combine in quadrature, as Nordtest TR 537 ed. 3.1
section 4.4 does when a control sample does not cover every step and duplicates of real samples add the rest):

- a control-sample series (TR 537 section 4.2; ISO 11352:2012 clause 8.2): s of the results, n - 1 dof. When a
  run holds several results the series is a one-way layout and is treated as a validation study (below);
- duplicates of samples (TR 537 section 4.4 and its range appendix; ISO 11352 clause 8.3): s = mean|d| / d2 with
  d2 = 1.128 (the range of two), or s = sqrt(sum d^2 / 2n) with n dof;
- a validation study of several runs (ISO 5725-2:1994 clause 7.4, one-way analysis of variance): repeatability
  s_r^2 = MS_within, between-run s_b^2 = (MS_between - MS_within) / n0 (zero if negative), s_Rw^2 = s_r^2 + s_b^2
  with Welch-Satterthwaite dof (JCGM 100 G.4.1) of the two mean squares.

``relative: true`` expresses each s as a fraction of the level (the mean of the data; for duplicates each
difference is divided by its pair's mean). The input is then a factor of value 1; otherwise a deviation of
value 0 in the data's unit.
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, ClassVar, Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from ..budget.definitions import Component, Quantity
from ..distributions import Distribution
from ..errors import Location
from .base import Derived, InputModel, InputSpec

D2_PAIRS = 1.128  # mean range of two normal values in units of sigma, 2/sqrt(pi) (ISO 11352 / TR 537 appendix)


@dataclass(frozen=True)
class Precision:
    """A standard deviation estimated from QC data: ``s`` (absolute or relative), its dof, the level and how."""

    s: float
    dof: float
    level: float
    n: int
    relative: bool
    source: str
    working: tuple[str, ...]
    repeatability: float | None = None
    between: float | None = None


def _require(ok: bool, message: str) -> None:
    if not ok:
        raise ValueError(message)


def series(values: Sequence[float], relative: bool = False) -> Precision:
    """Control-sample series: s and n - 1 dof (TR 537 section 4.2; ISO 11352 clause 8.2)."""
    n = len(values)
    _require(n >= 2, f"a control-sample series needs at least 2 results (got {n})")
    mean, s = statistics.fmean(values), statistics.stdev(values)
    _require(s > 0, f"the {n} control-sample results are identical: their standard deviation is zero")
    working = [f"control samples: n = {n}, mean {mean:.6g}, s = {s:.4g}, dof = n - 1 = {n - 1}"]
    if relative:
        _require(mean > 0, f"a relative s needs a positive mean (got {mean:.6g})")
        working.append(f"relative: s/mean = {s / mean:.4g}")
        s = s / mean
    return Precision(s, n - 1.0, mean, n, relative, "control-sample series (TR 537 4.2; ISO 11352 8.2)",
                     tuple(working))


def duplicates(pairs: Sequence[tuple[float, float]], method: Literal["range", "squares"] = "range",
               relative: bool = False) -> Precision:
    """Duplicates: s = mean|d|/1.128 (range) or sqrt(sum d^2/2n) (squares); TR 537 4.4, ISO 11352 8.3.

    dof: n for the sum of squares; n/(pi - 2) ~ 0.876 n for the mean range, from the variance of |d| of a
    normal difference, (pi/2 - 1) sigma^2 / n for the estimate (derived; checked by simulation in the tests).
    """
    n = len(pairs)
    _require(n >= 2, f"duplicates need at least 2 pairs (got {n})")
    means = [(a + b) / 2 for a, b in pairs]
    if relative:
        _require(all(m > 0 for m in means), "relative duplicates need every pair's mean to be positive")
        d = [(a - b) / m for (a, b), m in zip(pairs, means, strict=True)]
    else:
        d = [a - b for a, b in pairs]
    if method == "range":
        s = statistics.fmean(abs(x) for x in d) / D2_PAIRS
        dof = n / (math.pi - 2.0)
        how = f"s = mean|d| / 1.128 = {s:.4g}, dof ~ n/(pi - 2) = {dof:.1f}"
    else:
        s = math.sqrt(sum(x * x for x in d) / (2 * n))
        dof = float(n)
        how = f"s = sqrt(sum d^2 / 2n) = {s:.4g}, dof = n = {n}"
    _require(s > 0, "every duplicate pair agrees exactly: their standard deviation is zero")
    unit = "relative differences d/mean" if relative else "differences d"
    working = (f"duplicates: n = {n} pairs, {unit}", how)
    return Precision(s, dof, statistics.fmean(means), n, relative,
                     f"duplicates, {method} method (TR 537 4.4; ISO 11352 8.3)", working)


def runs_anova(groups: Sequence[Sequence[float]], relative: bool = False) -> Precision:
    """One-way ANOVA of runs (ISO 5725-2 7.4): s_r, s_b and s_Rw = sqrt(s_r^2 + s_b^2) with W-S dof."""
    p = len(groups)
    sizes = [len(g) for g in groups]
    _require(p >= 2, f"a validation study needs at least 2 runs (got {p})")
    _require(all(k >= 1 for k in sizes), "every run needs at least one result")
    total = sum(sizes)
    _require(total > p, "at least one run needs 2 or more results to estimate repeatability")
    grand = statistics.fmean(x for g in groups for x in g)
    means = [statistics.fmean(g) for g in groups]
    ss_within = sum((x - m) ** 2 for g, m in zip(groups, means, strict=True) for x in g)
    ss_between = sum(k * (m - grand) ** 2 for k, m in zip(sizes, means, strict=True))
    df_w, df_b = total - p, p - 1
    ms_w, ms_b = ss_within / df_w, ss_between / df_b
    n0 = (total - sum(k * k for k in sizes) / total) / df_b  # ISO 5725-2 7.4.4 (unequal run sizes)
    _require(ms_w > 0 or ms_b > 0, "every result of the study is identical: no scatter to estimate")
    s_r2 = ms_w
    s_b2 = max(0.0, (ms_b - ms_w) / n0)
    if s_b2 > 0:
        a, b = ms_b / n0, (1.0 - 1.0 / n0) * ms_w  # s_Rw^2 = MS_b/n0 + (1 - 1/n0) MS_w
        dof = (a + b) ** 2 / (a * a / df_b + (b * b / df_w if b > 0 else 0.0))
    else:
        dof = float(df_w)
    s = math.sqrt(s_r2 + s_b2)
    working = [f"validation study: {p} runs, {total} results, n0 = {n0:.4g}, grand mean {grand:.6g}",
               f"MS_between = {ms_b:.4g} (dof {df_b}), MS_within = {ms_w:.4g} (dof {df_w})",
               f"s_r = {math.sqrt(s_r2):.4g}, s_between = {math.sqrt(s_b2):.4g}"
               + (" (MS_between < MS_within: set to 0)" if ms_b < ms_w else ""),
               f"s_Rw = sqrt(s_r^2 + s_between^2) = {s:.4g}, dof {dof:.1f} (Welch-Satterthwaite)"]
    scale = 1.0
    if relative:
        _require(grand > 0, f"a relative s needs a positive mean (got {grand:.6g})")
        scale = grand
        working.append(f"relative: s_Rw/mean = {s / grand:.4g}")
    return Precision(s / scale, dof, grand, total, relative, "validation runs, one-way ANOVA (ISO 5725-2 7.4)",
                     tuple(working), math.sqrt(s_r2) / scale, math.sqrt(s_b2) / scale)


def group_runs(values: Sequence[float], runs: Sequence[str]) -> list[list[float]]:
    """Results grouped by run label, in order of first appearance."""
    groups: dict[str, list[float]] = {}
    for v, r in zip(values, runs, strict=True):
        groups.setdefault(r, []).append(v)
    return list(groups.values())


def from_series(values: Sequence[float], runs: Sequence[str] | None, relative: bool) -> Precision:
    """A control-sample series; with run labels repeated, the one-way layout of runs."""
    if runs is not None and len(set(runs)) < len(runs):
        return runs_anova(group_runs(values, runs), relative)
    return series(values, relative)


# ---- the input model --------------------------------------------------------------------------------------


class _Block(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)


class ControlSpec(_Block):
    values: list[float] | None = Field(default=None, max_length=100_000)
    runs: list[str] | None = Field(default=None, max_length=100_000)
    file: str | None = Field(default=None, max_length=500)
    column: str | None = None
    run_column: str | None = None

    @model_validator(mode="after")
    def _one(self) -> ControlSpec:
        _require((self.values is None) != (self.file is None), "give the results as 'values' or as 'file' with "
                 "'column'")
        _require(self.file is None or self.column is not None, "'file' needs 'column'")
        _require(self.runs is None or self.values is None or len(self.runs) == len(self.values),
                 "'runs' must have one label per value")
        return self


class DuplicatesSpec(_Block):
    pairs: list[list[float]] = Field(min_length=2, max_length=100_000)
    method: Literal["range", "squares"] = "range"

    @model_validator(mode="after")
    def _two(self) -> DuplicatesSpec:
        bad = [i for i, p in enumerate(self.pairs) if len(p) != 2]
        _require(not bad, f"pairs[{bad[0] if bad else 0}]: a duplicate pair has exactly 2 results")
        return self


class StudySpec(_Block):
    runs: list[list[float]] = Field(min_length=2, max_length=10_000)


class ReproducibilitySpec(_Block):
    control: ControlSpec | None = None
    duplicates: DuplicatesSpec | None = None
    study: StudySpec | None = None
    relative: bool = False
    unit: str | None = Field(default=None, max_length=100)

    @model_validator(mode="after")
    def _some(self) -> ReproducibilitySpec:
        _require(any((self.control, self.duplicates, self.study)),
                 "give at least one of 'control', 'duplicates' or 'study'")
        return self


class Spec(InputSpec):
    KEY: ClassVar[str] = "reproducibility"

    reproducibility: ReproducibilitySpec


def estimates(spec: ReproducibilitySpec, budget_file: str = "") -> list[Precision]:
    """Every source's estimate, in the order control, duplicates, study."""
    out = []
    if spec.control is not None:
        values, runs = control_data(spec.control, budget_file)
        out.append(from_series(values, runs, spec.relative))
    if spec.duplicates is not None:
        pairs = [(p[0], p[1]) for p in spec.duplicates.pairs]
        out.append(duplicates(pairs, spec.duplicates.method, spec.relative))
    if spec.study is not None:
        out.append(runs_anova(spec.study.runs, spec.relative))
    return out


def control_data(spec: ControlSpec, budget_file: str) -> tuple[list[float], list[str] | None]:
    """The control results and run labels, from the budget or from its data file."""
    if spec.values is not None:
        return list(spec.values), list(spec.runs) if spec.runs is not None else None
    from ..errors import UcalcError
    from ..qc.data import budget_relative, read_columns

    assert spec.file is not None and spec.column is not None
    path = budget_relative(budget_file, spec.file)
    try:
        cols = read_columns(path, [spec.column], [spec.run_column] if spec.run_column else [])
    except UcalcError as exc:
        raise ValueError(f"control data: {exc}") from None
    runs = list(cols.labels[spec.run_column]) if spec.run_column else None
    return list(cols.numbers[spec.column]), runs


def derive(name: str, spec: Spec, location: Location) -> Derived:
    rs = spec.reproducibility
    parts = estimates(rs, location.file)
    comps = []
    working: list[str] = []
    for p in parts:
        label = p.source.split(" (")[0]
        comps.append(Component(label, Distribution("t", p.s, p.dof), "A",
                               f"{p.source}: s = {p.s:.4g}{' (relative)' if rs.relative else ''}, dof {p.dof:.1f}",
                               relative=rs.relative))
        working.extend(p.working)
    if len(parts) > 1:
        working.append("u(Rw) = sqrt(sum of the squares of the sources) (TR 537 4.4)")
    value, unit = (1.0, "") if rs.relative else (0.0, spec.unit or "")
    q = Quantity(name=name, value=value, unit=unit, components=tuple(comps),
                 description=spec.description or "within-laboratory reproducibility",
                 working=tuple(working), location=location)
    from ..qc import plain

    return Derived((q,), details={"relative": rs.relative, "sources": plain(parts)})


class Reproducibility(InputModel):
    """Within-laboratory reproducibility from QC data."""

    key = "reproducibility"
    Spec = Spec

    def derive(self, name: str, spec: Any, location: Location) -> Derived:
        return derive(name, spec, location)
