"""Least-squares calibration functions and the concentrations they predict, with the covariance of predictions.

The line y = a + b x (ISO 8466-1) or the second-order function y = a + b x + c x^2 (ISO 8466-2) is fitted by
weighted least squares: coefficients theta = (X'WX)^-1 X'Wy, residual variance s^2 = sum w e^2 / (n - m) and
Cov(theta) = s^2 (X'WX)^-1. A reading with mean response y_i of p_i readings predicts x_i with f(x_i) = y_i; to
first order (JCGM 100 5.1.2, 5.2.2)

    Cov(x_i, x_j) = [g_i' Cov(theta) g_j + delta_ij s^2 / (p_i w_i)] / (f'(x_i) f'(x_j)),  g = (1, x, x^2),

so predictions from one fit share the terms of the coefficients. For the straight line and one reading this is
the ISO 8466-1 / EURACHEM/CITAC CG4 A5 formula; for several readings the off-diagonal terms are what a
blank-corrected difference or a sum of results needs.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class Fit:
    """A fitted calibration function; ``coef`` is (a, b) or (a, b, c), or (b,) through the origin."""

    coef: Any
    cov: Any
    s2: float
    dof: int
    x: Any
    y: Any
    w: Any
    order: int
    through_origin: bool
    weighting: str
    levels_var: tuple[tuple[float, float], ...]

    @property
    def n(self) -> int:
        return len(self.x)

    def powers(self, x0: Any) -> Any:
        """Design row(s) g(x0): (1, x0[, x0^2]) or (x0,) through the origin."""
        import numpy as np

        x0 = np.asarray(x0, dtype=float)
        if self.through_origin:
            return x0[..., None]
        return np.stack([x0**k for k in range(self.order + 1)], axis=-1)

    def value(self, x0: Any) -> Any:
        return self.powers(x0) @ self.coef

    def gradient(self, x0: Any) -> Any:
        """f'(x0) = b + 2 c x0."""
        import numpy as np

        x0 = np.asarray(x0, dtype=float)
        if self.through_origin:
            return self.coef[0] * np.ones_like(x0)
        return self.coef[1] + (2 * self.coef[2] * x0 if self.order == 2 else np.zeros_like(x0))

    @property
    def residuals(self) -> Any:
        return self.y - self.value(self.x)


def design(x: Any, order: int, through_origin: bool) -> Any:
    import numpy as np

    if through_origin:
        return x[:, None]
    return np.column_stack([x**k for k in range(order + 1)])


def fit(standards: list[float], responses: list[Any], weighting: str = "none", order: int = 1,
        through_origin: bool = False) -> Fit:
    """Weighted least squares of the responses (one or a list of replicates per standard) on the standards."""
    import numpy as np

    xs: list[float] = []
    ys: list[float] = []
    levels_var: list[tuple[float, float]] = []
    for level, r in zip(standards, responses, strict=True):
        reps = r if isinstance(r, list) else [r]
        xs.extend([level] * len(reps))
        ys.extend(reps)
        levels_var.append((level, float(np.var(reps, ddof=1)) if len(reps) > 1 else math.nan))
    x, y = np.array(xs, dtype=float), np.array(ys, dtype=float)
    if weighting == "inverse_x":
        w = 1.0 / x
    elif weighting == "inverse_x2":
        w = 1.0 / x**2
    elif weighting == "inverse_variance":
        var = dict(levels_var)
        if any(v <= 0 for v in var.values()):
            raise ValueError("a standard's replicate responses are identical; inverse-variance weights need scatter")
        w = np.array([1.0 / var[xi] for xi in xs])
    else:
        w = np.ones_like(x)
    X = design(x, order, through_origin)
    normal = X.T @ (w[:, None] * X)
    beta = np.linalg.solve(normal, X.T @ (w * y))
    resid = y - X @ beta
    dof = len(x) - X.shape[1]
    if dof < 1:
        raise ValueError("too few calibration points for a residual standard deviation")
    s2 = float(np.sum(w * resid**2) / dof)
    cov = s2 * np.linalg.inv(normal)
    return Fit(beta, cov, s2, dof, x, y, w, order, through_origin, weighting, tuple(levels_var))


