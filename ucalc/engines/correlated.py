"""Joint sampling of correlated inputs for Monte Carlo, keeping each input's own distribution.

Correlated inputs form groups (connected by non-zero coefficients). A group whose inputs are all Type A means
with one t component and the same degrees of freedom is drawn from a multivariate t (JCGM 102 6.5.3 and JCGM 101
6.4.9): x = x̂ + s ∘ (L z) / sqrt(w/ν), with z standard normal, L L^T = R and w chi-square with ν dof, so each
marginal is the input's scaled and shifted t and the correlation is R. Any other group uses a Gaussian copula:
z ~ N(0, R*), and each input is its own distribution's quantile of Φ(z) (Gaussian inputs: u·z directly). R* is
chosen so that the correlation the inputs really achieve equals the stated one (NORTA); the achieved
coefficients are computed by Gauss-Hermite quadrature and reported. Products with the factor are written out
column by column, so no BLAS thread pool is involved.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Literal

from ..budget.definitions import Budget, Component

if TYPE_CHECKING:
    import numpy as np

TABLE_CELLS = 1 << 14
TAIL = 1e-10  # probability left out at each end of a t or Gaussian component's grid
QUADRATURE_NODES = 48

GroupKind = Literal["gaussian", "multivariate t", "gaussian copula"]


@dataclass(frozen=True)
class SampledCorrelation:
    """A stated correlation coefficient and the one the sampled inputs have (None where a variance does not
    exist)."""

    a: str
    b: str
    stated: float
    achieved: float | None
    method: GroupKind


def groups(budget: Budget) -> list[tuple[str, ...]]:
    """Inputs of the model linked by non-zero correlation coefficients, each group in model order."""
    names = budget.model.inputs
    seen: set[str] = set()
    out: list[tuple[str, ...]] = []
    for start in names:
        if start in seen or not any(b != start and budget.correlation(start, b) for b in names):
            continue
        group, todo = {start}, [start]
        while todo:
            a = todo.pop()
            for b in names:
                if b not in group and b != a and budget.correlation(a, b) != 0.0:
                    group.add(b)
                    todo.append(b)
        seen |= group
        out.append(tuple(n for n in names if n in group))
    return out


def _live(components: tuple[Component, ...]) -> list[Component]:
    return [c for c in components if c.distribution.scale > 0]


def _component_cdf(c: Component, x: np.ndarray) -> np.ndarray:
    """CDF of one zero-centred component (JCGM 101 6.4) on the points ``x``."""
    import numpy as np
    from scipy import special

    d = c.distribution
    a = d.scale
    if d.shape == "normal" or (d.shape == "t" and math.isinf(d.dof)):
        return np.asarray(special.ndtr(x / a))
    if d.shape == "t":
        return np.asarray(special.stdtr(d.dof, x / a))
    if d.shape == "rectangular":
        return np.clip((x + a) / (2 * a), 0.0, 1.0)
    if d.shape == "triangular":
        y = np.clip(x / a, -1.0, 1.0)
        return np.where(y < 0, 0.5 * (1 + y) ** 2, 1 - 0.5 * (1 - y) ** 2)
    if d.shape == "arcsine":
        return 0.5 + np.arcsin(np.clip(x / a, -1.0, 1.0)) / math.pi
    if d.shape == "curvilinear_trapezoid":  # integral of ln((a + d)/max(|x|, a - d))/(4d) (6.4.4.3)
        lo, hi, dd = a * (1 - d.param), a * (1 + d.param), a * d.param
        t = np.clip(np.abs(x), 0.0, hi)
        inner = np.minimum(t, lo) * math.log(hi / lo)
        outer_t = np.maximum(t, lo)
        outer = (outer_t - lo) * math.log(hi) - (outer_t * np.log(outer_t) - outer_t - lo * math.log(lo) + lo)
        cdf: np.ndarray = 0.5 + np.sign(x) * (inner + outer) / (4 * dd)
        return cdf
    raise ValueError(d.shape)  # trapezoids are split into two rectangles before this point


def _pieces(components: list[Component]) -> list[Component]:
    """Components with each trapezoid written as the sum of its two rectangles (JCGM 101 6.4.3.4)."""
    import dataclasses

    out = []
    for c in components:
        d = c.distribution
        if d.shape != "trapezoidal":
            out.append(c)
            continue
        for half in (0.5 * d.scale * (1 + d.param), 0.5 * d.scale * (1 - d.param)):
            if half > 0:
                out.append(dataclasses.replace(c, distribution=dataclasses.replace(d, shape="rectangular",
                                                                                   scale=half, param=0.0)))
    return out


def _reach(c: Component) -> float:
    """Half-range of a component's grid: its support, or the 1 - 1e-10 quantile for unbounded shapes."""
    from scipy import special

    d = c.distribution
    if d.shape == "normal" or (d.shape == "t" and math.isinf(d.dof)):
        return float(-special.ndtri(TAIL)) * d.scale
    if d.shape == "t":
        return float(special.stdtrit(d.dof, 1 - TAIL)) * d.scale
    return d.scale * (1 + d.param) if d.shape == "curvilinear_trapezoid" else d.scale


