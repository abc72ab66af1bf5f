"""A straight-line calibration from raw data, and the concentration it predicts for a sample.

Least squares (ordinary or weighted) of responses y on standards x gives slope b, intercept a, the residual
standard deviation s (dof n - 2, or n - 1 through the origin) and their covariance s^2 (X'WX)^-1. The sample's
mean response y0 of p readings predicts x0 = (y0 - a)/b with

    u^2(x0) = [ s^2/(p w0) + var(a + b x0) ] / b^2,

which for unweighted data is the ISO 8466-1 / EURACHEM/CITAC CG4 (A5.4) formula
u(x0) = s/b sqrt(1/p + 1/n + (x0 - xbar)^2/Sxx); w0 is the weight at x0. Standard additions give the
x-intercept a/b with its first-order variance. The input model also offers ``name.slope`` and
``name.intercept`` (with their correlation) for budgets that write the calibration equation themselves.
"""

from __future__ import annotations

import math
from typing import Any, ClassVar, Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from ..budget.definitions import Component, Quantity
from ..distributions import Distribution
from ..errors import Location
from .base import Derived, InputSpec


class CalibrationSpec(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    standards: list[float] = Field(min_length=1, max_length=10_000)
    responses: list[float | list[float]] = Field(min_length=1, max_length=10_000)
    sample: list[float] | None = Field(default=None, min_length=1, max_length=10_000)
    weighting: Literal["none", "inverse_x", "inverse_x2", "inverse_variance"] = "none"
    through_origin: bool = False
    method: Literal["external", "standard_additions"] = "external"
    strict: bool = False
    unit: str | None = Field(default=None, max_length=100)
    response_unit: str | None = Field(default=None, max_length=100)

    @model_validator(mode="after")
    def _check(self) -> CalibrationSpec:
        if len(self.responses) != len(self.standards):
            raise ValueError(f"{len(self.standards)} standards but {len(self.responses)} responses; give one "
                             "response (or one list of replicate responses) per standard")
        if any(isinstance(r, list) and not r for r in self.responses):
            raise ValueError("a list of replicate responses is empty")
        if len(set(self.standards)) < 3:
            raise ValueError(f"a calibration needs at least 3 distinct standards (got {len(set(self.standards))})")
        if any(x < 0 for x in self.standards):
            raise ValueError("standards must not be negative: they are concentrations or added amounts")
        if self.weighting in ("inverse_x", "inverse_x2") and any(x <= 0 for x in self.standards):
            raise ValueError(f"weighting '{self.weighting}' needs every standard above zero")
        if self.weighting == "inverse_variance" and any(not isinstance(r, list) or len(r) < 2
                                                         for r in self.responses):
            raise ValueError("weighting 'inverse_variance' needs at least 2 replicate responses per standard")
        if self.method == "standard_additions":
            if self.through_origin:
                raise ValueError("standard additions cannot be fitted through the origin")
            if self.sample is not None:
                raise ValueError("with standard additions the sample is the line itself; remove 'sample'")
        return self


class Spec(InputSpec):
    KEY: ClassVar[str] = "calibration"

    calibration: CalibrationSpec


def fit(spec: CalibrationSpec) -> dict[str, Any]:
    """Weighted least-squares line; returns coefficients, covariance, residual s, dof and the points."""
    import numpy as np

    xs: list[float] = []
    ys: list[float] = []
    levels_var: list[tuple[float, float]] = []
    for level, r in zip(spec.standards, spec.responses, strict=True):
        reps = r if isinstance(r, list) else [r]
        xs.extend([level] * len(reps))
        ys.extend(reps)
        levels_var.append((level, float(np.var(reps, ddof=1)) if len(reps) > 1 else math.nan))
    x, y = np.array(xs, dtype=float), np.array(ys, dtype=float)
    if spec.weighting == "inverse_x":
        w = 1.0 / x
    elif spec.weighting == "inverse_x2":
        w = 1.0 / x**2
    elif spec.weighting == "inverse_variance":
        var = dict(levels_var)
        if any(v <= 0 for v in var.values()):
            raise ValueError("a standard's replicate responses are identical; inverse-variance weights need scatter")
        w = np.array([1.0 / var[xi] for xi in xs])
    else:
        w = np.ones_like(x)
    design = x[:, None] if spec.through_origin else np.column_stack([np.ones_like(x), x])
    normal = design.T @ (w[:, None] * design)
    beta = np.linalg.solve(normal, design.T @ (w * y))
    resid = y - design @ beta
    dof = len(x) - design.shape[1]
    if dof < 1:
        raise ValueError("too few calibration points for a residual standard deviation")
    s2 = float(np.sum(w * resid**2) / dof)
    cov = s2 * np.linalg.inv(normal)
    a, b = (0.0, float(beta[0])) if spec.through_origin else (float(beta[0]), float(beta[1]))
    var_a = 0.0 if spec.through_origin else float(cov[0, 0])
    var_b = float(cov[-1, -1])
    cov_ab = 0.0 if spec.through_origin else float(cov[0, 1])
    return {"a": a, "b": b, "var_a": var_a, "var_b": var_b, "cov_ab": cov_ab, "s2": s2, "dof": dof,
            "n": len(x), "x": x, "w": w, "levels_var": levels_var}


def _weight_at(spec: CalibrationSpec, f: dict[str, Any], x0: float) -> float:
    """Weight of a single reading at x0, on the scale of the fitted weights."""
    import numpy as np

    if spec.weighting == "none":
        return 1.0
    if spec.weighting in ("inverse_x", "inverse_x2"):
        if x0 <= 0:
            raise ValueError(f"the sample lies at x = {x0:.4g} <= 0, where weighting '{spec.weighting}' is undefined")
        return 1.0 / x0 if spec.weighting == "inverse_x" else 1.0 / x0**2
    levels = sorted(f["levels_var"])
    variance = float(np.interp(x0, [lv[0] for lv in levels], [lv[1] for lv in levels]))
    return 1.0 / variance


def predict(spec: CalibrationSpec, f: dict[str, Any]) -> tuple[float, float, float, list[str]]:
    """(x0, u(x0), y0, working) for the sample of an external calibration."""
    assert spec.sample is not None
    a, b = f["a"], f["b"]
    p = len(spec.sample)
    y0 = math.fsum(spec.sample) / p
    x0 = (y0 - a) / b
    w0 = _weight_at(spec, f, x0)
    var_y0 = f["s2"] / (p * w0)
    var_fit = f["var_a"] + x0 * x0 * f["var_b"] + 2 * x0 * f["cov_ab"]
    u = math.sqrt(var_y0 + var_fit) / abs(b)
    working = [f"sample: mean response y0 = {y0:.6g} of p = {p} readings",
               f"x0 = (y0 - a)/b = {x0:.6g}; u(x0) = sqrt(s^2/(p w0) + var(a + b x0))/|b| = {u:.4g} "
               "(ISO 8466-1, CG4 A5)"]
    return x0, u, y0, working


def derive(name: str, spec: Spec, location: Location) -> Derived:
    import numpy as np

    try:
        with np.errstate(all="raise"):
            return _derive(name, spec, location)
    except (FloatingPointError, np.linalg.LinAlgError) as exc:
        raise ValueError(f"the calibration data cannot be fitted ({exc}); check for extreme or repeated values") \
            from None


def _derive(name: str, spec: Spec, location: Location) -> Derived:
    from scipy import stats

    cs = spec.calibration
    f = fit(cs)
    a, b, dof = f["a"], f["b"], float(f["dof"])
    if b == 0.0 or not math.isfinite(b):
        raise ValueError("the calibration slope is zero; the responses do not depend on the standards")
    unit = spec.unit or ""
    runit = cs.response_unit or ""
    slope_unit = f"({runit or '1'})/({unit})" if unit else runit
    s = math.sqrt(f["s2"])
    levels = len(set(cs.standards))
    working = [
        f"{f['n']} points at {levels} standards, weighting {cs.weighting}"
        + (", through the origin" if cs.through_origin else ""),
        f"slope b = {b:.6g} (u {math.sqrt(f['var_b']):.3g}), intercept a = {a:.6g} "
        f"(u {math.sqrt(f['var_a']):.3g}), residual s = {s:.4g}, dof {int(dof)}",
    ]
    warnings: list[str] = []
    t95 = float(stats.t.ppf(0.975, dof))
    if abs(b) < t95 * math.sqrt(f["var_b"]):
        warnings.append("the calibration slope does not differ significantly from zero")
    quantities: list[Quantity] = []
    correlations: list[tuple[str, str, float]] = []
    u_b = math.sqrt(f["var_b"])
    slope = Quantity(f"{name}.slope", b, slope_unit,
                     (Component("calibration fit", Distribution("t", u_b, dof), "A", "least squares"),),
                     description="calibration slope", model="calibration", location=location)
    intercept = None
    if not cs.through_origin:
        u_a = math.sqrt(f["var_a"])
        intercept = Quantity(f"{name}.intercept", a, runit,
                             (Component("calibration fit", Distribution("t", u_a, dof), "A", "least squares"),),
                             description="calibration intercept", model="calibration", location=location)
        correlations.append((f"{name}.intercept", f"{name}.slope", f["cov_ab"] / (u_a * u_b)))
    x0: float | None = None
    if cs.method == "standard_additions":
        x0 = a / b
        var = (f["var_a"] + x0 * x0 * f["var_b"] - 2 * x0 * f["cov_ab"]) / (b * b)
        u = math.sqrt(var)
        cov_x_a = (f["var_a"] - x0 * f["cov_ab"]) / b
        cov_x_b = (f["cov_ab"] - x0 * f["var_b"]) / b
        working.append(f"standard additions: x = a/b = {x0:.6g}, u = {u:.4g} (first order in a and b)")
    elif cs.sample is not None:
        x0, u, _, more = predict(cs, f)
        working.extend(more)
        cov_x_a = (-f["var_a"] - x0 * f["cov_ab"]) / b
        cov_x_b = (-f["cov_ab"] - x0 * f["var_b"]) / b
    if x0 is not None:
        lo, hi = min(cs.standards), max(cs.standards)
        if cs.method == "external" and not lo <= x0 <= hi:
            message = f"the sample (x0 = {x0:.4g}) lies outside the calibrated range [{lo:g}, {hi:g}]"
            if cs.strict:
                raise ValueError(message)
            warnings.append(message)
        comp = Component("calibration (prediction)", Distribution("t", u, dof), "A",
                         f"u(x0) = {u:.4g} from the calibration line, dof {int(dof)}")
        quantities.append(Quantity(name, x0, unit, (comp,), description=spec.description or "",
                                   model="calibration", working=tuple(working), location=location))
        correlations.append((name, f"{name}.slope", max(-1.0, min(1.0, cov_x_b / (u * u_b)))))
        if intercept is not None:
            r_xa = cov_x_a / (u * intercept.standard_uncertainty)
            correlations.append((name, f"{name}.intercept", max(-1.0, min(1.0, r_xa))))
    else:
        slope = Quantity(slope.name, slope.value, slope.unit, slope.components, slope.description, slope.model,
                         tuple(working), location)
    quantities.append(slope)
    if intercept is not None:
        quantities.append(intercept)
    return Derived(tuple(quantities), tuple(correlations), warnings=tuple(warnings))


VIRTUAL_FIELDS = ("p",)


def set_field(raw: dict[str, Any], field: str, value: Any) -> dict[str, Any] | None:
    """``p``: read the sample ``value`` times (the readings given, repeated, keep their mean)."""
    if field != "p":
        return None
    sample = raw["calibration"].get("sample")
    if not sample:
        raise ValueError("p applies to a calibration with sample readings")
    if not isinstance(value, int) or isinstance(value, bool) or value < 1:
        raise ValueError(f"p must be a whole number of readings (got {value!r})")
    mean = math.fsum(sample) / len(sample)
    return {**raw, "calibration": {**raw["calibration"], "sample": [mean] * value}}


def actions(raw: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    """More sample readings (p to 2p, 3p), and every standard measured once more."""
    block = raw["calibration"]
    out = []
    sample = block.get("sample")
    if sample:
        p = len(sample)
        for k in (2, 3):
            changed = set_field(raw, "p", k * p)
            assert changed is not None
            out.append((f"{k * p} sample readings instead of {p}", changed))
    responses = [r if isinstance(r, list) else [r] for r in block["responses"]]
    doubled = [r + r for r in responses]  # as if each standard were measured again with the same responses
    out.append(("every calibration standard measured twice as often",
                {**raw, "calibration": {**block, "responses": doubled}}))
    return out


def predict_many(spec: CalibrationSpec, responses: Any, readings: int | None = None) -> tuple[Any, Any, float, Any]:
    """Vectorised x0 and u(x0) for many samples' mean responses (each the mean of ``readings`` readings, by
    default as many as the budget's own sample); returns (x0, u, dof, out_of_range mask)."""
    import numpy as np

    f = fit(spec)
    a, b = f["a"], f["b"]
    if b == 0.0:
        raise ValueError("the calibration slope is zero")
    y0 = np.asarray(responses, dtype=float)
    p = readings or (len(spec.sample) if spec.sample else 1)
    x0 = (y0 - a) / b
    with np.errstate(all="ignore"):
        if spec.weighting == "none":
            w0 = np.ones_like(x0)
        elif spec.weighting == "inverse_x":
            w0 = np.where(x0 > 0, 1.0 / x0, np.nan)
        elif spec.weighting == "inverse_x2":
            w0 = np.where(x0 > 0, 1.0 / x0**2, np.nan)
        else:
            levels = sorted(f["levels_var"])
            w0 = 1.0 / np.interp(x0, [lv[0] for lv in levels], [lv[1] for lv in levels])
        var = f["s2"] / (p * w0) + f["var_a"] + x0 * x0 * f["var_b"] + 2 * x0 * f["cov_ab"]
        u = np.sqrt(var) / abs(b)
    outside = (x0 < min(spec.standards)) | (x0 > max(spec.standards))
    return x0, u, float(f["dof"]), outside
