"""The top-level shape of a budget file, format version 1, as pydantic models.

Inputs are validated by their own input model (``ucalc.inputs``); here only their names are checked.
Documented in docs/budget-format.md.
"""

from __future__ import annotations

import datetime as _dt
import re
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator, model_validator

NAME = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")
FORMAT_VERSION = 1


def check_name(name: str) -> str:
    if not NAME.match(name) or "__" in name:
        raise ValueError(
            f"'{name}' is not a valid name: use a letter followed by letters, digits or single underscores"
        )
    return name


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)


class MeasurandSpec(_Strict):
    symbol: str
    unit: str | None = Field(default=None, max_length=100)
    description: str | None = None

    _symbol = field_validator("symbol")(lambda cls, v: check_name(v))


class CoverageSpec(_Strict):
    probability: float | None = Field(default=None, gt=0, lt=1)
    k: float | None = Field(default=None, gt=0)
    dof_rounding: Literal["down", "none"] = "down"

    @model_validator(mode="after")
    def _one(self) -> CoverageSpec:
        if (self.probability is None) == (self.k is None):
            raise ValueError("give exactly one of 'probability' (e.g. 0.95) or 'k' (e.g. 2)")
        return self


class CorrelationSpec(_Strict):
    between: list[str] = Field(min_length=2, max_length=2)
    r: float = Field(ge=-1, le=1)


class ReportingSpec(_Strict):
    method: Literal["gum", "monte-carlo"]
    reason: str = Field(min_length=1, max_length=500)


class SignOffSpec(_Strict):
    """Who (a role or name, as the laboratory's document control requires) and when."""

    by: str = Field(min_length=1, max_length=200)
    date: str | None = None

    @field_validator("date")
    @classmethod
    def _iso(cls, v: str | None) -> str | None:
        if v is not None:
            try:
                _dt.date.fromisoformat(v)
            except ValueError:
                raise ValueError(f"must be a date written YYYY-MM-DD (got {v!r})") from None
        return v


class DocumentSpec(_Strict):
    """Optional document-control fields printed on every report page (ISO/IEC 17025 8.3)."""

    method: str | None = Field(default=None, max_length=300)
    id: str | None = Field(default=None, max_length=100)
    version: str | int | None = None
    prepared: SignOffSpec | None = None
    reviewed: SignOffSpec | None = None
    approved: SignOffSpec | None = None


class BudgetSpec(_Strict):
    ucalc: int
    title: str = Field(min_length=1)
    measurand: MeasurandSpec
    model: str = Field(min_length=1)
    coverage: CoverageSpec = Field(default_factory=lambda: CoverageSpec(probability=0.95))
    inputs: dict[str, dict[str, Any]] = Field(min_length=1)
    correlations: list[CorrelationSpec] = Field(default_factory=list)
    items: dict[str, dict[str, Any]] = Field(default_factory=dict)  # shared items, see ucalc.inputs.shared
    limits: dict[str, Any] | None = None  # validated by ucalc.qc.limits.LimitsSpec
    description: str | None = None
    reporting: ReportingSpec | None = None
    document: DocumentSpec | None = None

    @field_validator("ucalc")
    @classmethod
    def _version(cls, v: int) -> int:
        if v != FORMAT_VERSION:
            raise ValueError(f"budget format version {v} is not supported; this ucalc reads version 1")
        return v

    @field_validator("inputs", "items")
    @classmethod
    def _names(cls, v: dict[str, Any]) -> dict[str, Any]:
        for name in v:
            check_name(name)
        return v
