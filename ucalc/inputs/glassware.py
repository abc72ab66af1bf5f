"""Volumetric glassware: a volume from an item's nominal value, its class tolerance, temperature and filling.

Built-in tolerances: one-mark pipettes (ISO 648), one-mark volumetric flasks (ISO 1042), burettes (ISO 385) and
piston-operated pipettes (ISO 8655-2, maximum permissible systematic and random errors). A tolerance is taken as
triangular by default, as EURACHEM/CITAC CG4 does for glassware (A1.4); the budget may choose another shape.
Temperature: the volume of water changes by 2.1e-4 /K, over the stated span, rectangular (CG4 A1.4); where the
span is itself known only to within ±``temperature_span_spread`` K, a curvilinear trapezoid (JCGM 101 6.4.4).
"""

from __future__ import annotations

import math
from typing import Any, ClassVar, Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from ..budget.definitions import Component, Quantity
from ..distributions import Distribution
from ..errors import Location
from .base import Action, Derived, InputModel, InputSpec

WATER_EXPANSION = 2.1e-4  # 1/K, volume expansion coefficient of water near 20 °C  # common practice

# Tolerances in mL for class A; class B is twice class A for these items.  # from memory
PIPETTE_ISO648: dict[float, float] = {
    0.5: 0.005, 1: 0.008, 2: 0.010, 3: 0.010, 4: 0.015, 5: 0.015, 10: 0.020, 15: 0.030, 20: 0.030, 25: 0.030,
    50: 0.050, 100: 0.080}
FLASK_ISO1042: dict[float, float] = {
    1: 0.025, 2: 0.025, 5: 0.025, 10: 0.025, 20: 0.040, 25: 0.040, 50: 0.060, 100: 0.10, 200: 0.15, 250: 0.15,
    500: 0.25, 1000: 0.40, 2000: 0.60}
BURETTE_ISO385: dict[float, float] = {1: 0.006, 2: 0.010, 5: 0.010, 10: 0.020, 25: 0.030, 50: 0.050, 100: 0.10}
# Piston pipettes: (systematic %, random CV %) at nominal volume, by nominal volume in µL  # from memory
PISTON_ISO8655 = {1: (5.0, 5.0), 2: (4.0, 2.0), 5: (2.5, 1.5), 10: (1.2, 0.8), 20: (1.0, 0.5), 50: (1.0, 0.4),
                  100: (0.8, 0.3), 200: (0.8, 0.3), 500: (0.8, 0.3), 1000: (0.8, 0.3), 2000: (0.8, 0.3),
                  5000: (0.8, 0.3), 10000: (0.6, 0.3)}

TABLES: dict[str, tuple[str, dict[float, float]]] = {
    "pipette": ("ISO 648", dict(PIPETTE_ISO648)),
    "flask": ("ISO 1042", dict(FLASK_ISO1042)),
    "burette": ("ISO 385", dict(BURETTE_ISO385)),
}


class GlasswareSpec(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, strict=True)

    item: Literal["pipette", "flask", "burette", "piston_pipette"]
    nominal: float = Field(gt=0)
    class_: Literal["A", "B"] | None = Field(default=None, alias="class")
    tolerance: float | None = Field(default=None, gt=0)
    distribution: Literal["triangular", "rectangular", "normal"] = "triangular"
    temperature_span: float | None = Field(default=None, ge=0)
    temperature_span_spread: float | None = Field(default=None, gt=0)
    repeatability: float | None = Field(default=None, gt=0)
    repeatability_dof: float | None = Field(default=None, ge=1, allow_inf_nan=True)
    unit: str | None = Field(default=None, max_length=100)

    @model_validator(mode="after")
    def _tolerance_source(self) -> GlasswareSpec:
        if self.class_ is not None and self.tolerance is not None:
            raise ValueError("give either 'class' or 'tolerance', not both")
        if self.class_ is None and self.tolerance is None:
            raise ValueError("give the glassware 'class' (A or B) or its 'tolerance'")
        if self.temperature_span_spread is not None and not (
                self.temperature_span and self.temperature_span_spread < self.temperature_span):
            raise ValueError("'temperature_span_spread' needs a 'temperature_span' larger than it")
        return self


class Spec(InputSpec):
    KEY: ClassVar[str] = "glassware"
    DEFAULT_UNIT: ClassVar[str | None] = "mL"

    glassware: GlasswareSpec


def _in_ml(nominal: float, unit: str) -> float:
    from .. import units

    return nominal * units.factor(units.parse_unit(unit), units.parse_unit("mL"))


def tolerance_for(item: str, nominal_ml: float, klass: str) -> tuple[float, str]:
    """Class tolerance in mL for a glass item, and the standard it comes from."""
    standard, table = TABLES[item]
    for size, tol in table.items():
        if math.isclose(size, nominal_ml, rel_tol=1e-9):
            return tol * (2.0 if klass == "B" else 1.0), standard
    sizes = ", ".join(f"{s:g}" for s in table)
    raise ValueError(f"no {standard} tolerance for a {nominal_ml:g} mL {item} (tabulated: {sizes} mL); "
                     "give 'tolerance' explicitly")


