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


def decide_below_loq(loq: Any, expanded_at_loq: Any, limit: Any, rule: Rule = "simple",
                     side: Side = "upper") -> tuple[list[str], list[str]]:
    """Decisions and reasons for results reported as "< LOQ" (arrays or floats broadcast together).

    The rules of :func:`decide` are monotone in y, so a decision holds for every value below the LOQ exactly when it
    holds at the LOQ itself, decided with the expanded uncertainty at the LOQ: an upper limit gives ``conforms``
    only then, a lower limit gives ``does not conform`` only then; every other case is ``cannot be decided``.
    """
    import numpy as np

    q, U, L = np.broadcast_arrays(np.asarray(loq, float), np.asarray(expanded_at_loq, float),
                                  np.asarray(limit, float))
    at_loq = decide(q, U, L, rule, side)
    decisions, reasons = [], []
    for qi, Ui, Li, d in zip(q.ravel(), U.ravel(), L.ravel(), at_loq, strict=True):
        if not (np.isfinite(qi) and np.isfinite(Li)):
            decisions.append("")
            reasons.append("")
            continue
        known = "" if np.isfinite(Ui) else "; the expanded uncertainty at the LOQ is not known"
        if side == "upper" and d == CONFORMS:
            decisions.append(CONFORMS)
            at = f" (U = {Ui:.3g} at the LOQ)" if np.isfinite(Ui) else ""
            reasons.append(f"result < LOQ {qi:g}, and the LOQ itself conforms{at}")
        elif side == "lower" and d == FAILS:
            decisions.append(FAILS)
            reasons.append(f"result < LOQ {qi:g}, and the LOQ itself does not conform to the lower limit {Li:g}")
        else:
            decisions.append(UNDECIDED)
            reasons.append(f"result < LOQ {qi:g}: at the LOQ the decision would be '{d or 'unknown'}' (U = {Ui:.3g} "
                           f"at the LOQ{known}), so a value below the LOQ may or may not conform to the {side} "
                           f"limit {Li:g}")
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
