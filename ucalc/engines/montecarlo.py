"""Propagation of distributions by Monte Carlo (JCGM 101:2008) and validation of the GUM result (clause 8).

Each uncertainty component is sampled from its own distribution (JCGM 101 6.4) and the deviations are added to
the input's estimate; inputs that take part in a correlation are drawn together from a multivariate Gaussian
(6.4.8). The model is the same compiled expression as the GUM engine, evaluated on numpy arrays block by block,
so memory stays bounded. Every component has its own random stream spawned from one seed, so results are
bit-identical for a seed whatever the block size.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from ..budget.definitions import Budget
from ..errors import ComputationError
from ..results import ResultMethods

if TYPE_CHECKING:
    import numpy as np

    from .gum import GumResult

MAX_NONFINITE_FRACTION = 1e-3
DEFAULT_BLOCK = 131072
HISTOGRAM_BINS = 80

Progress = Callable[[int, int], None]


@dataclass(frozen=True)
class Validation:
    """JCGM 101 8.2: the GUM interval y ± U against the Monte Carlo probabilistically symmetric interval."""

    digits: int
    delta: float
    d_low: float
    d_high: float
    gum_interval: tuple[float, float]

    @property
    def passed(self) -> bool:
        return self.d_low <= self.delta and self.d_high <= self.delta


@dataclass(frozen=True)
class Histogram:
    """Counts of the output values over ``edges`` (central 99.9 % of trials); ``outside`` counts the rest."""

    counts: tuple[int, ...]
    edges: tuple[float, ...]
    outside: int


@dataclass(frozen=True)
class MonteCarloResult(ResultMethods):
    """Summary of the output distribution (JCGM 101 7.6, 7.7); intervals at ``coverage_probability``."""

    measurand: str
    unit: str
    trials: int
    seed: int
    value: float
    standard_uncertainty: float
    coverage_probability: float
    interval: tuple[float, float]
    shortest_interval: tuple[float, float]
    nonfinite: int
    histogram: Histogram
    adaptive: bool = False
    digits: int | None = None
    stages: int = 1
    validation: Validation | None = None
    notes: tuple[str, ...] = ()


class MonteCarloError(ComputationError):
    """Too many trials gave a non-finite model value; ``partial`` holds what was computed from the rest."""

    def __init__(self, rule: str, partial: MonteCarloResult | None = None) -> None:
        super().__init__(rule, subject="Monte Carlo")
        self.partial = partial


def coverage_probability_for(budget: Budget) -> float:
    """The budget's probability, or for a fixed k the Gaussian probability of ±k (k = 2 gives 95.45 %)."""
    if budget.coverage.probability is not None:
        return budget.coverage.probability
    assert budget.coverage.k is not None
    return math.erf(budget.coverage.k / math.sqrt(2.0))


class Sampler:
    """Draws blocks of input values for a budget; each component (and each correlated group) has its own stream."""

    def __init__(self, budget: Budget, seed: int) -> None:
        import numpy as np

        self.budget = budget
        names = budget.model.inputs
        correlated = sorted({n for a in names for b in names if a != b and budget.correlation(a, b) != 0.0
                             for n in (a, b)}, key=names.index)
        self.correlated = tuple(correlated)
        sources: list[Any] = []
        for n in names:
            if n in correlated:
                continue
            for c in budget.quantities[n].components:
                if c.distribution.scale > 0:
                    sources.append((n, c.distribution))
        self.sources = sources
        streams = np.random.SeedSequence(seed).spawn(len(sources) + 1)
        self.generators = [np.random.Generator(np.random.PCG64(s)) for s in streams]
        if correlated:
            u = np.array([budget.quantities[n].standard_uncertainty for n in correlated])
            r = np.array([[budget.correlation(a, b) for b in correlated] for a in correlated])
            cov = r * np.outer(u, u)
            w, v = np.linalg.eigh(cov)
            self.factor = v * np.sqrt(np.clip(w, 0.0, None))  # cov = F F^T, also for singular matrices
        self.estimates = {n: float(budget.quantities[n].value) for n in names}

    def block(self, n: int) -> dict[str, np.ndarray]:

        env: dict[str, Any] = dict(self.estimates)  # exact inputs stay scalars and broadcast
        for (name, dist), rng in zip(self.sources, self.generators, strict=False):
            x = dist.sample(n, rng)
            if isinstance(env[name], float):
                x += env[name]
                env[name] = x
            else:
                env[name] += x
        if self.correlated:
            z = self.generators[-1].standard_normal((n, len(self.correlated)))
            deviations = z @ self.factor.T
            for j, name in enumerate(self.correlated):
                env[name] = deviations[:, j] + self.estimates[name]
        return env


