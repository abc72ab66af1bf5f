"""Probability distributions of uncertainty components, in the manner of scipy's frozen distributions.

Each object knows its standard uncertainty (the GUM path, JCGM 100 4.3) and draws zero-mean deviations for
Monte Carlo (JCGM 101 6.4) from an explicit ``numpy.random.Generator``. Divisors: rectangular sqrt(3)
(JCGM 100 4.3.7), triangular sqrt(6) (4.3.9), arcsine sqrt(2) (JCGM 101 6.4.6), trapezoidal sqrt(6/(1 + beta^2))
(JCGM 101 6.4.3), curvilinear trapezoid from u^2 = a^2/3 + d^2/9 (6.4.4); a Type A component with finite degrees
of freedom is a scaled and shifted t (JCGM 101 6.4.9.7).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Literal

if TYPE_CHECKING:
    import numpy as np

Shape = Literal["normal", "rectangular", "triangular", "arcsine", "t", "trapezoidal", "curvilinear_trapezoid"]
HALF_WIDTH_SHAPES = ("rectangular", "triangular", "arcsine", "trapezoidal", "curvilinear_trapezoid")

DIVISORS: dict[str, float] = {
    "rectangular": math.sqrt(3.0),
    "triangular": math.sqrt(6.0),
    "arcsine": math.sqrt(2.0),
}


FIXED_KURTOSIS = {"normal": 3.0, "t": 3.0, "rectangular": 9.0 / 5.0, "triangular": 12.0 / 5.0, "arcsine": 1.5}


@dataclass(frozen=True)
class Distribution:
    """A zero-centred distribution of deviations.

    ``scale`` is the standard deviation for ``normal``, the half-width for ``rectangular``, ``triangular``,
    ``arcsine``, ``trapezoidal`` and ``curvilinear_trapezoid``, and the scale s/sqrt(n) for ``t`` (whose own
    standard deviation is larger, JCGM 101 6.4.9.4). ``param`` is scale-free: for ``trapezoidal`` beta, the ratio
    of the top's half-width to the base's (6.4.3); for ``curvilinear_trapezoid`` d/a, the half-width d of the
    interval in which each limit lies, as a fraction of the half-width a (6.4.4, d < a).
    """

    shape: Shape
    scale: float
    dof: float = math.inf
    param: float = 0.0

    @property
    def kurtosis(self) -> float:
        """E[e^4] / u^4 of the distribution, for the second-order terms of the GUM.

        Rectangular 9/5, triangular 12/5, arcsine 3/2 (moments of the densities of JCGM 101 6.4.2-6.4.6).
        Trapezoid: the sum of two rectangular variates (6.4.3.4), whose fourth cumulants add:
        3 - 0.3 ((1 + beta)^4 + (1 - beta)^4) / (1 + beta^2)^2. Curvilinear trapezoid: a rectangular variate of
        half-width w, w itself rectangular on [a - d, a + d] (6.4.4), so E[e^4] = E[w^4]/5 and E[e^2] = E[w^2]/3:
        9 (1 + 2 rho^2 + rho^4/5) / (5 (1 + rho^2/3)^2) with rho = d/a. Gaussian and t: 3 (for ``t`` the GUM's
        convention of a Gaussian mean, JCGM 100 4.2.3).
        """
        if self.shape in FIXED_KURTOSIS:
            return FIXED_KURTOSIS[self.shape]
        b = self.param
        if self.shape == "trapezoidal":
            return 3.0 - 0.3 * ((1.0 + b) ** 4 + (1.0 - b) ** 4) / (1.0 + b * b) ** 2
        if self.shape == "curvilinear_trapezoid":
            return 9.0 * (1.0 + 2.0 * b * b + b**4 / 5.0) / (5.0 * (1.0 + b * b / 3.0) ** 2)
        return 3.0

    @property
    def standard_uncertainty(self) -> float:
        """The standard uncertainty the GUM assigns (for ``t`` the scale itself, JCGM 100 4.2.3).

        Trapezoidal: a sqrt((1 + beta^2)/6) (JCGM 101 6.4.3.3); curvilinear trapezoid: sqrt(a^2/3 + d^2/9)
        (6.4.4.3).
        """
        if self.shape in DIVISORS:
            return self.scale / DIVISORS[self.shape]
        if self.shape == "trapezoidal":
            return self.scale * math.sqrt((1.0 + self.param**2) / 6.0)
        if self.shape == "curvilinear_trapezoid":
            return self.scale * math.sqrt(1.0 / 3.0 + self.param**2 / 9.0)
        return self.scale

    @property
    def variance_defined(self) -> bool:
        """False for a t with 2 or fewer degrees of freedom, whose variance does not exist (JCGM 101 6.4.9)."""
        return not (self.shape == "t" and self.dof <= 2)

    @property
    def divisor(self) -> float:
        """Half-width over standard uncertainty for the half-width shapes, 1 otherwise."""
        if self.shape in ("trapezoidal", "curvilinear_trapezoid"):
            return self.scale / self.standard_uncertainty if self.scale else 1.0
        return DIVISORS.get(self.shape, 1.0)

    def sample(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """Draw ``n`` deviations with ``rng``."""
        import numpy as np

        # in-place scaling keeps one array per draw; this loop is the hot path of Monte Carlo
        if self.shape == "normal" or (self.shape == "t" and math.isinf(self.dof)):
            x = rng.standard_normal(n)
        elif self.shape == "t":
            x = rng.standard_t(self.dof, n)
        elif self.shape == "rectangular":
            x = rng.random(n)
            x *= 2.0
            x -= 1.0
        elif self.shape == "triangular":
            # difference of two rectangular variates (JCGM 101 6.4.5); drawn in pairs so that a stream split
            # into blocks gives the same values as one long draw
            pairs = rng.random((n, 2))
            x = pairs[:, 0] - pairs[:, 1]
        elif self.shape == "trapezoidal":
            # sum of two rectangular variates of half-widths (1 + beta)/2 and (1 - beta)/2 (JCGM 101 6.4.3.4)
            pairs = rng.random((n, 2))
            x = pairs[:, 0] * (1.0 + self.param)
            x += pairs[:, 1] * (1.0 - self.param)
            x -= 1.0
        elif self.shape == "curvilinear_trapezoid":
            # half-width w uniform on [a - d, a + d], then uniform on [-w, w] (JCGM 101 6.4.4.4)
            pairs = rng.random((n, 2))
            x = pairs[:, 1] * 2.0 - 1.0
            x *= 1.0 + self.param * (1.0 - 2.0 * pairs[:, 0])
        elif self.shape == "arcsine":
            x = rng.random(n)
            x *= 2.0 * np.pi
            np.sin(x, out=x)
        else:  # pragma: no cover
            raise ValueError(self.shape)
        x *= self.scale
        return x


def from_standard(u: float, dof: float = math.inf) -> Distribution:
    """Gaussian for infinite dof, otherwise scaled and shifted t (JCGM 101 6.4.7, 6.4.9)."""
    return Distribution("normal" if math.isinf(dof) else "t", u, dof)
