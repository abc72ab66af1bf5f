"""Limits of detection and quantification, estimated from blank replicates or from a calibration line, or
declared.

From blank replicates (n results, standard deviation s_0, nu = n - 1 dof), for results corrected by the mean of
those blanks and reported as the mean of m readings, the net result has sigma_net = s_0 sqrt(1/m + 1/n):

- ``common`` (common practice): LOD = 3 s_0, LOQ = 10 s_0;
- ``iso11843`` (ISO 11843-2:2000 clause 5 in the blank form; ISO 11843-1 definitions): critical value
  L_C = t(1 - alpha, nu) sigma_net, detection limit L_D = delta(nu, alpha, beta) sigma_net where delta is the
  non-centrality of the t distribution with P(T'(nu, delta) <= t(1 - alpha, nu)) = beta; LOQ = 10 sigma_net
  (common practice, the IUPAC k_Q = 10).

From an unweighted calibration line y = a + b x of N points (ISO 11843-2:2000 5.3, constant variance): with s the
residual standard deviation (N - 2 dof), K readings of the sample, xbar and Sxx of the standards,
  sigma_x = (s/b) sqrt(1/K + 1/N + xbar^2 / Sxx),
  x_C = t(1 - alpha, N - 2) sigma_x,  x_D = delta(N - 2, alpha, beta) sigma_x,  LOQ = 10 sigma_x (common practice).
The line's numbers come from the calibration input's own fit; ``factor`` converts from the measured solution to
the measurand (a dilution factor, for example).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator


@dataclass(frozen=True)
class DetectionLimits:
    """LOD and LOQ in the measurand's unit; ``critical`` is L_C where the method gives one (else None)."""

    lod: float
    loq: float
    critical: float | None
    method: str
    source: str
    working: tuple[str, ...]


def delta(nu: float, alpha: float = 0.05, beta: float = 0.05) -> float:
    """The non-centrality delta with P(T'(nu, delta) <= t(1 - alpha, nu)) = beta (ISO 11843-2 5.3 note)."""
    from scipy import optimize, special

    if math.isinf(nu):
        return float(special.ndtri(1 - alpha) + special.ndtri(1 - beta))
    t_crit = float(special.stdtrit(nu, 1 - alpha))
    guess = t_crit + float(special.stdtrit(nu, 1 - beta))
    return float(optimize.brentq(lambda d: special.nctdtr(nu, d, t_crit) - beta, 0.0, 4 * guess + 10))


def _t(nu: float, alpha: float) -> float:
    from scipy import special  # quantiles from scipy.special: `ucalc run` does not import scipy.stats

    return float(special.ndtri(1 - alpha) if math.isinf(nu) else special.stdtrit(nu, 1 - alpha))


def from_blanks(blanks: Sequence[float], method: str = "common", replicates: int = 1, blank_corrected: bool = True,
                alpha: float = 0.05, beta: float = 0.05, factor: float = 1.0) -> DetectionLimits:
    """LOD/LOQ from blank replicates (see the module docstring for the formulas and their sources)."""
    import statistics

    n = len(blanks)
    if n < 2:
        raise ValueError(f"at least 2 blank results are needed (got {n})")
    s0 = statistics.stdev(blanks)
    if s0 <= 0:
        raise ValueError("the blank results are identical: their standard deviation is zero")
    s0 *= factor
    nu = n - 1.0
    if method == "common":
        working: tuple[str, ...] = (
            f"blanks: n = {n}, s_0 = {s0:.4g}",
            f"LOD = 3 s_0 = {3 * s0:.4g}, LOQ = 10 s_0 = {10 * s0:.4g} (common practice)")
        return DetectionLimits(3 * s0, 10 * s0, None, "3 s and 10 s of blanks", "blank replicates", working)
    eta = math.sqrt(1.0 / replicates + (1.0 / n if blank_corrected else 0.0))
    sigma = s0 * eta
    t, d = _t(nu, alpha), delta(nu, alpha, beta)
    working = (f"blanks: n = {n}, s_0 = {s0:.4g}, dof {nu:g}; sigma_net = s_0 sqrt(1/{replicates}"
               f"{f' + 1/{n}' if blank_corrected else ''}) = {sigma:.4g}",
               f"L_C = t({1 - alpha:g}, {nu:g}) sigma_net = {t:.4g} x {sigma:.4g} = {t * sigma:.4g}",
               f"L_D = delta sigma_net = {d:.4g} x {sigma:.4g} = {d * sigma:.4g} (alpha = {alpha:g}, beta = {beta:g})",
               f"LOQ = 10 sigma_net = {10 * sigma:.4g} (common practice)")
    return DetectionLimits(d * sigma, 10 * sigma, t * sigma, "ISO 11843-2, t-based", "blank replicates", working)


