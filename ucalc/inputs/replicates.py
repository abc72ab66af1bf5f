"""Replicate results: a Type A evaluation (JCGM 100 4.2).

From raw values: the mean, u = s/sqrt(n) and n - 1 degrees of freedom (4.2.2, 4.2.3). With ``pooled`` a
repeatability standard deviation known from validation, with its own degrees of freedom, is applied to the n
replicates of this sample: u = s_p/sqrt(n), dof those of s_p (4.2.4). In Monte Carlo the input is a scaled and
shifted t with those degrees of freedom (JCGM 101 6.4.9).
"""

from __future__ import annotations

import math
import statistics
from typing import Any, ClassVar

from pydantic import BaseModel, ConfigDict, Field, model_validator

from ..budget.definitions import Component, Quantity
from ..distributions import Distribution
from ..errors import Location
from .base import Action, Derived, InputModel, InputSpec


class Pooled(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    s: float = Field(gt=0)
    dof: float = Field(ge=1, allow_inf_nan=True)
    n: int | None = Field(default=None, ge=1)
    relative: bool = False
    planned: bool = False  # s observed on other replicates, assumed for n planned ones (ucalc improve, --set n)


class ReplicatesSpec(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    values: list[float] | None = Field(default=None, max_length=100_000)
    mean: float | None = None
    pooled: Pooled | None = None
    unit: str | None = Field(default=None, max_length=100)

    @model_validator(mode="after")
    def _check(self) -> ReplicatesSpec:
        if self.values is None and self.mean is None:
            raise ValueError("give the replicate 'values', or their 'mean' with 'pooled'")
        if self.values is not None and self.mean is not None:
            raise ValueError("give 'values' or 'mean', not both")
        if self.values is not None and self.pooled is None and len(self.values) < 2:
            raise ValueError(f"at least 2 replicate values are needed for a standard deviation (got "
                             f"{len(self.values)}); or give 'pooled'")
        if self.mean is not None and (self.pooled is None or self.pooled.n is None):
            raise ValueError("with 'mean', give 'pooled: {s, dof, n}' (n = replicates averaged)")
        if self.values is not None and self.pooled and self.pooled.n not in (None, len(self.values)):
            raise ValueError(f"pooled.n = {self.pooled.n} but {len(self.values)} values are given")
        return self


class Spec(InputSpec):
    KEY: ClassVar[str] = "replicates"

    replicates: ReplicatesSpec


def evaluate(spec: ReplicatesSpec) -> tuple[float, float, float, int, list[str]]:
    """(mean, u, dof, n, working) of a replicates block."""
    if spec.values is not None:
        n = len(spec.values)
        mean = statistics.fmean(spec.values)
    else:
        assert spec.pooled is not None and spec.pooled.n is not None and spec.mean is not None
        n, mean = spec.pooled.n, spec.mean
    if spec.pooled is not None:
        s = spec.pooled.s * (abs(mean) if spec.pooled.relative else 1.0)
        u, dof = s / math.sqrt(n), spec.pooled.dof
        if spec.pooled.planned:
            working = [f"planned: mean of n = {n} replicates: {mean:.6g}, assuming the same scatter as observed",
                       f"s = {s:.4g} as observed; u = s/sqrt(n) = {u:.4g}; dof = {dof:g}"]
        else:
            working = [f"mean of n = {n}: {mean:.6g}",
                       f"pooled repeatability s_p = {s:.4g} (dof {dof:g}); u = s_p/sqrt(n) = {u:.4g}"]
    else:
        assert spec.values is not None
        s = statistics.stdev(spec.values)
        if s == 0.0:
            raise ValueError(f"the {n} replicate values are identical, so their standard deviation is zero; "
                             "give 'pooled' with a repeatability from validation")
        u, dof = s / math.sqrt(n), n - 1
        working = [f"mean of n = {n}: {mean:.6g}", f"s = {s:.4g}; u = s/sqrt(n) = {u:.4g}; dof = n - 1 = {dof}"]
    return mean, u, float(dof), n, working


def derive(name: str, spec: Spec, location: Location) -> Derived:
    mean, u, dof, n, working = evaluate(spec.replicates)
    relative = bool(spec.replicates.pooled and spec.replicates.pooled.relative)
    comp = Component("repeatability", Distribution("t", u, dof), "A", working[-1], relative=relative)
    q = Quantity(name=name, value=mean, unit=spec.unit or "", components=(comp,),
                 description=spec.description or "", working=tuple(working), location=location)
    return Derived((q,))


VIRTUAL_FIELDS = ("n",)


def _as_pooled(raw: dict[str, Any], n: int) -> dict[str, Any]:
    """The same mean and standard deviation, averaged over ``n`` replicates. A standard deviation from the
    replicates themselves then has n - 1 dof (the new design, JCGM 100 4.2.3, assuming the same scatter as
    observed); a pooled one from validation keeps its own dof (4.2.4). The data are never copied."""
    spec = ReplicatesSpec.model_validate(raw["replicates"])
    mean, _, dof, old_n, _ = evaluate(spec)
    pooled: dict[str, Any]
    if spec.pooled is not None and not spec.pooled.planned:
        pooled = {"s": spec.pooled.s, "dof": spec.pooled.dof, "n": n, "relative": spec.pooled.relative}
    elif spec.pooled is not None:
        pooled = {"s": spec.pooled.s, "dof": float(n - 1), "n": n, "relative": spec.pooled.relative,
                  "planned": True}
    else:
        assert spec.values is not None
        if n < 2:
            raise ValueError("n must be at least 2 for a standard deviation from the replicates themselves")
        pooled = {"s": statistics.stdev(spec.values), "dof": float(n - 1), "n": n, "planned": True}
    block = {"mean": mean, "pooled": pooled}
    if spec.unit:
        block["unit"] = spec.unit
    return {**raw, "replicates": block}


def set_field(raw: dict[str, Any], field: str, value: Any) -> dict[str, Any] | None:
    """``n``: average ``value`` replicates with the same standard deviation (pooled from the data given)."""
    if field != "n":
        return None
    if not isinstance(value, int) or isinstance(value, bool) or value < 1:
        raise ValueError(f"n must be a whole number of replicates (got {value!r})")
    return _as_pooled(raw, value)


def actions(raw: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    """More replicates: n to 2n and 3n."""
    spec = ReplicatesSpec.model_validate(raw["replicates"])
    n = len(spec.values) if spec.values is not None else (spec.pooled.n if spec.pooled else 1) or 1
    return [(f"{k * n} replicates instead of {n}", _as_pooled(raw, k * n)) for k in (2, 3)]

class Replicates(InputModel):
    """The mean of replicate results (Type A), alone or with a pooled deviation."""

    key = "replicates"
    Spec = Spec
    settable = VIRTUAL_FIELDS

    def derive(self, name: str, spec: Any, location: Location) -> Derived:
        return derive(name, spec, location)

    def actions(self, raw: dict[str, Any]) -> list[Action]:
        return actions(raw)

    def set_field(self, raw: dict[str, Any], field: str, value: Any) -> dict[str, Any] | None:
        return set_field(raw, field, value)