def _run_trials(budget: Budget, sampler: Sampler, trials: int, block_size: int,
                progress: Progress | None, done_before: int = 0, total: int | None = None) -> np.ndarray:
    import numpy as np

    f = budget.model.function("numpy")
    out = np.empty(trials)
    done = 0
    with np.errstate(all="ignore"):
        while done < trials:
            n = min(block_size, trials - done)
            y = f(sampler.block(n))
            out[done:done + n] = y
            done += n
            if progress:
                progress(done_before + done, total or trials)
    return out


def _intervals(y_sorted: np.ndarray, p: float) -> tuple[tuple[float, float], tuple[float, float]]:
    """Probabilistically symmetric and shortest coverage intervals from sorted values (JCGM 101 7.7)."""
    import numpy as np

    m = len(y_sorted)
    q = int(p * m) if float(p * m).is_integer() else int(p * m + 0.5)
    q = min(max(q, 1), m - 1)
    r = (m - q) // 2 if (m - q) % 2 == 0 else (m - q + 1) // 2  # 1-based r of 7.7.1
    symmetric = (float(y_sorted[r - 1]), float(y_sorted[r + q - 1]))
    best_width, best_r = math.inf, 0
    chunk = 1 << 20
    for start in range(0, m - q, chunk):  # r* minimises y_(r+q) - y_(r), r = 1..M-q (7.7.2), in chunks
        stop = min(start + chunk, m - q)
        widths = y_sorted[start + q:stop + q] - y_sorted[start:stop]
        i = int(np.argmin(widths))
        if widths[i] < best_width:
            best_width, best_r = float(widths[i]), start + i
    shortest = (float(y_sorted[best_r]), float(y_sorted[best_r + q]))
    return symmetric, shortest


def _summarise(budget: Budget, y: np.ndarray, seed: int, p: float, *, adaptive: bool = False,
               digits: int | None = None, stages: int = 1) -> MonteCarloResult:
    import numpy as np

    trials = len(y)
    finite = np.isfinite(y)
    nonfinite = int(trials - np.count_nonzero(finite))
    if nonfinite:
        y = y[finite]
    if len(y) < 2:
        raise MonteCarloError("every trial gave a non-finite model value")
    y.sort()
    scale = max(abs(float(y[0])), abs(float(y[-1]))) or 1.0
    if 1e-100 < scale < 1e100:
        mean, sd = float(np.mean(y)), float(np.std(y, ddof=1))
    else:  # extreme magnitudes: moments of y/scale cannot overflow or underflow
        mean = float(np.mean(y / scale)) * scale
        sd = float(np.std(y / scale, ddof=1)) * scale
    symmetric, shortest = _intervals(y, p)
    lo, hi = y[int(0.0005 * (len(y) - 1))], y[int(math.ceil(0.9995 * (len(y) - 1)))]  # y is sorted
    lo, hi = float(lo), float(hi)
    if not hi - lo > 1e-9 * max(abs(lo), abs(hi)):  # (nearly) constant output: a narrow window around it
        centre = 0.5 * lo + 0.5 * hi
        spread = max(abs(centre) * 1e-6, 1e-300)
        lo, hi = centre - spread, centre + spread
    counts, edges = np.histogram(y, bins=HISTOGRAM_BINS, range=(float(lo), float(hi)))
    histogram = Histogram(tuple(int(c) for c in counts), tuple(float(e) for e in edges),
                          int(len(y) - counts.sum()))
    notes = []
    if budget.coverage.probability is None:
        notes.append(f"coverage is a fixed k; Monte Carlo intervals use the Gaussian probability of ±k, {p:.2%}")
    if any(budget.correlation(a, b) for a in budget.model.inputs for b in budget.model.inputs if a != b):
        notes.append("correlated inputs are sampled jointly as Gaussian with their standard uncertainties "
                     "(JCGM 101 6.4.8)")
    result = MonteCarloResult(
        measurand=budget.measurand.symbol, unit=budget.measurand.unit, trials=trials, seed=seed, value=mean,
        standard_uncertainty=sd, coverage_probability=p, interval=symmetric, shortest_interval=shortest,
        nonfinite=nonfinite, histogram=histogram, adaptive=adaptive, digits=digits, stages=stages,
        notes=tuple(notes),
    )
    if nonfinite > MAX_NONFINITE_FRACTION * trials:
        raise MonteCarloError(
            f"{nonfinite} of {trials} trials gave a non-finite model value (limit {MAX_NONFINITE_FRACTION:.1%}); "
            "the model leaves its domain within the inputs' distributions", partial=result)
    return result


