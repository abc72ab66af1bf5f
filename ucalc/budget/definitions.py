"""Typed, validated budget definitions: what the loader builds and the engines accept.

A :class:`Budget` holds quantities (each with its uncertainty components), a compiled :class:`Model`, the
correlation coefficients and the coverage request. Nothing here reads files or prints.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, Literal

from .. import expr
from ..distributions import Distribution
from ..errors import Location

if TYPE_CHECKING:
    from ..engines.gum import GumResult
    from ..engines.montecarlo import MonteCarloResult
    from ..qc.limits import DetectionLimits


@dataclass(frozen=True)
class Component:
    """One source of uncertainty of a quantity: its distribution and how its standard uncertainty was found."""

    name: str
    distribution: Distribution
    kind: Literal["A", "B"] = "B"
    origin: str = ""
    relative: bool = False  # the scale is proportional to the quantity's value (batch rows rescale it)
    per_use: bool = False  # drawn anew at each use of a shared item (a filling, a reading): not shared

    @property
    def standard_uncertainty(self) -> float:
        return self.distribution.standard_uncertainty

    @property
    def dof(self) -> float:
        return self.distribution.dof


def welch_satterthwaite(parts: list[tuple[float, float]]) -> float:
    """nu = (sum u_i^2)^2 / sum(u_i^4 / nu_i) over (u_i, nu_i) pairs (JCGM 100 G.4.1, eq. G.2b), by the GUM
    kernel's :func:`ucalc.engines.gum.effective_dof`."""
    from ..engines.gum import combine

    live = [(u, nu) for u, nu in parts if u > 0]
    if not live:
        return math.inf
    _, nu, _, _, _ = combine([[u] for u, _ in live], [[nu] for _, nu in live], [])
    return float(nu[0])


@dataclass(frozen=True)
class Quantity:
    """An input quantity: estimate, unit and uncertainty components (none for an exact value)."""

    name: str
    value: float
    unit: str = ""
    components: tuple[Component, ...] = ()
    description: str = ""
    model: str = ""  # the key of the input model that made it (recorded by the loader)
    working: tuple[str, ...] = ()
    location: Location | None = None
    dof_override: float | None = None

    @property
    def standard_uncertainty(self) -> float:
        """Root sum of squares of the components' standard uncertainties."""
        return math.hypot(*(c.standard_uncertainty for c in self.components))  # no overflow or underflow

    @property
    def dof(self) -> float:
        """Degrees of freedom by Welch-Satterthwaite over the components (JCGM 100 G.4.1)."""
        if self.dof_override is not None:
            return self.dof_override
        return welch_satterthwaite([(c.standard_uncertainty, c.dof) for c in self.components])

    @property
    def kind(self) -> str:
        """'A', 'B', 'A+B' or 'exact', for tables."""
        kinds = sorted({c.kind for c in self.components})
        return "+".join(kinds) if kinds else "exact"

    @property
    def shape(self) -> str:
        """Distribution shape of the single component, 'combined' for several, 'exact' for none."""
        if not self.components:
            return "exact"
        if len(self.components) == 1:
            return self.components[0].distribution.shape
        return "combined"


@dataclass(frozen=True)
class ModelLine:
    """One line ``name = expression`` after unit normalisation; ``unit`` is a pint unit."""

    name: str
    text: str
    tree: expr.Node
    unit: Any
    location: Location


@dataclass(frozen=True)
class Model:
    """The measurement model: lines evaluated in order, the last defining the measurand.

    ``scale`` converts the last line's unit to the measurand's unit; ``inlined`` is the measurand as one tree
    of input names, used for exact derivatives.
    """

    lines: tuple[ModelLine, ...]
    inputs: tuple[str, ...]
    scale: float
    inlined: expr.Node
    _cache: dict[Any, Any] = field(default_factory=dict, compare=False, repr=False)

    @property
    def output(self) -> str:
        return self.lines[-1].name

    def function(self, backend: str = "float") -> Callable[[Mapping[str, Any]], Any]:
        """The model compiled once per backend ('float', 'numpy' or 'uncertainties'): env -> measurand value."""
        key = ("fn", backend)
        if key not in self._cache:
            fns = _backend(backend)
            steps = [(line.name, expr.compile_tree(line.tree, fns)) for line in self.lines]
            scale = self.scale

            def run(env: Mapping[str, Any]) -> Any:
                local = dict(env)
                value: Any = None
                for name, step in steps:
                    value = step(local)
                    local[name] = value
                return value * scale if scale != 1.0 else value

            self._cache[key] = run
        fn: Callable[[Mapping[str, Any]], Any] = self._cache[key]
        return fn

    def derivative(self, *names: str) -> expr.Node:
        """Tree of the (higher) partial derivative of the measurand w.r.t. ``names``, in measurand units."""
        key = ("d", names)
        if key not in self._cache:
            tree = self.inlined if not names else expr.diff(self.derivative(*names[:-1]), names[-1])
            self._cache[key] = tree
        cached: expr.Node = self._cache[key]
        return cached

    def evaluate_tree(self, tree: expr.Node, env: Mapping[str, Any], backend: str = "float") -> Any:
        """Evaluate a derivative tree (cached compilation) and apply the measurand's unit scale."""
        key = ("tree", id(tree), backend)
        if key not in self._cache:
            self._cache[key] = expr.compile_tree(tree, _backend(backend))
        return self._cache[key](env) * self.scale


