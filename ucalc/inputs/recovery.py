"""Recovery from replicate results on a reference material (EURACHEM/CITAC CG4 7.7, 7.13).

R = mean(found) / reference, u(R) = R sqrt((s/sqrt(n)/mean)^2 + (u_ref/reference)^2). The significance test
t = |1 - R| / u(R) is compared with the two-sided 95 % t quantile at the Welch-Satterthwaite dof of u(R).
With ``correct: true`` the input is R itself. With ``correct: false`` the input is 1 (no correction); its
uncertainty is u(R), and where R differs significantly from 1 the uncorrected bias is added in quadrature as
(1 - R)/2, the bias treated as an expanded uncertainty with k = 2 (common practice).
"""

from __future__ import annotations

import math
import statistics
from typing import Any, ClassVar

from pydantic import BaseModel, ConfigDict, Field

from ..budget.definitions import Component, Quantity, welch_satterthwaite
from ..distributions import Distribution
from ..errors import Location
from .base import Action, Derived, InputModel, InputSpec
from .certificate import CertificateSpec, component


class RecoverySpec(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    found: list[float] = Field(min_length=2, max_length=100_000)
    planned_n: int | None = Field(default=None, ge=2)  # planning: n results with the scatter of those found
    reference: CertificateSpec
    correct: bool = True
    probability: float = Field(default=0.95, gt=0, lt=1)


class Spec(InputSpec):
    KEY: ClassVar[str] = "recovery"

    recovery: RecoverySpec


def assess(spec: RecoverySpec) -> dict[str, float | bool]:
    """R, u(R), its dof, the t statistic, the critical t and whether R differs significantly from 1."""
    from ..engines.gum import coverage_factor

    ref = spec.reference
    if ref.value <= 0:
        raise ValueError(f"the reference value must be positive (got {ref.value:g})")
    n = spec.planned_n or len(spec.found)
    mean = statistics.fmean(spec.found)
    if mean <= 0:
        raise ValueError(f"the mean found value must be positive (got {mean:g})")
    s = statistics.stdev(spec.found)
    u_ref = component(ref, "").standard_uncertainty
    rel_found, rel_ref = s / math.sqrt(n) / mean, u_ref / ref.value
    recovery = mean / ref.value
    u = recovery * math.hypot(rel_found, rel_ref)
    if u == 0.0:
        raise ValueError("u(R) is zero: the found values are identical and the reference has no uncertainty")
    dof = welch_satterthwaite([(rel_found, n - 1.0), (rel_ref, ref.dof or math.inf)])
    t = abs(1.0 - recovery) / u
    t_crit = coverage_factor(spec.probability, dof)
    return {"mean": mean, "s": s, "n": n, "R": recovery, "u": u, "dof": dof, "t": t, "t_crit": t_crit,
            "significant": t > t_crit, "u_ref": u_ref}


def derive(name: str, spec: Spec, location: Location) -> Derived:
    rs = spec.recovery
    a = assess(rs)
    recovery, u, dof = float(a["R"]), float(a["u"]), float(a["dof"])
    verdict = "differs significantly from 1" if a["significant"] else "does not differ significantly from 1"
    planned = (f"planned: n = {rs.planned_n} results, assuming the same mean and scatter as the "
               f"{len(rs.found)} found; " if rs.planned_n else "")
    working = [
        f"{planned}found: mean {a['mean']:.6g}, s {a['s']:.4g}, n = {a['n']}; reference {rs.reference.value:g} "
        f"(u {a['u_ref']:.4g})",
        f"R = {recovery:.5g}, u(R) = {u:.3g} (dof {dof:.1f})",
        f"t = |1 - R|/u(R) = {a['t']:.3g} against t_crit = {a['t_crit']:.3g} ({rs.probability:.0%}): R {verdict}",
    ]
    n = int(a["n"])
    u_found = recovery * float(a["s"]) / math.sqrt(n) / float(a["mean"])
    u_ref = recovery * float(a["u_ref"]) / rs.reference.value
    ref_dof = rs.reference.dof or math.inf
    comps = [
        Component("scatter of found values", Distribution("t", u_found, n - 1.0), "A",
                  f"R·(s/sqrt(n))/mean = {u_found:.3g}, dof {n - 1}"),
        Component("reference value", Distribution("normal" if math.isinf(ref_dof) else "t", u_ref, ref_dof), "B",
                  f"R·u(ref)/ref = {u_ref:.3g}"),
    ]
    if rs.correct:
        value = recovery
        working.append("the result is corrected for recovery (divide by R in the model)")
    else:
        value = 1.0
        if a["significant"]:
            bias = abs(1.0 - recovery)
            comps.append(Component("uncorrected bias", Distribution("normal", bias / 2.0), "B",
                                   f"|1 - R| = {bias:.3g} as an expanded uncertainty with k = 2"))
            working.append("no correction although R differs from 1: the bias enters as (1 - R)/2")
        else:
            working.append("no correction; R = 1 with u(R)")
    q = Quantity(name=name, value=value, unit="", components=tuple(comps), description=spec.description or "",
                 working=tuple(working), location=location)
    return Derived((q,))


def actions(raw: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    """Twice as many results on the reference material (same mean and scatter, dof of the new design); a
    better-known reference."""
    from .certificate import actions as certificate_actions

    block = raw["recovery"]
    n = block.get("planned_n") or len(block["found"])
    # the same mean and scatter over twice as many results, with their dof (2n - 1); the data are not copied
    out = [(f"{2 * n} results on the reference instead of {n}", {**raw, "recovery": {**block, "planned_n": 2 * n}})]
    for label, better in certificate_actions({"certificate": block["reference"]}):
        out.append((f"reference material: {label}", {**raw, "recovery": {**block, "reference": better["certificate"]}}))
    return out

class Recovery(InputModel):
    """A recovery factor from spiked or reference samples."""

    key = "recovery"
    Spec = Spec

    def derive(self, name: str, spec: Any, location: Location) -> Derived:
        return derive(name, spec, location)

    def actions(self, raw: dict[str, Any]) -> list[Action]:
        return actions(raw)
