"""Probability distributions of uncertainty components, in the manner of scipy's frozen distributions.

Each object knows its standard uncertainty (the GUM path, JCGM 100 4.3) and draws zero-mean deviations for
Monte Carlo (JCGM 101 6.4) from an explicit ``numpy.random.Generator``. Divisors: rectangular sqrt(3)
(JCGM 100 4.3.7), triangular sqrt(6) (4.3.9), arcsine sqrt(2) (JCGM 101 6.4.6); a Type A component with finite
degrees of freedom is a scaled and shifted t (JCGM 101 6.4.9.7).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Literal

if TYPE_CHECKING:
    import numpy as np

Shape = Literal["normal", "rectangular", "triangular", "arcsine", "t"]

DIVISORS: dict[str, float] = {
    "rectangular": math.sqrt(3.0),
    "triangular": math.sqrt(6.0),
    "arcsine": math.sqrt(2.0),
}


@dataclass(frozen=True)
class Distribution:
    """A zero-centred distribution of deviations.

    ``scale`` is the standard deviation for ``normal``, the half-width for ``rectangular``, ``triangular`` and
    ``arcsine``, and the scale s/sqrt(n) for ``t`` (whose own standard deviation is larger, JCGM 101 6.4.9.4).
    """

    shape: Shape
    scale: float
    dof: float = math.inf

    @property
    def standard_uncertainty(self) -> float:
        """The standard uncertainty the GUM assigns (for ``t`` the scale itself, JCGM 100 4.2.3)."""
        if self.shape in DIVISORS:
            return self.scale / DIVISORS[self.shape]
        return self.scale

    @property
    def variance_defined(self) -> bool:
        """False for a t with 2 or fewer degrees of freedom, whose variance does not exist (JCGM 101 6.4.9)."""
        return not (self.shape == "t" and self.dof <= 2)

    @property
    def divisor(self) -> float:
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
