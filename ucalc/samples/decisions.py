"""Conformity with a limit: decision rules and the probability of conformance (JCGM 106:2012; ILAC G8).

For an upper limit L (a lower limit mirrors every rule), with the expanded uncertainty U as the guard band w:

- ``simple`` (simple acceptance, w = 0): conforms if y <= L, otherwise does not conform.
- ``guarded_acceptance`` (acceptance limit L - U): conforms if y <= L - U; does not conform if y > L; between
  the two the result is inconclusive (under a strictly binary rule it is not accepted).
- ``guarded_rejection`` (rejection limit L + U): does not conform if y > L + U; conforms if y <= L; between the
  two the result is inconclusive (under a strictly binary rule it is not rejected).

The probability of conformance is P(Y <= L) (or P(Y >= L) for a lower limit) for Y distributed as y + u_c t_nu,
nu the effective degrees of freedom (Gaussian when infinite): JCGM 106 7.2 and 7.3.
"""

from __future__ import annotations

from typing import Any, Literal

Rule = Literal["simple", "guarded_acceptance", "guarded_rejection"]
Side = Literal["upper", "lower"]

CONFORMS, FAILS, INCONCLUSIVE = "conforms", "does not conform", "inconclusive"

RULE_TEXT = {
    "simple": "simple acceptance (JCGM 106 8.2; ILAC G8): decided on the measured value alone, guard band w = 0",
    "guarded_acceptance": "guarded acceptance with guard band w = U (JCGM 106 8.3.2; ILAC G8)",
    "guarded_rejection": "guarded rejection with guard band w = U (JCGM 106 8.3.3; ILAC G8)",
}


def decide(value: Any, expanded: Any, limit: Any, rule: Rule = "simple", side: Side = "upper") -> list[str]:
    """The decision for each result (arrays or floats broadcast together)."""
    import numpy as np

    y, U, L = np.broadcast_arrays(np.asarray(value, float), np.asarray(expanded, float), np.asarray(limit, float))
    if side == "lower":  # mirror: a lower limit on y is an upper limit on -y
        y, L = -y, -L
    if rule == "simple":
        accept, reject = y <= L, y > L
    elif rule == "guarded_acceptance":
        accept, reject = y <= L - U, y > L
    else:
        accept, reject = y <= L, y > L + U
    known = np.isfinite(y) & np.isfinite(L) & (np.isfinite(U) | (rule == "simple"))
    decision = np.select([~known, accept, reject], ["", CONFORMS, FAILS], INCONCLUSIVE)
    return [str(d) for d in decision.ravel()]


def probability_of_conformance(value: Any, u: Any, nu: Any, limit: Any, side: Side = "upper") -> Any:
    """P(Y <= L) (upper) or P(Y >= L) (lower), Y = y + u t_nu; Gaussian for infinite nu (JCGM 106 7.3)."""
    import numpy as np
    from scipy import stats

    y, s, v, L = np.broadcast_arrays(*(np.asarray(a, float) for a in (value, u, nu, limit)))
    with np.errstate(all="ignore"):
        z = (L - y) / s
        p = np.where(np.isinf(v), stats.norm.cdf(z), stats.t.cdf(z, np.where(np.isinf(v), 1.0, v)))
    return p if side == "upper" else 1.0 - p