def _backend(name: str) -> Mapping[str, Callable[..., Any]]:
    if name == "float":
        return expr.FLOAT_BACKEND
    if name == "numpy":
        return expr.numpy_backend()
    if name == "uncertainties":
        return expr.uncertainties_backend()
    raise ValueError(name)


@dataclass(frozen=True)
class Measurand:
    symbol: str
    unit: str = ""
    description: str = ""


@dataclass(frozen=True)
class Coverage:
    """Either a coverage probability (k from the t-distribution) or a fixed coverage factor."""

    probability: float | None = 0.95
    k: float | None = None
    dof_rounding: Literal["down", "none"] = "down"


@dataclass(frozen=True)
class Reporting:
    """The reporting method a budget fixes, and why (stated beside the result)."""

    method: Literal["gum", "monte-carlo"]
    reason: str


@dataclass(frozen=True)
class DocumentControl:
    """Optional document-control fields of a budget: method, document id, version and sign-offs (by, date)."""

    method: str = ""
    id: str = ""
    version: str = ""
    signoffs: tuple[tuple[str, str, str], ...] = ()  # (role: prepared/reviewed/approved, by, ISO date or '')


@dataclass(frozen=True)
class Budget:
    """A validated budget, ready for the engines."""

    title: str
    measurand: Measurand
    model: Model
    quantities: dict[str, Quantity]
    correlations: dict[tuple[str, str], float]
    coverage: Coverage
    source: str = ""
    sha256: str = ""
    warnings: tuple[str, ...] = ()
    working: dict[str, tuple[str, tuple[str, ...]]] = field(default_factory=dict)
    settings: tuple[str, ...] = ()  # --set changes applied in memory: the budget differs from its file
    correlation_origins: dict[tuple[str, str], str] = field(default_factory=dict)  # why each r exists
    details: dict[str, dict[str, Any]] = field(default_factory=dict)  # input models' numbers, by input
    raw_inputs: dict[str, dict[str, Any]] = field(default_factory=dict, repr=False, compare=False)
    document: DocumentControl | None = None

    @classmethod
    def from_dict(cls, data: Mapping[str, Any], source: str = "<dict>") -> Budget:
        """Validate and build a budget given as Python data with the keys of a budget file
        (docs/budget-format.md); raise :class:`~ucalc.errors.BudgetErrors` listing every problem."""
        from ..api import from_dict

        return from_dict(data, source)

    def propagate(self, *, second_order: bool = False) -> GumResult:
        """The GUM result: law of propagation of uncertainty (JCGM 100 clause 5) and expanded uncertainty
        (clause 6, annex G)."""
        from ..api import propagate

        return propagate(self, second_order=second_order)

    def simulate(self, trials: int = 1_000_000, seed: int | None = None, *, adaptive: bool = False,
                 digits: int = 2) -> MonteCarloResult:
        """The Monte Carlo result (JCGM 101), validated against the GUM result (JCGM 101 clause 8)."""
        from ..api import simulate

        return simulate(self, trials, seed, adaptive=adaptive, digits=digits)
    limits: DetectionLimits | None = None  # LOD/LOQ declared or estimated in the budget's 'limits' block
    reporting: Reporting | None = None

    def estimates(self) -> dict[str, float]:
        return {name: q.value for name, q in self.quantities.items()}

    def correlation(self, a: str, b: str) -> float:
        if a == b:
            return 1.0
        return self.correlations.get((a, b), self.correlations.get((b, a), 0.0))
