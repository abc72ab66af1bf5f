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
    def divisor(self) -> float:
        return DIVISORS.get(self.shape, 1.0)

    def sample(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """Draw ``n`` deviations with ``rng``."""
        import numpy as np

        if self.shape == "normal":
            return self.scale * rng.standard_normal(n)
        if self.shape == "t":
            if math.isinf(self.dof):
                return self.scale * rng.standard_normal(n)
            return self.scale * rng.standard_t(self.dof, n)
        if self.shape == "rectangular":
            return self.scale * (2.0 * rng.random(n) - 1.0)
        if self.shape == "triangular":
            # difference of two rectangular variates (JCGM 101 6.4.5); drawn in pairs so that a stream split
            # into blocks gives the same values as one long draw
            pairs = rng.random((n, 2))
            return self.scale * (pairs[:, 0] - pairs[:, 1])
        if self.shape == "arcsine":
            return self.scale * np.sin(2.0 * np.pi * rng.random(n))
        raise ValueError(self.shape)  # pragma: no cover


def from_standard(u: float, dof: float = math.inf) -> Distribution:
    """Gaussian for infinite dof, otherwise scaled and shifted t (JCGM 101 6.4.7, 6.4.9)."""
    return Distribution("normal" if math.isinf(dof) else "t", u, dof)