def components(spec: GlasswareSpec, unit: str) -> tuple[tuple[Component, ...], list[str]]:
    """Uncertainty components of a glassware volume in the budget's unit, and the working."""
    nominal = spec.nominal
    to_unit = nominal / _in_ml(nominal, unit)  # mL -> budget unit
    comps: list[Component] = []
    working: list[str] = []
    if spec.item == "piston_pipette":
        nominal_ul = _in_ml(nominal, unit) * 1000.0
        if spec.tolerance is not None:
            systematic, random_cv, source = spec.tolerance, None, "stated tolerance"
        else:
            key = next((k for k in PISTON_ISO8655 if math.isclose(k, nominal_ul, rel_tol=1e-9)), None)
            if key is None:
                raise ValueError(f"no ISO 8655 limits for a {nominal_ul:g} µL piston pipette; give 'tolerance'")
            sys_pct, rnd_pct = PISTON_ISO8655[key]
            factor = 2.0 if spec.class_ == "B" else 1.0
            systematic = sys_pct * factor / 100 * nominal
            random_cv = rnd_pct * factor / 100 * nominal
            source = f"ISO 8655-2 at {key:g} µL: systematic ±{sys_pct * factor:g} %, random {rnd_pct * factor:g} %"
        comps.append(Component("systematic error", Distribution("rectangular", systematic), "B",
                               f"half-width {systematic:.4g} {unit}, rectangular, divisor sqrt(3) ({source})"))
        if random_cv is not None and spec.repeatability is None:
            comps.append(Component("random error", Distribution("normal", random_cv), "B",
                                   f"standard deviation {random_cv:.4g} {unit} ({source})", per_use=True))
        working.append(f"piston pipette {nominal:g} {unit}: {source}")
    else:
        if spec.tolerance is not None:
            tol, source = spec.tolerance, "stated tolerance"
        else:
            assert spec.class_ is not None
            tol_ml, std = tolerance_for(spec.item, _in_ml(nominal, unit), spec.class_)
            tol, source = tol_ml * to_unit, f"{std} class {spec.class_}"
        dist = Distribution("normal", tol / 2.0) if spec.distribution == "normal" else Distribution(
            spec.distribution, tol)
        how = ("treated as an expanded uncertainty with k = 2" if spec.distribution == "normal"
               else f"{spec.distribution}, divisor {'sqrt(6)' if spec.distribution == 'triangular' else 'sqrt(3)'}")
        comps.append(Component("tolerance", dist, "B", f"±{tol:.4g} {unit} ({source}), {how}"))
        working.append(f"{spec.item} {nominal:g} {unit}, tolerance ±{tol:.4g} {unit} ({source})")
    if spec.temperature_span:
        half = nominal * WATER_EXPANSION * spec.temperature_span
        text = f"{nominal:g} {unit} × 2.1e-4 /K × {spec.temperature_span:g} K = ±{half:.4g} {unit}"
        if spec.temperature_span_spread:
            ratio = spec.temperature_span_spread / spec.temperature_span
            dist = Distribution("curvilinear_trapezoid", half, param=ratio)
            text += (f", span known to ±{spec.temperature_span_spread:g} K: curvilinear trapezoid (JCGM 101 6.4.4), "
                     f"divisor {dist.divisor:.4g}")
        else:
            dist = Distribution("rectangular", half)
            text += ", rectangular, divisor sqrt(3)"
        comps.append(Component("temperature", dist, "B", text))
    if spec.repeatability:
        dof = spec.repeatability_dof or math.inf
        comps.append(Component("filling repeatability", Distribution("normal" if math.isinf(dof) else "t",
                                                                     spec.repeatability, dof),
                               "A" if not math.isinf(dof) else "B",
                               f"standard deviation {spec.repeatability:.4g} {unit}", per_use=True))
    return tuple(comps), working


def derive(name: str, spec: Spec, location: Location) -> Derived:
    unit = spec.unit or "mL"
    comps, working = components(spec.glassware, unit)
    q = Quantity(name=name, value=spec.glassware.nominal, unit=unit, components=comps,
                 description=spec.description or "", working=tuple(working), location=location)
    return Derived((q,))


def _next_size(item: str, nominal_ml: float, factor: float) -> float | None:
    table = TABLES[item][1] if item in TABLES else PISTON_ISO8655
    wanted = nominal_ml * factor if item in TABLES else nominal_ml * factor * 1000
    match = next((size for size in table if math.isclose(size, wanted, rel_tol=1e-9)), None)
    if match is None:
        return None
    return match if item in TABLES else match / 1000


def actions(raw: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    """Class A instead of B, and weighing instead of measuring the volume."""
    block = raw["glassware"]
    out = []
    if block.get("class") == "B":
        out.append((f"class A {block['item']} instead of class B", {**raw, "glassware": {**block, "class": "A"}}))
    unit = raw.get("unit") or block.get("unit") or "mL"
    try:
        grams = _in_ml(float(block["nominal"]), unit)  # water, about 1 g/mL: a balance reading of the same mass
    except (KeyError, TypeError, ValueError):
        return out
    weighing = {"unit": "g", "balance": {"reading": grams, "readability": 0.0001, "linearity": 0.0002,
                                         "by_difference": True}}
    if "description" in raw:
        weighing["description"] = raw["description"]
    out.append(("weigh instead (0.1 mg balance, by difference)", weighing))
    return out


def larger(raw: dict[str, Any], factor: float) -> dict[str, Any] | None:
    """The same item at ``factor`` times the nominal volume, if the tables hold that size (for dilutions)."""
    block = raw.get("glassware")
    if not isinstance(block, dict):
        return None
    unit = raw.get("unit") or block.get("unit") or "mL"
    size = _next_size(block.get("item", ""), _in_ml(float(block["nominal"]), unit), factor)
    if size is None:
        return None
    return {**raw, "glassware": {**block, "nominal": float(block["nominal"]) * factor}}

class Glassware(InputModel):
    """A volume from volumetric glassware: tolerance class, temperature, filling."""

    key = "glassware"
    Spec = Spec

    def derive(self, name: str, spec: Any, location: Location) -> Derived:
        return derive(name, spec, location)

    def actions(self, raw: dict[str, Any]) -> list[Action]:
        return actions(raw)
