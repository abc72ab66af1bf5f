"""Conformity with a limit: decision rules and the probability of conformance (JCGM 106:2012; ILAC G8).

For an upper limit L (a lower limit mirrors every rule), with the expanded uncertainty U as the guard band w:

- ``simple`` (simple acceptance, w = 0): conforms if y <= L, otherwise does not conform.
- ``guarded_acceptance`` (acceptance limit L - U): conforms if y <= L - U; does not conform if y > L; between
  the two the result is inconclusive (under a strictly binary rule it is not accepted).
- ``guarded_rejection`` (rejection limit L + U): does not conform if y > L + U; conforms if y <= L; between the
  two the result is inconclusive (under a strictly binary rule it is not rejected).

A result reported as "< LOQ" only says that the value lies below the limit of quantification. It is decided by
:func:`decide_below_loq`: a decision holds only if it holds for every value below the LOQ. Against an upper limit
the sample conforms only if the LOQ itself conforms under the rule, with the expanded uncertainty at the LOQ;
against a lower limit it never conforms (it does not conform when the LOQ itself does not); otherwise the
decision is ``cannot be decided``, with the reason. JCGM 106 does not treat censored results; this rule is
ucalc's, and a laboratory's own procedure or the applicable regulation may fix another.

The probability of conformance is P(Y <= L) (or P(Y >= L) for a lower limit) for Y distributed as y + u_c t_nu,
nu the effective degrees of freedom (Gaussian when infinite): JCGM 106 7.2 and 7.3.
"""

from __future__ import annotations

from typing import Any, Literal

Rule = Literal["simple", "guarded_acceptance", "guarded_rejection"]
Side = Literal["upper", "lower"]

CONFORMS, FAILS, INCONCLUSIVE = "conforms", "does not conform", "inconclusive"
UNDECIDED = "cannot be decided"

RULE_TEXT = {
    "simple": "simple acceptance (JCGM 106 8.2; ILAC G8): decided on the measured value alone, guard band w = 0",
    "guarded_acceptance": "guarded acceptance with guard band w = U (JCGM 106 8.3.2; ILAC G8)",
    "guarded_rejection": "guarded rejection with guard band w = U (JCGM 106 8.3.3; ILAC G8)",
}


def decide(value: Any, expanded: Any, limit: Any, rule: Rule = "simple", side: Side = "upper") -> Any:
    """The decision for each result (arrays or floats broadcast together), as a flat StringDType array."""
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
    names = np.array(["", CONFORMS, FAILS, INCONCLUSIVE], dtype=np.dtypes.StringDType())
    return names[np.select([~known, accept, reject], [0, 1, 2], 3).ravel()]


def decide_below_loq(loq: Any, expanded_at_loq: Any, limit: Any, rule: Rule = "simple",
                     side: Side = "upper") -> tuple[Any, Any]:
    """Decisions and reasons for results reported as "< LOQ" (arrays or floats broadcast together), as flat
    StringDType arrays.

    The rules of :func:`decide` are monotone in y, so a decision holds for every value below the LOQ exactly when it
    holds at the LOQ itself, decided with the expanded uncertainty at the LOQ: an upper limit gives ``conforms``
    only then, a lower limit gives ``does not conform`` only then; every other case is ``cannot be decided``.
    """
    import numpy as np

    from ..reports.rounding import formatted

    q, U, L = (a.ravel() for a in np.broadcast_arrays(np.asarray(loq, float), np.asarray(expanded_at_loq, float),
                                                       np.asarray(limit, float)))
    at_loq = decide(q, U, L, rule, side)
    text_type = np.dtypes.StringDType()
    fine = np.isfinite(q) & np.isfinite(L)
    conforms = fine & (at_loq == CONFORMS) if side == "upper" else np.zeros(q.shape, bool)
    fails = fine & (at_loq == FAILS) if side == "lower" else np.zeros(q.shape, bool)
    undecided = fine & ~conforms & ~fails
    decisions = np.full(q.shape, "", dtype=text_type)
    decisions[conforms], decisions[fails], decisions[undecided] = CONFORMS, FAILS, UNDECIDED
    q_text, u_text, l_text = formatted(q, "g"), formatted(U, ".3g"), formatted(L, "g")
    known = np.where(np.isfinite(U), "", "; the expanded uncertainty at the LOQ is not known")
    would = np.where(at_loq == "", "unknown", at_loq)
    reasons = np.full(q.shape, "", dtype=text_type)
    head = "result < LOQ " + q_text
    at = np.where(np.isfinite(U), " (U = " + u_text + " at the LOQ)", "")
    reasons[conforms] = (head + ", and the LOQ itself conforms" + at)[conforms]
    reasons[fails] = (head + ", and the LOQ itself does not conform to the lower limit " + l_text)[fails]
    reasons[undecided] = (head + ": at the LOQ the decision would be '" + would + "' (U = " + u_text + " at the LOQ"
                          + known + f"), so a value below the LOQ may or may not conform to the {side} limit "
                          + l_text)[undecided]
    return decisions, reasons


def probability_of_conformance(value: Any, u: Any, nu: Any, limit: Any, side: Side = "upper") -> Any:
    """P(Y <= L) (upper) or P(Y >= L) (lower), Y = y + u t_nu; Gaussian for infinite nu (JCGM 106 7.3)."""
    import numpy as np
    from scipy import special

    y, s, v, L = np.broadcast_arrays(*(np.asarray(a, float) for a in (value, u, nu, limit)))
    with np.errstate(all="ignore"):
        z = (L - y) / s
        p = np.where(np.isinf(v), special.ndtr(z), special.stdtr(np.where(np.isinf(v), 1.0, v), z))
    return p if side == "upper" else 1.0 - p
