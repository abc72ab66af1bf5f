"""ISO 8466-1 diagnostics of a calibration line: residuals, Mandel's linearity test, homoscedasticity F-test.

- Linearity (ISO 8466-1, Mandel's test): with the residual standard deviations s_y1 of the line (n - 2 dof) and
  s_y2 of the second-order function (n - 3 dof), DS^2 = (n - 2) s_y1^2 - (n - 3) s_y2^2 and
  PG = DS^2 / s_y2^2 is compared with F(f1 = 1, f2 = n - 3) at 99 %.
- Homoscedasticity (ISO 8466-1): the variances of the replicate responses at the lowest and the highest standard
  give PG = s_larger^2 / s_smaller^2, compared with F(f_larger, f_smaller) at 99 %. Failing, a weighted fit is
  suggested.

Both are reported as warnings: the analyst decides (ISO 8466-1 asks for a narrower range or a second-order
function when linearity fails).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

LEVEL = 0.99  # ISO 8466-1 tests at the 99 % level  # from memory


@dataclass(frozen=True)
class Diagnostics:
    """Outcomes of the ISO 8466-1 checks; a test that could not be made is None with the reason in ``notes``."""

    residuals: tuple[tuple[float, float, float], ...]  # (x, y, y - f(x))
    mandel: dict[str, float] | None
    homoscedasticity: dict[str, float] | None
    warnings: tuple[str, ...]
    notes: tuple[str, ...]

    def as_json(self) -> dict[str, Any]:
        return {"residuals": [{"x": x, "y": y, "residual": e} for x, y, e in self.residuals],
                "mandel": self.mandel, "homoscedasticity": self.homoscedasticity, "notes": list(self.notes)}


def mandel(x: Any, y: Any, w: Any) -> dict[str, float]:
    """Mandel's test of a line against a second-order fit (ISO 8466-1), on the fit's weights."""
    import numpy as np
    from scipy import special

    n = len(x)
    out = {}
    for order in (1, 2):
        X = np.column_stack([x**k for k in range(order + 1)])
        beta = np.linalg.lstsq(X * np.sqrt(w)[:, None], y * np.sqrt(w), rcond=None)[0]
        out[order] = float(np.sum(w * (y - X @ beta) ** 2))
    s1 = out[1] / (n - 2)
    s2 = out[2] / (n - 3)
    ds2 = (n - 2) * s1 - (n - 3) * s2
    pg = ds2 / s2 if s2 > 0 else math.inf
    f = float(special.fdtri(1, n - 3, LEVEL))  # F quantile; scipy.special keeps scipy.stats out of `run`
    return {"s_y1": math.sqrt(s1), "s_y2": math.sqrt(s2), "ds2": ds2, "pg": pg, "f_critical": f,
            "dof2": float(n - 3), "level": LEVEL, "passed": float(pg <= f)}


def homoscedasticity(low: list[float], high: list[float]) -> dict[str, float]:
    """F-test of the replicate variances at the ends of the range (ISO 8466-1)."""
    import numpy as np
    from scipy import special

    v_low, v_high = float(np.var(low, ddof=1)), float(np.var(high, ddof=1))
    f_low, f_high = len(low) - 1, len(high) - 1
    if v_high >= v_low:
        pg, f1, f2 = (v_high / v_low if v_low > 0 else math.inf), f_high, f_low
    else:
        pg, f1, f2 = (v_low / v_high if v_high > 0 else math.inf), f_low, f_high
    f = float(special.fdtri(f1, f2, LEVEL))
    return {"s_low": math.sqrt(v_low), "s_high": math.sqrt(v_high), "pg": pg, "f_critical": f,
            "dof1": float(f1), "dof2": float(f2), "level": LEVEL, "passed": float(pg <= f)}


def diagnose(fitted: Any, standards: list[float], responses: list[Any]) -> Diagnostics:
    """Residuals of the fitted function and, where the data allow, the two ISO 8466-1 tests."""
    import numpy as np

    warnings: list[str] = []
    notes: list[str] = []
    resid = fitted.residuals
    residuals = tuple((float(a), float(b), float(e)) for a, b, e in zip(fitted.x, fitted.y, resid, strict=True))
    m = None
    if fitted.order == 1 and not fitted.through_origin:
        if fitted.n >= 4 and len(set(standards)) >= 3:
            m = mandel(fitted.x, fitted.y, fitted.w)
            if not m["passed"]:
                warnings.append(f"linearity (Mandel test, ISO 8466-1): the second-order fit is significantly better "
                                f"(PG = {m['pg']:.3g} > F = {m['f_critical']:.3g} at 99 %); use 'function: "
                                "quadratic' (ISO 8466-2) or a narrower working range")
        else:
            notes.append("Mandel test not made: it needs at least 4 points")
    h = None
    order = np.argsort(standards)
    low, high = responses[int(order[0])], responses[int(order[-1])]
    if isinstance(low, list) and isinstance(high, list) and len(low) >= 2 and len(high) >= 2:
        h = homoscedasticity(low, high)
        if not h["passed"] and fitted.weighting != "none":
            notes.append(f"the variances at the ends of the range differ (PG = {h['pg']:.3g}); the fit is weighted "
                         f"({fitted.weighting})")
        elif not h["passed"]:
            warnings.append(f"homoscedasticity (F-test of the ends of the range, ISO 8466-1): the variances differ "
                            f"(PG = {h['pg']:.3g} > F = {h['f_critical']:.3g} at 99 %); consider a weighted fit "
                            "('weighting: inverse_variance' or 'inverse_x2') or a narrower range")
    else:
        notes.append("homoscedasticity test not made: it needs replicate responses at the lowest and the highest "
                     "standard")
    return Diagnostics(residuals, m, h, tuple(warnings), tuple(notes))