def weight_at(f: Fit, x0: Any) -> Any:
    """Weight of a single reading at x0 on the scale of the fitted weights.

    1/x and 1/x^2 are undefined at or below zero: a blank-level reading takes the weight of the lowest
    standard (its variance is not smaller than there). Replicate variances are interpolated between standards
    and held constant beyond them.
    """
    import numpy as np

    x0 = np.asarray(x0, dtype=float)
    if f.weighting == "none":
        return np.ones_like(x0)
    if f.weighting in ("inverse_x", "inverse_x2"):
        floor = float(np.min(f.x))
        at = np.maximum(x0, floor)
        return 1.0 / at if f.weighting == "inverse_x" else 1.0 / at**2
    levels = sorted(f.levels_var)
    return 1.0 / np.interp(x0, [lv[0] for lv in levels], [lv[1] for lv in levels])


def invert(f: Fit, y0: Any, span: tuple[float, float]) -> Any:
    """x0 with f(x0) = y0; for the second-order function the root nearer the middle of ``span`` (ISO 8466-2)."""
    import numpy as np

    y0 = np.asarray(y0, dtype=float)
    if f.through_origin:
        return y0 / f.coef[0]
    if f.order == 1:
        return (y0 - f.coef[0]) / f.coef[1]
    a, b, c = (float(v) for v in f.coef)
    if c == 0.0:
        return (y0 - a) / b
    disc = b * b - 4 * c * (a - y0)
    with np.errstate(invalid="ignore"):
        root = np.sqrt(disc)
        r1, r2 = (-b + root) / (2 * c), (-b - root) / (2 * c)
    middle = 0.5 * (span[0] + span[1])
    return np.where(np.abs(r1 - middle) <= np.abs(r2 - middle), r1, r2)


@dataclass(frozen=True)
class Predictions:
    """Predicted x for named readings with their full covariance, and their covariance with the coefficients."""

    names: tuple[str, ...]
    y0: Any
    p: Any
    x0: Any
    cov: Any
    cov_coef: Any  # (readings, coefficients)


def predict(f: Fit, readings: dict[str, list[float]], span: tuple[float, float]) -> Predictions:
    """Predictions for several named readings from one fit, with Cov(x_i, x_j) as in the module docstring."""
    import numpy as np

    names = tuple(readings)
    y0 = np.array([math.fsum(r) / len(r) for r in readings.values()], dtype=float)
    p = np.array([len(r) for r in readings.values()], dtype=float)
    x0 = invert(f, y0, span)
    if not np.all(np.isfinite(x0)):
        bad = names[int(np.flatnonzero(~np.isfinite(x0))[0])]
        raise ValueError(f"reading '{bad}' (mean response {y0[names.index(bad)]:.6g}) lies beyond the turning "
                         "point of the calibration function")
    slope = f.gradient(x0)
    if np.any(slope == 0):
        raise ValueError("the calibration function is flat at a reading; its concentration cannot be predicted")
    jac = -f.powers(x0) / slope[:, None]  # d x_i / d theta
    own = f.s2 / (p * weight_at(f, x0)) / slope**2  # the readings' own scatter
    cov = jac @ f.cov @ jac.T + np.diag(own)
    return Predictions(names, y0, p, x0, cov, jac @ f.cov)


def predict_rows(f: Fit, y0: Any, p: int, span: tuple[float, float]) -> tuple[Any, Any]:
    """Vectorised x0 and u(x0) for many independent mean responses of p readings each (batch rows)."""
    import numpy as np

    with np.errstate(all="ignore"):
        x0 = invert(f, y0, span)
        slope = f.gradient(x0)
        g = f.powers(x0)
        var_fit = np.einsum("ij,jk,ik->i", g, f.cov, g)
        var = (f.s2 / (p * weight_at(f, x0)) + var_fit) / slope**2
        return x0, np.sqrt(var)
