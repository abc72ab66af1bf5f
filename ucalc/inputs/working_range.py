"""Within-laboratory reproducibility that depends on the level: e = e.u0 + x * e.b, so that
u(e)^2 = u0^2 + (b x)^2 at the sample's result x (the fit of :mod:`ucalc.qc.range_fit`).

The input is an expression over two auxiliary quantities of value 0: ``name.u0`` (the absolute floor, in the
result's unit) and ``name.b`` (the relative part, dimensionless), and over the input named by ``at`` that holds the
sample's result. By the law of propagation (JCGM 100 5.1.2) its sensitivity to ``name.b`` is x, so ``batch``, which
replaces x row by row, gives each row its own U. u0 and b are stated, or fitted to precision at several levels
(given in the budget or read from a QC data file in the budget's folder).
"""

from __future__ import annotations

import math
from typing import Any, ClassVar

from pydantic import BaseModel, ConfigDict, Field, model_validator

from ..budget.definitions import Component, Quantity
from ..budget.schema import check_name
from ..distributions import Distribution
from ..errors import Location
from .base import Derived, InputModel, InputSpec


class _Block(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)


class LevelSpec(_Block):
    level: float
    s: float = Field(gt=0)
    dof: float = Field(ge=1)
    label: str | None = None


class DataSpec(_Block):
    file: str = Field(max_length=500)
    column: str
    level_column: str
    run_column: str | None = None


class WorkingRangeSpec(_Block):
    at: str
    u0: float | None = Field(default=None, ge=0)
    b: float | None = Field(default=None, ge=0)
    dof: float | None = Field(default=None, ge=1, allow_inf_nan=True)
    levels: list[LevelSpec] | None = Field(default=None, min_length=2, max_length=1000)
    data: DataSpec | None = None
    unit: str | None = Field(default=None, max_length=100)

    @model_validator(mode="after")
    def _one(self) -> WorkingRangeSpec:
        check_name(self.at)
        stated = self.u0 is not None or self.b is not None
        given = [k for k, v in (("u0/b", stated), ("levels", self.levels), ("data", self.data)) if v]
        if len(given) != 1:
            raise ValueError("give 'u0' and 'b', or 'levels', or 'data'" + (f"; got {', '.join(given)}" if given
                                                                             else ""))
        if stated and (self.u0 is None or self.b is None):
            raise ValueError("give both 'u0' (absolute floor) and 'b' (relative part)")
        if stated and self.u0 == 0 and self.b == 0:
            raise ValueError("u0 and b are both zero")
        return self


class Spec(InputSpec):
    KEY: ClassVar[str] = "working_range"

    working_range: WorkingRangeSpec


def evaluate(spec: WorkingRangeSpec, budget_file: str = "") -> tuple[float, float, float, float, list[str]]:
    """(u0, b, dof of u0, dof of b, working)."""
    from ..qc.range_fit import Level, fit, levels_from_data

    if spec.u0 is not None and spec.b is not None:
        dof = math.inf if spec.dof is None else spec.dof
        return spec.u0, spec.b, dof, dof, [f"stated: u0 = {spec.u0:.4g}, b = {spec.b:.4g}"]
    if spec.levels is not None:
        levels = [Level(lv.label or f"{lv.level:g}", lv.level, lv.s, lv.dof, 0) for lv in spec.levels]
    else:
        from ..errors import UcalcError
        from ..qc.data import budget_relative

        assert spec.data is not None
        d = spec.data
        try:
            levels = levels_from_data(str(budget_relative(budget_file, d.file)), d.column, d.level_column,
                                      d.run_column)
        except UcalcError as exc:
            raise ValueError(f"working-range data: {exc}") from None
    f = fit(levels)
    working = [*(f"level {lv.label}: c = {lv.level:.4g}, s = {lv.s:.4g} (dof {lv.dof:.1f})" for lv in levels),
               *f.working]
    return f.u0, f.b, f.dof_u0, f.dof_b, working


def derive(name: str, spec: Spec, location: Location) -> Derived:
    ws = spec.working_range
    u0, b, dof_u0, dof_b, working = evaluate(ws, location.file)
    unit = spec.unit or ""

    def dist(u: float, dof: float) -> Distribution:
        return Distribution("normal" if math.isinf(dof) else "t", u, dof)

    parts = []
    if u0 > 0:
        parts.append(Quantity(f"{name}.u0", 0.0, unit, (Component("absolute floor u0", dist(u0, dof_u0), "A",
                                                                  f"u0 = {u0:.4g}"),),
                              description="reproducibility: absolute part",
                              location=location))
    else:
        parts.append(Quantity(f"{name}.u0", 0.0, unit, (), description="reproducibility: absolute part (zero)",
                              location=location))
    parts.append(Quantity(f"{name}.b", 0.0, "", (Component("relative part b", dist(b, dof_b), "A",
                                                           f"b = {b:.4g}"),) if b > 0 else (),
                          description="reproducibility: relative part", location=location))
    working.append(f"{name} = {name}.u0 + {ws.at} * {name}.b: u = sqrt(u0^2 + (b {ws.at})^2)")
    from ..qc import plain

    details = plain({"at": ws.at, "u0": u0, "b": b, "dof_u0": dof_u0, "dof_b": dof_b})
    return Derived(tuple(parts), expression=f"{name}.u0 + {ws.at} * {name}.b", working=tuple(working),
                   details=details)


class WorkingRange(InputModel):
    """Reproducibility across the working range, u(c) = sqrt(u0^2 + (b c)^2)."""

    key = "working_range"
    Spec = Spec

    def derive(self, name: str, spec: Any, location: Location) -> Derived:
        return derive(name, spec, location)
