"""Proficiency-testing scores with the laboratory's own uncertainty (ISO 13528:2015 clause 9).

For each round, with x the lab's result, x_pt the assigned value, u(x_pt) its standard uncertainty, U(x) the
lab's expanded uncertainty with coverage factor k (u(x) = U(x)/k) and, where the scheme gives one, sigma_pt:

- z = (x - x_pt) / sigma_pt                                  (ISO 13528 9.4)
- zeta = (x - x_pt) / sqrt(u(x)^2 + u(x_pt)^2)                (ISO 13528 9.6)
- E_n = (x - x_pt) / sqrt(U(x)^2 + U(x_pt)^2), U(x_pt) = 2 u(x_pt) unless given (ISO 13528 9.7)

|z|, |zeta| <= 2 satisfactory, 2 < |.| < 3 questionable, >= 3 unsatisfactory; |E_n| <= 1 satisfactory
(ISO 13528 9.4.2, 9.6, 9.7). If the stated u(x) is realistic, zeta is close to a standard normal variable, so
over n rounds two checks tell whether U is too small: the number of |zeta| > 2 against a binomial with
p = P(|N(0,1)| > 2) = 0.0455, and sum zeta^2 against the chi-square quantile with n dof (both at 5 %; common
practice). sqrt(mean zeta^2) estimates by how much u(x) would have to grow.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

P_OUTSIDE_2 = 0.04550026389635842  # 2 (1 - Phi(2)), checked against scipy in the tests


@dataclass(frozen=True)
class Round:
    """One round's data and scores (``z`` is None without sigma_pt)."""

    name: str
    assigned: float
    u_assigned: float
    result: float
    expanded: float
    k: float
    sigma_pt: float | None
    z: float | None
    zeta: float
    en: float
    verdict_zeta: str
    verdict_en: str


@dataclass(frozen=True)
class Proficiency:
    """Scores of every round and the check of the stated uncertainty."""

    rounds: tuple[Round, ...]
    outside: int  # rounds with |zeta| > 2
    p_outside: float  # binomial P(X >= outside) if u(x) were right
    chi2: float  # sum of zeta^2
    chi2_limit: float  # chi-square 95 % quantile, n dof
    rms_zeta: float
    u_too_small: bool
    message: str


def verdict(score: float, limit: float = 2.0) -> str:
    """ISO 13528 9.4.2 (z, zeta with limit 2) and 9.7 (E_n with limit 1)."""
    a = abs(score)
    if limit == 1.0:
        return "satisfactory" if a <= 1.0 else "unsatisfactory"
    return "satisfactory" if a <= 2.0 else ("questionable" if a < 3.0 else "unsatisfactory")


def score_round(name: str, assigned: float, u_assigned: float, result: float, expanded: float, k: float = 2.0,
                sigma_pt: float | None = None, expanded_assigned: float | None = None) -> Round:
    """z, zeta and E_n of one round (ISO 13528 9.4, 9.6, 9.7)."""
    if u_assigned < 0 or expanded <= 0 or k <= 0:
        raise ValueError(f"round '{name}': U and k must be positive and u(x_pt) not negative")
    d = result - assigned
    z = d / sigma_pt if sigma_pt else None
    zeta = d / math.hypot(expanded / k, u_assigned)
    U_pt = expanded_assigned if expanded_assigned is not None else 2.0 * u_assigned
    en = d / math.hypot(expanded, U_pt)
    return Round(name, assigned, u_assigned, result, expanded, k, sigma_pt, z, zeta, en, verdict(zeta),
                 verdict(en, 1.0))


def assess(rounds: Sequence[Round], level: float = 0.05) -> Proficiency:
    """The rounds with the binomial and chi-square checks of the stated uncertainty."""
    from scipy import stats

    n = len(rounds)
    if n == 0:
        raise ValueError("no rounds to score")
    outside = sum(1 for r in rounds if abs(r.zeta) > 2.0)
    p_outside = float(stats.binom.sf(outside - 1, n, P_OUTSIDE_2)) if outside else 1.0
    chi2 = sum(r.zeta**2 for r in rounds)
    limit = float(stats.chi2.ppf(1 - level, n))
    rms = math.sqrt(chi2 / n)
    too_small = (outside >= 2 and p_outside < level) or chi2 > limit
    if too_small:
        message = (f"the stated U looks too small: {outside} of {n} rounds have |zeta| > 2 (chance {p_outside:.2g} "
                   f"if U were right), sum zeta^2 = {chi2:.3g} against {limit:.3g}; u would have to be about "
                   f"{rms:.2g} times larger")
    else:
        message = (f"the stated U is consistent with the PT results: {outside} of {n} rounds with |zeta| > 2, "
                   f"sum zeta^2 = {chi2:.3g} within {limit:.3g}")
    return Proficiency(tuple(rounds), outside, p_outside, chi2, limit, rms, too_small, message)


OPTIONAL = ("k", "sigma_pt", "U_assigned")


def from_table(path: str, k: float = 2.0) -> Proficiency:
    """Score a table of rounds (CSV/XLSX) with columns round, assigned, u_assigned, result, U and optionally k,
    sigma_pt, U_assigned. Errors name the file, line and column."""
    from ..errors import BudgetError, Location
    from .data import read_columns

    cols = read_columns(path, ["assigned", "u_assigned", "result", "U"], ["round"], required=["assigned", "result"],
                        optional=list(OPTIONAL))
    rounds = []
    def cell(c: str, i: int) -> float | None:
        v = cols.numbers[c][i] if c in cols.numbers else math.nan
        return None if math.isnan(v) else v

    for i, line in enumerate(cols.lines):
        def get(c: str, i: int = i) -> float | None:
            return cell(c, i)

        u_pt, U = get("u_assigned"), get("U")
        if u_pt is None or U is None:
            missing = "u_assigned" if u_pt is None else "U"
            raise BudgetError(f"column '{missing}': a value is needed", location=Location(str(path), line, 1))
        try:
            rounds.append(score_round(cols.labels["round"][i] or f"line {line}", cols.numbers["assigned"][i], u_pt,
                                      cols.numbers["result"][i], U, get("k") or k, get("sigma_pt"),
                                      get("U_assigned")))
        except ValueError as exc:
            raise BudgetError(str(exc), location=Location(str(path), line, 1)) from None
    return assess(rounds)