def marginal_table(components: tuple[Component, ...]) -> tuple[np.ndarray, np.ndarray]:
    """(cumulative probabilities, values) of the sum of independent components: each is discretised into cell
    probabilities on a common grid and the cells are convolved; the quantile function is the linear
    interpolation of this table."""
    import numpy as np

    pieces = _pieces(_live(components))
    reach = sum(_reach(c) for c in pieces)
    h = 2 * reach / TABLE_CELLS
    edges = -reach + h * np.arange(TABLE_CELLS + 1)
    mass = np.ones(1)
    for c in pieces:
        cell = np.diff(_component_cdf(c, edges))
        mass = _convolve(mass, np.clip(cell, 0.0, None)) if len(mass) > 1 else cell
    mass = mass / mass.sum()
    m = len(pieces)
    centres = m * (-reach) + h * (np.arange(len(mass)) + 0.5 * m)
    cdf = np.cumsum(mass) - 0.5 * mass
    keep = np.concatenate(([True], np.diff(cdf) > 0))  # strictly increasing for interpolation
    return cdf[keep], centres[keep]


def _convolve(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Full discrete convolution by FFT (cell probabilities; round-off below zero is cut)."""
    import numpy as np

    n = len(a) + len(b) - 1
    size = 1 << (n - 1).bit_length()
    out = np.fft.irfft(np.fft.rfft(a, size) * np.fft.rfft(b, size), size)[:n]
    return np.asarray(np.clip(out, 0.0, None))


class Transform:
    """Standard normal score -> deviation of one input: u·z for a Gaussian input, else its quantile of Φ(z)."""

    def __init__(self, components: tuple[Component, ...]) -> None:
        live = _live(components)
        gaussian = all(c.distribution.shape == "normal" or (c.distribution.shape == "t"
                                                           and math.isinf(c.distribution.dof)) for c in live)
        self.u = math.hypot(*(c.standard_uncertainty for c in live))
        self.table = None if gaussian else marginal_table(components)

    def __call__(self, z: np.ndarray) -> np.ndarray:
        import numpy as np

        if self.table is None:
            z *= self.u
            return z
        from scipy import special

        values: np.ndarray = np.interp(special.ndtr(z), self.table[0], self.table[1])
        return values


def _factor(r: np.ndarray) -> np.ndarray:
    """F with F F^T = R, from the eigen-decomposition (singular R, r = ±1, accepted)."""
    import numpy as np

    w, v = np.linalg.eigh(r)
    return np.asarray(v * np.sqrt(np.clip(w, 0.0, None)))


def _quadrature() -> tuple[np.ndarray, np.ndarray]:
    import numpy as np

    x, w = np.polynomial.hermite_e.hermegauss(QUADRATURE_NODES)
    return x, w / math.sqrt(2 * math.pi)


def achieved_correlation(fa: Transform, fb: Transform, rho: float) -> float:
    """corr(f_a(Z_a), f_b(Z_b)) for standard normal scores of correlation rho, by Gauss-Hermite quadrature."""
    import numpy as np

    x, w = _quadrature()
    za = np.repeat(x, len(x))
    zb = rho * za + math.sqrt(max(1 - rho * rho, 0.0)) * np.tile(x, len(x))
    ww = np.outer(w, w).ravel()
    ya, yb = fa(za.copy()), fb(zb.copy())
    ma, mb = float(ww @ ya), float(ww @ yb)
    va, vb = float(ww @ (ya - ma) ** 2), float(ww @ (yb - mb) ** 2)
    return float(ww @ ((ya - ma) * (yb - mb))) / math.sqrt(va * vb)


def _normal_scores_correlation(fa: Transform, fb: Transform, r: float) -> float:
    """The correlation of the normal scores that gives the inputs correlation r (NORTA), clipped to what the
    marginals allow."""
    if fa.table is None and fb.table is None:
        return r
    from scipy import optimize

    lo, hi = achieved_correlation(fa, fb, -1.0), achieved_correlation(fa, fb, 1.0)
    if r <= lo:
        return -1.0
    if r >= hi:
        return 1.0
    return float(optimize.brentq(lambda rho: achieved_correlation(fa, fb, rho) - r, -1.0, 1.0, xtol=1e-12))


class Group:
    """One group of correlated inputs with its own two random streams (scores; chi-square for the t)."""

    def __init__(self, budget: Budget, names: tuple[str, ...], seeds: list[Any]) -> None:
        import numpy as np

        self.names = names
        k = len(names)
        stated = np.array([[budget.correlation(a, b) for b in names] for a in names])
        comps = [_live(budget.quantities[n].components) for n in names]
        dofs = {c[0].distribution.dof for c in comps if len(c) == 1 and c[0].distribution.shape == "t"}
        self.kind: GroupKind
        self.dof = math.inf
        if all(len(c) == 1 and c[0].distribution.shape == "t" and c[0].kind == "A" for c in comps) and \
                len(dofs) == 1 and not math.isinf(next(iter(dofs))):
            self.kind, self.dof = "multivariate t", float(next(iter(dofs)))
            self.scales = [c[0].distribution.scale for c in comps]
            target = stated
        else:
            self.transforms = [Transform(budget.quantities[n].components) for n in names]
            gaussian = all(t.table is None for t in self.transforms)
            self.kind = "gaussian" if gaussian else "gaussian copula"
            target = np.eye(k)
            for i in range(k):
                for j in range(i + 1, k):
                    if stated[i, j]:
                        target[i, j] = target[j, i] = _normal_scores_correlation(
                            self.transforms[i], self.transforms[j], float(stated[i, j]))
        self.factor = _factor(target)
        realised = self.factor @ self.factor.T  # after any clipping of a matrix that was not positive definite
        self.achieved: list[SampledCorrelation] = []
        for i in range(k):
            for j in range(i + 1, k):
                if not stated[i, j]:
                    continue
                if self.kind == "multivariate t":
                    value: float | None = float(realised[i, j]) if self.dof > 2 else None
                else:
                    value = achieved_correlation(self.transforms[i], self.transforms[j],
                                                 float(np.clip(realised[i, j], -1.0, 1.0)))
                self.achieved.append(SampledCorrelation(names[i], names[j], float(stated[i, j]), value, self.kind))
        self.scores = np.random.Generator(np.random.PCG64(seeds[0]))
        self.chi2 = np.random.Generator(np.random.PCG64(seeds[1]))

    def draw(self, n: int) -> dict[str, np.ndarray]:
        """Deviations of the group's inputs for ``n`` trials."""
        import numpy as np

        k = len(self.names)
        z = self.scores.standard_normal((n, k))
        shrink = np.sqrt(self.dof / self.chi2.chisquare(self.dof, n)) if self.kind == "multivariate t" else None
        out = {}
        for j, name in enumerate(self.names):  # (z F^T)_j column by column
            x = z[:, 0] * self.factor[j, 0]
            for i in range(1, k):
                x += z[:, i] * self.factor[j, i]
            if shrink is not None:
                x *= shrink
                x *= self.scales[j]
            else:
                x = self.transforms[j](x)
            out[name] = x
        return out