def from_line(a: float, b: float, s: float, x: Sequence[float], dof: float, readings: int = 1,
              alpha: float = 0.05, beta: float = 0.05, factor: float = 1.0) -> DetectionLimits:
    """x_C, x_D and LOQ from an unweighted straight line (ISO 11843-2 5.3)."""
    import statistics

    n = len(x)
    xbar = statistics.fmean(x)
    sxx = sum((v - xbar) ** 2 for v in x)
    if b <= 0:
        raise ValueError(f"the calibration slope must be positive for a detection limit (got {b:.4g})")
    sigma = (s / abs(b)) * math.sqrt(1.0 / readings + 1.0 / n + xbar * xbar / sxx) * factor
    t, d = _t(dof, alpha), delta(dof, alpha, beta)
    working = (f"calibration line: a = {a:.4g}, b = {b:.4g}, s = {s:.4g} ({dof:g} dof), N = {n}, xbar = {xbar:.4g}, "
               f"Sxx = {sxx:.4g}, K = {readings}" + (f", factor {factor:g}" if factor != 1 else ""),
               f"sigma_x = (s/b) sqrt(1/K + 1/N + xbar^2/Sxx) = {sigma:.4g}",
               f"x_C = t sigma_x = {t:.4g} x {sigma:.4g} = {t * sigma:.4g}; x_D = delta sigma_x = {d:.4g} x "
               f"{sigma:.4g} = {d * sigma:.4g}",
               f"LOQ = 10 sigma_x = {10 * sigma:.4g} (common practice)")
    return DetectionLimits(d * sigma, 10 * sigma, t * sigma, "ISO 11843-2", "the calibration line",
                           working)


def declared(lod: float | None, loq: float | None) -> DetectionLimits:
    """Limits stated in the budget; one not given is NaN."""
    return DetectionLimits(math.nan if lod is None else lod, math.nan if loq is None else loq, None, "declared",
                           "the budget", ("stated in the budget",))


class LimitsSpec(BaseModel):
    """The budget's ``limits`` block: declared ``lod``/``loq``, or ``blanks``, or a ``calibration`` input."""

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    lod: float | None = Field(default=None, gt=0)
    loq: float | None = Field(default=None, gt=0)
    blanks: list[float] | None = Field(default=None, min_length=2, max_length=100_000)
    calibration: str | None = Field(default=None, max_length=200)
    method: Literal["common", "iso11843"] | None = None
    replicates: int = Field(default=1, ge=1)
    blank_corrected: bool = True
    alpha: float = Field(default=0.05, gt=0, lt=0.5)
    beta: float = Field(default=0.05, gt=0, lt=0.5)
    factor: float = Field(default=1.0, gt=0)

    @model_validator(mode="after")
    def _one(self) -> LimitsSpec:
        given = [k for k in ("blanks", "calibration") if getattr(self, k) is not None]
        if self.lod is not None or self.loq is not None:
            given.append("lod/loq")
        if len(given) != 1:
            raise ValueError("give declared 'lod' and/or 'loq', or 'blanks', or 'calibration' (an input's name)"
                             + (f"; got {', '.join(given)}" if given else ""))
        if self.lod is not None and self.loq is not None and self.lod > self.loq:
            raise ValueError(f"lod ({self.lod:g}) is above loq ({self.loq:g})")
        if self.calibration is not None and self.method == "common":
            raise ValueError("limits from a calibration line follow ISO 11843-2; remove 'method: common'")
        return self


def build(spec: LimitsSpec, calibration_fit: Any = None) -> DetectionLimits:
    """The limits a budget's block asks for; ``calibration_fit`` is the named calibration input's own fit."""
    if spec.blanks is not None:
        return from_blanks(spec.blanks, spec.method or "common", spec.replicates, spec.blank_corrected, spec.alpha,
                           spec.beta, spec.factor)
    if spec.calibration is not None:
        assert calibration_fit is not None
        f = calibration_fit  # ucalc.inputs.calibration_fit.Fit of a straight line with an intercept
        return from_line(float(f.coef[0]), float(f.coef[1]), math.sqrt(f.s2), [float(v) for v in f.x], f.dof,
                         spec.replicates, spec.alpha, spec.beta, spec.factor)
    return declared(spec.lod, spec.loq)
