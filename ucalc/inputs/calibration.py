"""A calibration function from raw data, and the concentrations it predicts for the readings of a run.

Least squares (ordinary or weighted) of responses y on standards x gives the straight line y = a + b x
(ISO 8466-1) or the second-order function y = a + b x + c x^2 (ISO 8466-2), the residual standard deviation s
(dof n - m) and the covariance s^2 (X'WX)^-1 of the coefficients (:mod:`.calibration_fit`). A reading's mean
response y0 of p readings predicts x0 with f(x0) = y0 and, for the straight line unweighted, the ISO 8466-1 /
EURACHEM/CITAC CG4 (A5.4) u(x0) = s/b sqrt(1/p + 1/n + (x0 - xbar)^2/Sxx). Several named readings (sample,
duplicate, blank, QC) predicted from one line are correlated through the shared coefficients; the full
covariance enters the budget as correlation coefficients. Responses may be given as raw analyte and
internal-standard count rates (:mod:`.internal_standard`). Standard additions give the x-intercept a/b with its
first-order variance. The ISO 8466-1 diagnostics are in :mod:`.calibration_checks`.
"""

from __future__ import annotations

import math
from typing import Any, ClassVar, Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator, model_validator

from ..budget.definitions import Component, Quantity
from ..distributions import Distribution
from ..errors import Location
from .base import Action, Derived, InputModel, InputSpec, RowValues
from .internal_standard import DEFAULT_WINDOW, ReadingSignals, StandardSignals

COEFFICIENTS = ("intercept", "slope", "quadratic")
RESERVED = set(COEFFICIENTS)