def new_seed() -> int:
    """A fresh seed from the operating system, to be reported so the run can be repeated."""
    import numpy as np

    entropy = np.random.SeedSequence().entropy
    assert isinstance(entropy, int)
    return entropy % (2**63)


def simulate(budget: Budget, *, trials: int = 1_000_000, seed: int | None = None,
             block_size: int = DEFAULT_BLOCK, progress: Progress | None = None) -> MonteCarloResult:
    """Monte Carlo with a fixed number of trials (JCGM 101 7.2)."""
    if trials < 100:
        raise ComputationError(f"at least 100 trials are needed (got {trials})", subject="--trials")
    if block_size < 1:
        raise ComputationError("block size must be positive", subject="block_size")
    seed = new_seed() if seed is None else seed
    p = coverage_probability_for(budget)
    sampler = Sampler(budget, seed)
    y = _run_trials(budget, sampler, trials, block_size, progress)
    return _summarise(budget, y, seed, p)


def numerical_tolerance(u: float, digits: int) -> float:
    """delta = 10^l / 2 where u = c x 10^l with c a ``digits``-digit integer (JCGM 101 7.9.2, 8.2)."""
    if u <= 0 or not math.isfinite(u):
        return 0.0
    exponent = math.floor(math.log10(u)) - digits + 1
    if round(u / 10.0**exponent) >= 10**digits:  # u just below a power of ten rounds up a digit
        exponent += 1
    return 0.5 * 10.0**exponent


def simulate_adaptive(budget: Budget, *, digits: int = 2, seed: int | None = None,
                      block_size: int = DEFAULT_BLOCK, max_trials: int = 50_000_000,
                      progress: Progress | None = None) -> MonteCarloResult:
    """Adaptive Monte Carlo (JCGM 101 7.9): stages of M trials until y, u and both endpoints are stable."""
    import numpy as np

    if digits < 1 or digits > 6:
        raise ComputationError(f"digits must be between 1 and 6 (got {digits})", subject="--digits")
    seed = new_seed() if seed is None else seed
    p = coverage_probability_for(budget)
    stage = max(int(math.ceil(100.0 / (1.0 - p))), 10_000)  # J = max(100/(1-p), 10^4), 7.9.4 a)
    sampler = Sampler(budget, seed)
    blocks: list[np.ndarray] = []
    stats: list[tuple[float, float, float, float]] = []
    while True:
        done = sum(len(b) for b in blocks)
        y = _run_trials(budget, sampler, stage, block_size, progress, done, max(done + stage, 1))
        blocks.append(y)
        finite = np.sort(y[np.isfinite(y)])
        if len(finite) >= 2:
            sym, _ = _intervals(finite, p)
            stats.append((float(finite.mean()), float(finite.std(ddof=1)), sym[0], sym[1]))
        h = len(stats)
        if h >= 2:
            arr = np.array(stats)
            s = arr.std(axis=0, ddof=1) / math.sqrt(h)  # standard deviations of the averages, 7.9.4 f)
            u_all = float(arr[:, 1].mean())
            delta = numerical_tolerance(u_all, digits)
            if delta > 0 and bool(np.all(2.0 * s <= delta)):
                break
        if (h + 1) * stage > max_trials:
            raise MonteCarloError(f"adaptive Monte Carlo did not stabilise within {max_trials} trials")
    y_all = np.concatenate(blocks)
    return _summarise(budget, y_all, seed, p, adaptive=True, digits=digits, stages=len(blocks))


def validate(gum: GumResult, mc: MonteCarloResult, digits: int = 2) -> Validation:
    """Compare y ± U (GUM) with the MC probabilistically symmetric interval (JCGM 101 8.2).

    delta follows from ``digits`` significant digits of u_c; d_low = |y - U - y_low|, d_high = |y + U - y_high|.
    """
    delta = numerical_tolerance(gum.standard_uncertainty, digits)
    low, high = gum.value - gum.expanded_uncertainty, gum.value + gum.expanded_uncertainty
    return Validation(digits, delta, abs(low - mc.interval[0]), abs(high - mc.interval[1]), (low, high))


def with_validation(mc: MonteCarloResult, validation: Validation) -> MonteCarloResult:
    import dataclasses

    return dataclasses.replace(mc, validation=validation)
