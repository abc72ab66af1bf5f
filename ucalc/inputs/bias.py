"""Method and laboratory bias u(bias) from reference materials, proficiency-testing rounds or spike recoveries.

Nordtest TR 537 ed. 3.1 section 5 and ISO 11352:2012 clause 9:

- one reference material (TR 537 5.1; ISO 11352 9.2): bias b = mean - C_ref from n results with standard
  deviation s; u(bias) = sqrt(b^2 + (s/sqrt(n))^2 + u(C_ref)^2);
- several reference materials or proficiency-testing rounds (TR 537 5.1, 5.2; ISO 11352 9.3): RMS_bias =
  sqrt(sum b_i^2 / n) and u(C_ref) the mean of the assigned values' standard uncertainties, each given directly
  or, for a round, as s_R / sqrt(number of laboratories); u(bias) = sqrt(RMS_bias^2 + u(C_ref)^2);
- spike recoveries (TR 537 5.3): b_i = R_i - 1, RMS of those, u(C_ref) = sqrt(u(concentration)^2 + u(volume)^2)
  of the added spike, relative.

Significance (flagged in the working): a single material's bias is significant when |b| > 2 sqrt(s^2/n +
u(C_ref)^2) (common practice, k = 2 on the difference); for several values the mean bias is tested by t =
|mean b| / (s_b/sqrt(n)) against the two-sided 95 % t quantile with n - 1 dof. With ``correct: true`` the input is
the correction (-b, or the factor 1/(1 + b) when relative) and its uncertainty leaves out the bias itself; the
default includes the bias in u(bias) and applies no correction, as TR 537 does.
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

from pydantic import BaseModel, ConfigDict, Field, model_validator

from ..budget.definitions import Component, Quantity
from ..distributions import Distribution
from ..errors import Location
from .base import Action, Derived, InputModel, InputSpec
from .certificate import CertificateSpec, component


@dataclass(frozen=True)
class BiasEstimate:
    """Bias (b or mean b), the parts of u(bias), whether b is significant, and the working."""

    bias: float
    u_bias: float  # with the bias included (TR 537)
    u_correction: float  # uncertainty of the correction when the bias is corrected
    parts: tuple[tuple[str, float, float], ...]  # (name, u, dof) of the included form
    correction_parts: tuple[tuple[str, float, float], ...]
    significant: bool
    relative: bool
    working: tuple[str, ...]


def _require(ok: bool, message: str) -> None:
    if not ok:
        raise ValueError(message)


def single_material(results: Sequence[float] | None, mean: float | None, s: float | None, n: int | None,
                    reference: float, u_reference: float, relative: bool = False) -> BiasEstimate:
    """One reference material: u(bias) = sqrt(b^2 + s^2/n + u(C_ref)^2) (TR 537 5.1; ISO 11352 9.2)."""
    if results is not None:
        n = len(results)
        _require(n >= 2, f"give at least 2 results on the reference material (got {n})")
        mean, s = statistics.fmean(results), statistics.stdev(results)
    assert mean is not None and s is not None and n is not None
    scale = 1.0
    if relative:
        _require(reference > 0, f"a relative bias needs a positive reference value (got {reference:g})")
        scale = reference
    b, s_mean, u_ref = (mean - reference) / scale, s / math.sqrt(n) / scale, u_reference / scale
    u_diff = math.hypot(s_mean, u_ref)
    significant = abs(b) > 2.0 * u_diff
    u_bias = math.sqrt(b * b + s_mean * s_mean + u_ref * u_ref)
    rel = " (relative)" if relative else ""
    working = (f"reference material: C_ref = {reference:.6g}, u(C_ref) = {u_reference:.4g}; lab mean {mean:.6g}, "
               f"s = {s:.4g}, n = {n}",
               f"b = {b:.4g}{rel}; s/sqrt(n) = {s_mean:.4g}; u(C_ref) = {u_ref:.4g}",
               f"u(bias) = sqrt(b^2 + s^2/n + u(C_ref)^2) = {u_bias:.4g} (TR 537 5.1; ISO 11352 9.2)",
               f"|b| = {abs(b):.4g} {'>' if significant else '<='} 2 sqrt(s^2/n + u(C_ref)^2) = {2 * u_diff:.4g}: "
               + ("the bias is significant" if significant else "the bias is not significant"))
    scatter = ("scatter on the reference material", s_mean, n - 1.0)
    cref = ("reference value u(C_ref)", u_ref, math.inf)
    return BiasEstimate(b, u_bias, u_diff, (("bias on the reference material", abs(b), math.inf), scatter, cref),
                        (scatter, cref), significant, relative, working)


def _several(biases: Sequence[float], u_refs: Sequence[float], label: str, source: str,
             relative: bool) -> BiasEstimate:
    from ..engines.gum import coverage_factor

    n = len(biases)
    _require(n >= 2, f"give at least 2 {label} (got {n})")
    rms = math.sqrt(sum(b * b for b in biases) / n)
    u_ref = statistics.fmean(u_refs)
    mean_b, s_b = statistics.fmean(biases), statistics.stdev(biases)
    u_mean = s_b / math.sqrt(n)
    t = abs(mean_b) / u_mean if u_mean > 0 else math.inf
    t_crit = coverage_factor(0.95, n - 1)  # two-sided 95 % t quantile, t(0.975, n - 1)
    significant = t > t_crit
    u_bias = math.hypot(rms, u_ref)
    rel = " (relative)" if relative else ""
    working = (f"{label}: n = {n}, biases{rel} " + ", ".join(f"{b:.3g}" for b in biases),
               f"RMS_bias = sqrt(sum b^2 / n) = {rms:.4g}; u(C_ref) = mean of the reference uncertainties = "
               f"{u_ref:.4g}",
               f"u(bias) = sqrt(RMS_bias^2 + u(C_ref)^2) = {u_bias:.4g} ({source})",
               f"mean bias {mean_b:.4g}, t = {t:.3g} {'>' if significant else '<='} t(0.975, {n - 1}) = "
               f"{t_crit:.3g}: " + ("the bias is significant" if significant else "the bias is not significant"))
    cref = ("reference values u(C_ref)", u_ref, math.inf)
    return BiasEstimate(mean_b, u_bias, math.hypot(u_mean, u_ref), (("RMS of the biases", rms, float(n)), cref),
                        (("scatter of the biases", u_mean, n - 1.0), cref), significant, relative, working)


def several(assigned: Sequence[float], results: Sequence[float], u_assigned: Sequence[float],
            relative: bool = False) -> BiasEstimate:
    """Several reference materials or PT rounds: sqrt(RMS_bias^2 + u(C_ref)^2) (TR 537 5.1-5.2; ISO 11352 9.3)."""
    if relative:
        _require(all(a > 0 for a in assigned), "a relative bias needs every assigned value to be positive")
        biases = [(x - a) / a for a, x in zip(assigned, results, strict=True)]
        u_refs = [u / a for a, u in zip(assigned, u_assigned, strict=True)]
    else:
        biases = [x - a for a, x in zip(assigned, results, strict=True)]
        u_refs = list(u_assigned)
    return _several(biases, u_refs, "reference values", "TR 537 5.1-5.2; ISO 11352 9.3", relative)


def spikes(recoveries: Sequence[float], u_concentration: float, u_volume: float) -> BiasEstimate:
    """Spike recoveries: b_i = R_i - 1, u(C_ref) = sqrt(u(conc)^2 + u(vol)^2), relative (TR 537 5.3)."""
    _require(all(r > 0 for r in recoveries), "recoveries must be positive fractions (1 = 100 %)")
    u_ref = math.hypot(u_concentration, u_volume)
    return _several([r - 1.0 for r in recoveries], [u_ref] * len(recoveries), "spike recoveries", "TR 537 5.3",
                    True)


# ---- the input model --------------------------------------------------------------------------------------


class _Block(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)


class MaterialSpec(_Block):
    certified: CertificateSpec
    results: list[float] | None = Field(default=None, max_length=100_000)
    mean: float | None = None
    s: float | None = Field(default=None, ge=0)
    n: int | None = Field(default=None, ge=1)

    @model_validator(mode="after")
    def _one(self) -> MaterialSpec:
        summary = (self.mean, self.s, self.n)
        _require((self.results is None) != all(x is None for x in summary) and (
            self.results is not None or all(x is not None for x in summary)),
            "give the lab's 'results' on the material, or their 'mean', 's' and 'n'")
        return self


class RoundSpec(_Block):
    assigned: float
    result: float
    u: float | None = Field(default=None, gt=0)
    expanded: float | None = Field(default=None, gt=0)
    k: float | None = Field(default=None, gt=0)
    s_R: float | None = Field(default=None, gt=0)
    labs: int | None = Field(default=None, ge=2)
    name: str | None = Field(default=None, max_length=200)

    @model_validator(mode="after")
    def _one(self) -> RoundSpec:
        forms = [self.u is not None, self.expanded is not None, self.s_R is not None]
        _require(sum(forms) == 1, "give the assigned value's uncertainty as 'u', as 'expanded' with 'k', or as "
                 "'s_R' with 'labs' (u = s_R/sqrt(labs))")
        _require((self.expanded is None) == (self.k is None), "'expanded' and 'k' go together")
        _require((self.s_R is None) == (self.labs is None), "'s_R' and 'labs' go together")
        return self

    @property
    def u_assigned(self) -> float:
        if self.u is not None:
            return self.u
        if self.expanded is not None and self.k is not None:
            return self.expanded / self.k
        assert self.s_R is not None and self.labs is not None
        return self.s_R / math.sqrt(self.labs)


class SpikesSpec(_Block):
    recoveries: list[float] = Field(min_length=2, max_length=100_000)
    u_concentration: float = Field(ge=0)
    u_volume: float = Field(default=0.0, ge=0)


class BiasSpec(_Block):
    material: MaterialSpec | None = None
    rounds: list[RoundSpec] | None = Field(default=None, min_length=2, max_length=10_000)
    spikes: SpikesSpec | None = None
    relative: bool = False
    correct: bool = False
    unit: str | None = Field(default=None, max_length=100)

    @model_validator(mode="after")
    def _one(self) -> BiasSpec:
        given = [k for k in ("material", "rounds", "spikes") if getattr(self, k) is not None]
        _require(len(given) == 1, "give exactly one of 'material' (one reference material), 'rounds' (several "
                 "reference materials or proficiency-testing rounds) or 'spikes'"
                 + (f"; got {', '.join(given)}" if given else ""))
        _require(self.spikes is None or self.relative, "spike recoveries give a relative bias: set 'relative: true'")
        return self


class Spec(InputSpec):
    KEY: ClassVar[str] = "bias"

    bias: BiasSpec


def estimate(spec: BiasSpec) -> BiasEstimate:
    """The bias estimate of whichever source the block gives."""
    if spec.material is not None:
        m = spec.material
        u_ref = component(m.certified, "").standard_uncertainty
        return single_material(m.results, m.mean, m.s, m.n, m.certified.value, u_ref, spec.relative)
    if spec.rounds is not None:
        return several([r.assigned for r in spec.rounds], [r.result for r in spec.rounds],
                       [r.u_assigned for r in spec.rounds], spec.relative)
    assert spec.spikes is not None
    return spikes(spec.spikes.recoveries, spec.spikes.u_concentration, spec.spikes.u_volume)


def derive(name: str, spec: Spec, location: Location) -> Derived:
    bs = spec.bias
    est = estimate(bs)
    working = list(est.working)
    warnings: tuple[str, ...] = ()
    if bs.correct:
        value = 1.0 / (1.0 + est.bias) if bs.relative else -est.bias
        parts = est.correction_parts
        working.append(f"corrected: the input is the correction {value:.6g}"
                       + (" = 1/(1 + b), a factor on the result" if bs.relative else " = -b, added to the result"))
        if not est.significant:
            warnings = ("the bias is not significant, yet it is corrected (correct: true)",)
    else:
        value = 1.0 if bs.relative else 0.0
        parts = est.parts
        working.append("no correction: the bias is included in u(bias)")
        if est.significant:
            warnings = (f"the bias ({est.bias:.3g}{' relative' if bs.relative else ''}) is significant and is "
                        "included in u(bias) without correction; consider 'correct: true' or finding its cause",)
    scale = abs(value) if bs.relative else 1.0
    # Only the scatter of a mean is a scaled t in Monte Carlo (JCGM 101 6.4.9); an RMS of biases is Gaussian
    # with its dof kept for Welch-Satterthwaite.
    comps = tuple(
        Component(label, Distribution("t" if label.startswith("scatter") else "normal", u * scale, dof),
                  "B" if math.isinf(dof) else "A", f"{u:.4g}{' (relative)' if bs.relative else ''}",
                  relative=bs.relative)
        for label, u, dof in parts if u > 0)
    q = Quantity(name=name, value=value, unit="" if bs.relative else (spec.unit or ""), components=comps,
                 description=spec.description or "method and laboratory bias",
                 working=tuple(working), location=location)
    from ..qc import plain

    return Derived((q,), warnings=warnings, details={"correct": bs.correct, "value": value, **plain(est)})


def actions(raw: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    """Correcting the results for a significant bias (its square then leaves u(bias)); a bias that is not
    significant is better left uncorrected (TR 537 5), so no action is offered for it."""
    block = raw["bias"]
    if block.get("correct") is True or not estimate(BiasSpec.model_validate(block)).significant:
        return []
    return [("correct the results for the bias (correct: true)", {**raw, "bias": {**block, "correct": True}})]

class Bias(InputModel):
    """Method and laboratory bias from reference materials, proficiency rounds or spikes."""

    key = "bias"
    Spec = Spec

    def derive(self, name: str, spec: Any, location: Location) -> Derived:
        return derive(name, spec, location)

    def actions(self, raw: dict[str, Any]) -> list[Action]:
        return actions(raw)