class CalibrationSpec(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    standards: list[float] = Field(min_length=1, max_length=10_000)
    responses: list[float | list[float]] | None = Field(default=None, min_length=1, max_length=10_000)
    signals: StandardSignals | None = None
    sample: list[float] | ReadingSignals | None = None
    readings: dict[str, list[float] | ReadingSignals] | None = Field(default=None, min_length=1, max_length=100)
    function: Literal["linear", "quadratic"] = "linear"
    weighting: Literal["none", "inverse_x", "inverse_x2", "inverse_variance"] = "none"
    through_origin: bool = False
    method: Literal["external", "standard_additions"] = "external"
    strict: bool = False
    is_recovery: list[float] = Field(default=list(DEFAULT_WINDOW), min_length=2, max_length=2)
    unit: str | None = Field(default=None, max_length=100)
    response_unit: str | None = Field(default=None, max_length=100)

    @field_validator("sample")
    @classmethod
    def _sample(cls, v: Any) -> Any:
        if isinstance(v, list) and not 1 <= len(v) <= 10_000:
            raise ValueError("give between 1 and 10000 sample readings")
        return v

    @field_validator("readings")
    @classmethod
    def _readings(cls, v: dict[str, Any] | None) -> dict[str, Any] | None:
        from ..budget.schema import check_name

        for key, value in (v or {}).items():
            check_name(key)
            if key in RESERVED:
                raise ValueError(f"reading '{key}' would clash with the coefficient '{key}'; choose another name")
            if isinstance(value, list) and not 1 <= len(value) <= 10_000:
                raise ValueError(f"reading '{key}': give between 1 and 10000 readings")
        return v

    @model_validator(mode="after")
    def _check(self) -> CalibrationSpec:
        if (self.responses is None) == (self.signals is None):
            raise ValueError("give either 'responses' or raw 'signals' (analyte and internal_standard) per standard")
        raw = self.signals is not None
        given = [self.sample] if self.sample is not None else []
        given += list((self.readings or {}).values())
        if any(isinstance(g, ReadingSignals) != raw for g in given):
            raise ValueError("readings must be given like the standards: raw 'analyte' and 'internal_standard' "
                             "signals with 'signals', responses otherwise")
        n_resp = len(self.signals.analyte) if self.signals is not None else len(self.responses or [])
        if n_resp != len(self.standards):
            raise ValueError(f"{len(self.standards)} standards but {n_resp} responses; give one "
                             "response (or one list of replicate responses) per standard")
        if any(isinstance(r, list) and not r for r in self.responses or []):
            raise ValueError("a list of replicate responses is empty")
        distinct = len(set(self.standards))
        needed = 4 if self.function == "quadratic" else 3
        if distinct < needed:
            raise ValueError(f"a {self.function} calibration needs at least {needed} distinct standards "
                             f"(got {distinct})")
        if any(x < 0 for x in self.standards):
            raise ValueError("standards must not be negative: they are concentrations or added amounts")
        if self.weighting in ("inverse_x", "inverse_x2") and any(x <= 0 for x in self.standards):
            raise ValueError(f"weighting '{self.weighting}' needs every standard above zero")
        if self.weighting == "inverse_variance" and any(len(r) < 2 for r in self.response_lists()):
            raise ValueError("weighting 'inverse_variance' needs at least 2 replicate responses per standard")
        low, high = self.is_recovery
        if not 0 < low < high:
            raise ValueError(f"is_recovery must be [low, high] in % with 0 < low < high (got {self.is_recovery})")
        if self.function == "quadratic" and self.through_origin:
            raise ValueError("the second-order function is fitted with its intercept; remove 'through_origin'")
        if self.method == "standard_additions":
            if self.through_origin:
                raise ValueError("standard additions cannot be fitted through the origin")
            if self.function == "quadratic":
                raise ValueError("standard additions use a straight line")
            if self.sample is not None or self.readings:
                raise ValueError("with standard additions the sample is the line itself; remove 'sample'")
        return self

    def response_lists(self) -> list[list[float]]:
        """Responses per standard as lists of readings (ratios per reading for raw signals)."""
        from .internal_standard import ratios

        if self.signals is not None:
            return [ratios(a, i) for a, i in zip(self.signals.analyte, self.signals.internal_standard, strict=True)]
        return [r if isinstance(r, list) else [r] for r in self.responses or []]

    def fit_responses(self) -> list[float | list[float]]:
        return list(self.response_lists()) if self.signals is not None else list(self.responses or [])

    def reading_values(self) -> dict[str, list[float]]:
        """Name -> response readings (ratios for raw signals): '' for ``sample``, then ``readings``."""
        from .internal_standard import ratios

        items: dict[str, Any] = {}
        if self.sample is not None:
            items[""] = self.sample
        items.update(self.readings or {})
        return {k: (ratios(v.analyte, v.internal_standard) if isinstance(v, ReadingSignals) else v)
                for k, v in items.items()}

    def sample_readings(self) -> int:
        """Number of readings p of the sample (1 without a sample): a batch row is the mean of as many."""
        if self.sample is None:
            return 1
        return len(self.sample.analyte) if isinstance(self.sample, ReadingSignals) else len(self.sample)

    @property
    def order(self) -> int:
        return 2 if self.function == "quadratic" else 1


class Spec(InputSpec):
    KEY: ClassVar[str] = "calibration"

    calibration: CalibrationSpec


def fit(spec: CalibrationSpec) -> Any:
    """The least-squares fit of a calibration spec (:func:`.calibration_fit.fit`)."""
    from .calibration_fit import fit as fit_data

    return fit_data(spec.standards, spec.fit_responses(), spec.weighting, spec.order, spec.through_origin)


def derive(name: str, spec: Spec, location: Location) -> Derived:
    import numpy as np

    try:
        with np.errstate(all="raise"):
            return _derive(name, spec, location)
    except (FloatingPointError, np.linalg.LinAlgError) as exc:
        raise ValueError(f"the calibration data cannot be fitted ({exc}); check for extreme or repeated values") \
            from None


def _clip(r: float) -> float:
    return max(-1.0, min(1.0, r))


def _derive(name: str, spec: Spec, location: Location) -> Derived:
    import numpy as np

    from ..engines.gum import coverage_factor
    from .calibration_checks import diagnose
    from .calibration_fit import predict

    cs = spec.calibration
    f = fit(cs)
    dof = float(f.dof)
    coef_names = ("slope",) if cs.through_origin else COEFFICIENTS[:cs.order + 1]
    coef = {k: float(v) for k, v in zip(coef_names, f.coef, strict=True)}
    u_coef = {k: math.sqrt(float(f.cov[i, i])) for i, k in enumerate(coef_names)}
    b = coef["slope"]
    if b == 0.0 or not math.isfinite(b):
        raise ValueError("the calibration slope is zero; the responses do not depend on the standards")
    unit = spec.unit or ""
    runit = cs.response_unit or ""
    coef_units = {"intercept": runit, "slope": f"({runit or '1'})/({unit})" if unit else runit,
                  "quadratic": f"({runit or '1'})/({unit})**2" if unit else runit}
    s = math.sqrt(f.s2)
    lo, hi = min(cs.standards), max(cs.standards)
    shape = "y = a + b·x + c·x² (ISO 8466-2)" if cs.order == 2 else "y = a + b·x (ISO 8466-1)"
    working = [
        f"{f.n} points at {len(set(cs.standards))} standards, {shape}, weighting {cs.weighting}"
        + (", through the origin" if cs.through_origin else "")
        + (", responses = analyte/internal-standard ratio per reading" if cs.signals is not None else ""),
        ", ".join(f"{k} = {coef[k]:.6g} (u {u_coef[k]:.3g})" for k in reversed(coef_names))
        + f", residual s = {s:.4g}, dof {int(dof)}",
    ]
    warnings: list[str] = []
    if abs(b) < coverage_factor(0.95, dof) * u_coef["slope"]:
        warnings.append("the calibration slope does not differ significantly from zero")
    checks = diagnose(f, cs.standards, cs.response_lists())
    warnings.extend(checks.warnings)
    working.extend(checks.notes)
    if checks.mandel is not None:
        working.append(f"Mandel test (ISO 8466-1): PG = {checks.mandel['pg']:.3g}, F(1, "
                       f"{int(checks.mandel['dof2'])}; 99 %) = {checks.mandel['f_critical']:.3g}")
    if checks.homoscedasticity is not None:
        h = checks.homoscedasticity
        working.append(f"ends of the range (ISO 8466-1): s = {h['s_low']:.3g} and {h['s_high']:.3g}, PG = "
                       f"{h['pg']:.3g}, F({int(h['dof1'])}, {int(h['dof2'])}; 99 %) = {h['f_critical']:.3g}")
    correlations: list[tuple[str, str, float]] = []
    origins: list[str] = []
    coef_q: dict[str, Quantity] = {}
    for k in coef_names:
        coef_q[k] = Quantity(f"{name}.{k}", coef[k], coef_units[k],
                             (Component("calibration fit", Distribution("t", u_coef[k], dof), "A", "least squares"),),
                             description=f"calibration {k}", location=location)
    for i, ki in enumerate(coef_names):
        for j in range(i + 1, len(coef_names)):
            kj = coef_names[j]
            correlations.append((f"{name}.{ki}", f"{name}.{kj}",
                                 _clip(float(f.cov[i, j]) / (u_coef[ki] * u_coef[kj]))))
            origins.append(f"calibration '{name}': coefficients of one least-squares fit")
    details: dict[str, Any] = {
        "model": "calibration", "function": cs.function, "method": cs.method, "weighting": cs.weighting,
        "through_origin": cs.through_origin, "coefficients": coef, "standard_uncertainties": u_coef,
        "covariance": {"names": list(coef_names), "matrix": [[float(v) for v in row] for row in f.cov]},
        "slope": b, "u_slope": u_coef["slope"], "intercept": coef.get("intercept", 0.0),
        "u_intercept": u_coef.get("intercept", 0.0),
        "cov_slope_intercept": 0.0 if cs.through_origin else float(f.cov[0, 1]),
        "residual_sd": s, "dof": int(dof), "points": f.n, "range": [lo, hi],
        "response_unit": runit, "unit": unit, "diagnostics": checks.as_json(),
    }
    quantities: list[Quantity] = []
    if cs.method == "standard_additions":
        var_a, var_b, cov_ab = float(f.cov[0, 0]), float(f.cov[1, 1]), float(f.cov[0, 1])
        a = coef["intercept"]
        x0 = a / b
        u = math.sqrt((var_a + x0 * x0 * var_b - 2 * x0 * cov_ab) / (b * b))
        working.append(f"standard additions: x = a/b = {x0:.6g}, u = {u:.4g} (first order in a and b)")
        comp = Component("calibration (prediction)", Distribution("t", u, dof), "A",
                         f"u(x) = {u:.4g} from the calibration line, dof {int(dof)}")
        quantities.append(Quantity(name, x0, unit, (comp,), description=spec.description or "",
                                   working=tuple(working), location=location))
        for k, cov_xk in (("intercept", (var_a - x0 * cov_ab) / b), ("slope", (cov_ab - x0 * var_b) / b)):
            correlations.append((name, f"{name}.{k}", _clip(cov_xk / (u * u_coef[k]))))
            origins.append(f"calibration '{name}': result from the fitted coefficients")
        details["predictions"] = {"": {"quantity": name, "value": x0, "standard_uncertainty": u}}
    values = cs.reading_values()
    if values:
        pred = predict(f, values, (lo, hi))
        qnames = [name if key == "" else f"{name}.{key}" for key in pred.names]
        u_pred = np.sqrt(np.diag(pred.cov))
        recoveries = _recoveries(cs, pred.names, warnings)
        predictions: dict[str, Any] = {}
        for i, (key, qname) in enumerate(zip(pred.names, qnames, strict=True)):
            x0, u, y0, p = float(pred.x0[i]), float(u_pred[i]), float(pred.y0[i]), int(pred.p[i])
            label = "sample" if key == "" else f"reading '{key}'"
            lines = [f"{label}: mean response y0 = {y0:.6g} of p = {p} readings",
                     f"x0 = f⁻¹(y0) = {x0:.6g}; u(x0) = sqrt(s²/(p·w0) + g'·Cov·g)/|f'(x0)| = {u:.4g} "
                     "(ISO 8466-1, ISO 8466-2, CG4 A5)"]
            if x0 > hi:
                message = f"{label} (x0 = {x0:.4g}) lies above the calibrated range [{lo:g}, {hi:g}]"
                if cs.strict:
                    raise ValueError(message.replace("above", "outside"))
                warnings.append(message.replace("above", "outside"))
            elif x0 < lo:
                lines.append(f"below the lowest standard ({lo:g}): a blank-level result, compare it with the "
                             "detection and quantification limits")
            if key in recoveries:
                lines.append(f"internal-standard recovery {recoveries[key]:.1f} % of the standards' mean")
            comp = Component("calibration (prediction)", Distribution("t", u, dof), "A",
                             f"u(x0) = {u:.4g} from the calibration line, dof {int(dof)}")
            own = tuple(working) + tuple(lines) if qname == name or (i == 0 and "" not in pred.names) else \
                tuple(lines)
            quantities.append(Quantity(qname, x0, unit, (comp,),
                                       description=(spec.description or "") if key == "" else f"{label}",
                                       working=own, location=location))
            for j, k in enumerate(coef_names):
                correlations.append((qname, f"{name}.{k}", _clip(float(pred.cov_coef[i, j]) / (u * u_coef[k]))))
                origins.append(f"calibration '{name}': prediction from the fitted coefficients")
            for j in range(i):
                correlations.append((qnames[j], qname, _clip(float(pred.cov[j, i]) / (u_pred[j] * u))))
                origins.append(f"calibration '{name}': predictions from one line")
            predictions[key or "sample"] = {"quantity": qname, "mean_response": y0, "readings": p, "value": x0,
                                            "standard_uncertainty": u, "dof": int(dof),
                                            "below_range": x0 < lo, "above_range": x0 > hi,
                                            "is_recovery_percent": recoveries.get(key)}
        details["predictions"] = predictions
        details["prediction_covariance"] = {"names": qnames, "matrix": [[float(v) for v in r] for r in pred.cov]}
    if cs.signals is not None:
        from .internal_standard import standards_mean

        details["internal_standard"] = {"standards_mean": standards_mean(cs.signals),
                                        "recovery_window_percent": list(cs.is_recovery)}
    if not quantities:
        slope = coef_q["slope"]
        coef_q["slope"] = Quantity(slope.name, slope.value, slope.unit, slope.components, slope.description,
                                   slope.model, tuple(working), location)
    quantities.extend(coef_q[k] for k in reversed(coef_names))
    return Derived(tuple(quantities), tuple(correlations), warnings=tuple(warnings), origins=tuple(origins),
                   details=details)


def _recoveries(cs: CalibrationSpec, keys: tuple[str, ...], warnings: list[str]) -> dict[str, float]:
    """IS recovery of each reading set against the standards' mean, with a warning outside the window."""
    from .internal_standard import recovery, standards_mean

    if cs.signals is None:
        return {}
    reference = standards_mean(cs.signals)
    given: dict[str, Any] = {"": cs.sample, **(cs.readings or {})}
    out = {}
    low, high = cs.is_recovery
    for key in keys:
        out[key] = recovery(given[key], reference)
        if not low <= out[key] <= high:
            label = "the sample" if key == "" else f"reading '{key}'"
            warnings.append(f"internal-standard recovery of {label} is {out[key]:.1f} %, outside {low:g}-{high:g} % "
                            "of the standards' mean: check for matrix suppression or enhancement")
    return out


VIRTUAL_FIELDS = ("p",)


def set_field(raw: dict[str, Any], field: str, value: Any) -> dict[str, Any] | None:
    """``p``: read the sample ``value`` times (the readings given, repeated, keep their mean response)."""
    if field != "p":
        return None
    sample = raw["calibration"].get("sample")
    if not sample:
        raise ValueError("p applies to a calibration with sample readings")
    if not isinstance(value, int) or isinstance(value, bool) or value < 1:
        raise ValueError(f"p must be a whole number of readings (got {value!r})")
    if isinstance(sample, dict):  # raw signals: keep the mean ratio and the mean internal-standard signal
        pairs = list(zip(sample["analyte"], sample["internal_standard"], strict=True))
        ratio = math.fsum(a / i for a, i in pairs) / len(pairs)
        mean_is = math.fsum(i for _, i in pairs) / len(pairs)
        new: Any = {"analyte": [ratio * mean_is] * value, "internal_standard": [mean_is] * value}
    else:
        new = [math.fsum(sample) / len(sample)] * value
    return {**raw, "calibration": {**raw["calibration"], "sample": new}}


def actions(raw: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    """More sample readings (p to 2p, 3p); the sample's mean is kept and u(x0) follows from p (ISO 8466-1)."""
    block = raw["calibration"]
    out = []
    sample = block.get("sample")
    if sample:
        p = len(sample["analyte"]) if isinstance(sample, dict) else len(sample)
        for k in (2, 3):
            changed = set_field(raw, "p", k * p)
            assert changed is not None
            out.append((f"{k * p} sample readings instead of {p}", changed))
    # more calibration readings are not offered: copying the responses would shrink the residual s, and the fit
    # has no planned-design form (same s, dof of the new design) yet
    return out


def predict_many(spec: CalibrationSpec, responses: Any, readings: int | None = None) -> tuple[Any, Any, float, Any]:
    """Vectorised x0 and u(x0) for many samples' mean responses (each the mean of ``readings`` readings, by
    default as many as the budget's own sample); returns (x0, u, dof, mask of rows above the calibrated range).

    Rows below the lowest standard, down to zero or a slightly negative net response, are results (blank-level
    readings, to be compared with the detection and quantification limits); only rows above the range are
    flagged.
    """
    import numpy as np

    from .calibration_fit import predict_rows

    f = fit(spec)
    if float(f.gradient(np.array(0.0))) == 0.0 and spec.order == 1:
        raise ValueError("the calibration slope is zero")
    p = readings or spec.sample_readings()
    span = (min(spec.standards), max(spec.standards))
    x0, u = predict_rows(f, np.asarray(responses, dtype=float), p, span)
    with np.errstate(invalid="ignore"):
        outside = x0 > span[1]
    return x0, u, float(f.dof), outside


def rows(name: str, raw: dict[str, Any], responses: Any) -> tuple[Any, Any, Any, dict[int, str]]:
    """Per-row (x0, u(x0), dof, errors) for samples' mean responses (batch rows); a sample above the calibrated
    range has no result for its row."""
    import numpy as np

    spec = Spec.model_validate(raw)
    x0, u, dof, outside = predict_many(spec.calibration, responses)
    lo, hi = min(spec.calibration.standards), max(spec.calibration.standards)
    errors = {int(i): f"'{name}': the sample (x0 = {x0[i]:.4g}) lies outside the calibrated range [{lo:g}, {hi:g}]"
              for i in np.flatnonzero(outside)}
    return x0, u, np.full(np.shape(x0), dof), errors


def row_correlations(name: str, raw: dict[str, Any], responses: Any) -> dict[str, Any]:
    """Per-row correlation of a batch row's prediction with the line's coefficients and its other readings.

    Cov(x_row, theta) = J_row Cov(theta) and Cov(x_row, x_j) = J_row Cov(theta) J_j' with J = -g(x)/f'(x) (the
    module docstring of :mod:`.calibration_fit`); a row stands in for the sample, the other readings keep theirs.
    """
    import numpy as np

    from .calibration_fit import predict, predict_rows

    cs = Spec.model_validate(raw).calibration
    if cs.method == "standard_additions":
        return {}
    f = fit(cs)
    span = (min(cs.standards), max(cs.standards))
    p = cs.sample_readings()
    with np.errstate(all="ignore"):
        x0, u = predict_rows(f, np.asarray(responses, dtype=float), p, span)
        jac = -f.powers(x0) / f.gradient(x0)[:, None]
        cov_coef = jac @ f.cov
        names = ("slope",) if cs.through_origin else COEFFICIENTS[:cs.order + 1]
        out: dict[str, Any] = {f"{name}.{k}": np.clip(cov_coef[:, i] / (u * np.sqrt(f.cov[i, i])), -1.0, 1.0)
                               for i, k in enumerate(names)}
        others = {k: v for k, v in cs.reading_values().items() if k}
        if others:
            pred = predict(f, others, span)
            u_other = np.sqrt(np.diag(pred.cov))
            jac_other = -f.powers(pred.x0) / f.gradient(pred.x0)[:, None]
            cross = cov_coef @ jac_other.T
            for j, key in enumerate(pred.names):
                out[f"{name}.{key}"] = np.clip(cross[:, j] / (u * u_other[j]), -1.0, 1.0)
    return out


class Calibration(InputModel):
    """A value read off a straight-line (or quadratic) calibration."""

    key = "calibration"
    Spec = Spec
    settable = VIRTUAL_FIELDS

    def derive(self, name: str, spec: Any, location: Location) -> Derived:
        return derive(name, spec, location)

    def actions(self, raw: dict[str, Any]) -> list[Action]:
        return actions(raw)

    def set_field(self, raw: dict[str, Any], field: str, value: Any) -> dict[str, Any] | None:
        return set_field(raw, field, value)

    def rows(self, name: str, raw: dict[str, Any], values: Any) -> RowValues | None:
        return rows(name, raw, values)

    def row_correlations(self, name: str, raw: dict[str, Any], values: Any) -> dict[str, Any]:
        return row_correlations(name, raw, values)
