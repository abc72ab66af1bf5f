"""Propagation of distributions by Monte Carlo (JCGM 101:2008) and validation of the GUM result (clause 8).

Each uncertainty component is sampled from its own distribution (JCGM 101 6.4) and the deviations are added to
the input's estimate; inputs that take part in a correlation are drawn together (6.4.8). The model is the same
compiled expression as the GUM engine, evaluated on numpy arrays block by block. Every component has its own
random stream spawned from one seed, so results are bit-identical for a seed whatever the block size. Coverage
intervals come from two partial sorts of the tails (7.7); moments are summed in fixed chunks (7.6); standard
errors of every figure come from block results (7.9.4).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Literal

from ..budget.definitions import Budget
from ..errors import ComputationError, MonteCarloError
from ..results import ResultMethods
from .correlated import SampledCorrelation

if TYPE_CHECKING:
    import numpy as np

    from .gum import GumResult

MAX_NONFINITE_FRACTION = 1e-3
DEFAULT_BLOCK = 131072
HISTOGRAM_BINS = 80
MAX_TRIALS = 10**10  # beyond this a run takes hours and its figures gain no digit the budget has
MIN_TRIALS = 100
PRECISION_BLOCKS = 10  # h of JCGM 101 7.9.4 for a run of fixed length
MOMENT_CHUNK = 1 << 16
FAR_FROM_GAUSSIAN_DOF = 10  # a t with fewer dof is named as a cause of a failed validation
NOTABLE_SHARE = 0.05  # inputs below this share of u_c^2 are not named as causes
NONLINEAR_SHARE = 0.02  # a curvature term (1/2)|f''| u^2 above this fraction of u_c is named
MAX_CROSS_TERM_INPUTS = 30  # above this many uncertain inputs only the curvature in each input is examined

Progress = Callable[[int, int], None]


@dataclass(frozen=True)
class Precision:
    """Standard errors of the Monte Carlo figures from ``blocks`` block results (JCGM 101 7.9.4 f)).

    Each is the standard deviation of the block values divided by sqrt(blocks); ``standard_uncertainty`` is
    None where the output variance does not exist.
    """

    blocks: int
    trials_per_block: int
    value: float
    standard_uncertainty: float | None
    low: float
    high: float


@dataclass(frozen=True)
class Validation:
    """JCGM 101 8.2: the GUM interval y ± U against the Monte Carlo probabilistically symmetric interval.

    ``scatter_low``/``scatter_high`` are twice the standard errors of the endpoints (7.9.4); a verdict whose
    margin to delta is smaller than that is undecided at ``trials``. ``causes`` name inputs far from Gaussian
    and non-linearities that explain a difference.
    """

    digits: int
    delta: float
    d_low: float
    d_high: float
    gum_interval: tuple[float, float]
    scatter_low: float | None = None
    scatter_high: float | None = None
    trials: int = 0
    causes: tuple[str, ...] = ()

    @property
    def passed(self) -> bool:
        return self.d_low <= self.delta and self.d_high <= self.delta

    @property
    def undecided(self) -> bool:
        if self.scatter_low is None or self.scatter_high is None:
            return False
        margins = (self.d_low - self.delta, self.d_high - self.delta)
        scatters = (self.scatter_low, self.scatter_high)
        if self.passed:
            return any(-m < s for m, s in zip(margins, scatters, strict=True))
        return not any(m > s for m, s in zip(margins, scatters, strict=True))

    @property
    def verdict(self) -> Literal["passed", "failed", "undecided"]:
        if self.undecided:
            return "undecided"
        return "passed" if self.passed else "failed"

    @property
    def rerun_trials(self) -> int | None:
        """Trials at which every endpoint's margin would exceed its scatter (scatter falls as 1/sqrt(M))."""
        if not self.undecided or self.scatter_low is None or self.scatter_high is None:
            return None
        needed = 0.0
        for d, s in ((self.d_low, self.scatter_low), (self.d_high, self.scatter_high)):
            margin = abs(d - self.delta)
            needed = max(needed, math.inf if margin == 0 else self.trials * (s / margin) ** 2)
        if not math.isfinite(needed) or needed > MAX_TRIALS:
            return MAX_TRIALS
        return _round_up(max(needed, 2.0 * self.trials))


def _round_up(x: float) -> int:
    """``x`` rounded up to two significant digits (1.23e6 -> 1.3e6)."""
    step = 10 ** max(int(math.floor(math.log10(x))) - 1, 0)
    return int(math.ceil(x / step) * step)


@dataclass(frozen=True)
class Histogram:
    """Counts of the output values over ``edges`` (central 99.9 % of trials); ``outside`` counts the rest."""

    counts: tuple[int, ...]
    edges: tuple[float, ...]
    outside: int


@dataclass(frozen=True)
class MonteCarloResult(ResultMethods):
    """Summary of the output distribution (JCGM 101 7.6, 7.7); intervals at ``coverage_probability``.

    ``standard_uncertainty`` is None when an input's variance does not exist (a t with 2 or fewer dof, JCGM 101
    6.4.9): the inputs are named in ``heavy_tailed`` and ``value`` is then the median (``estimate``).
    """

    measurand: str
    unit: str
    trials: int
    seed: int
    value: float
    standard_uncertainty: float | None
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
    precision: Precision | None = None
    heavy_tailed: tuple[str, ...] = ()
    estimate: Literal["mean", "median"] = "mean"
    correlations: tuple[SampledCorrelation, ...] = ()

    @property
    def variance_defined(self) -> bool:
        return self.standard_uncertainty is not None


def coverage_probability_for(budget: Budget) -> float:
    """The budget's probability, or for a fixed k the Gaussian probability of ±k (k = 2 gives 95.45 %)."""
    if budget.coverage.probability is not None:
        return budget.coverage.probability
    assert budget.coverage.k is not None
    return math.erf(budget.coverage.k / math.sqrt(2.0))


def heavy_tailed_inputs(budget: Budget) -> tuple[str, ...]:
    """Model inputs with a component whose variance does not exist (a t with dof <= 2, JCGM 101 6.4.9)."""
    return tuple(n for n in budget.model.inputs
                 if any(c.distribution.scale > 0 and not c.distribution.variance_defined
                        for c in budget.quantities[n].components))


class Sampler:
    """Draws blocks of input values for a budget; each component (and each correlated group) has its own stream."""

    def __init__(self, budget: Budget, seed: int) -> None:
        import numpy as np

        from .correlated import Group, groups

        self.budget = budget
        names = budget.model.inputs
        linked = groups(budget)
        correlated = [n for g in linked for n in g]
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
        self.generators = [np.random.Generator(np.random.PCG64(s)) for s in streams[:-1]]
        seeds = streams[-1].spawn(2 * len(linked))
        self.groups = [Group(budget, g, seeds[2 * i:2 * i + 2]) for i, g in enumerate(linked)]
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
        for group in self.groups:
            for name, x in group.draw(n).items():
                x += self.estimates[name]
                env[name] = x
        return env

    @property
    def correlations(self) -> tuple[Any, ...]:
        """Stated and achieved correlation of every correlated pair (:class:`SampledCorrelation`)."""
        return tuple(c for g in self.groups for c in g.achieved)


def _check_trials(trials: int) -> None:
    if trials < MIN_TRIALS:
        raise ComputationError(f"at least {MIN_TRIALS} trials are needed (got {trials})", subject="trials")
    if trials > MAX_TRIALS:
        raise ComputationError(f"{trials:.3g} trials is more than the {MAX_TRIALS:.0e} ucalc runs; use --adaptive "
                               "to stop when the figures are stable", subject="trials")


def _run_trials(budget: Budget, sampler: Sampler, trials: int, block_size: int,
                progress: Progress | None, done_before: int = 0, total: int | None = None) -> np.ndarray:
    import numpy as np

    f = budget.model.function("numpy")
    out = _output_array(trials)
    done = 0
    with np.errstate(all="ignore"):
        while done < trials:
            n = min(block_size, trials - done)
            out[done:done + n] = f(sampler.block(n))
            done += n
            if progress:
                progress(done_before + done, total or trials)
    return out


def _output_array(trials: int) -> np.ndarray:
    import numpy as np

    try:
        return np.empty(trials)
    except MemoryError:
        raise ComputationError(f"{trials:,} trials need {8 * trials / 1e9:.1f} GB for the output values, more "
                               "than this machine can hold; use fewer trials or --adaptive",
                               subject="trials") from None


def _ranks(m: int, p: float) -> tuple[int, int]:
    """(q, r) of JCGM 101 7.7.1: q = pM rounded, r = (M - q)/2 (1-based), for M sorted values."""
    q = int(p * m) if float(p * m).is_integer() else int(p * m + 0.5)
    q = min(max(q, 1), m - 1)
    r = (m - q) // 2 if (m - q) % 2 == 0 else (m - q + 1) // 2
    return q, max(r, 1)


def _order_statistics(y: np.ndarray, p: float, extra: tuple[int, ...] = ()) -> tuple[
        tuple[float, float], tuple[float, float], dict[int, float]]:
    """Symmetric and shortest coverage intervals (JCGM 101 7.7) and the order statistics ``extra`` (0-based).

    ``y`` is reordered in place: a partition puts the M - q smallest and the M - q largest values at the two
    ends, and only those tails are sorted; the order statistics are those of a full sort.
    """
    import numpy as np

    m = len(y)
    q, r = _ranks(m, p)
    tail = m - q
    if 2 * tail >= m:
        y.sort()
    else:
        kth = {tail - 1, q} | {i for i in extra if tail <= i < q}
        y.partition(sorted(kth))
        y[:tail].sort()
        y[q:].sort()
    symmetric = (float(y[r - 1]), float(y[r + q - 1]))
    widths = y[q:] - y[:tail]  # y_(r+q) - y_(r), r = 1..M-q (7.7.2)
    best = int(np.argmin(widths))
    shortest = (float(y[best]), float(y[best + q]))
    return symmetric, shortest, {i: float(y[i]) for i in extra}


def _median_ranks(m: int) -> tuple[int, ...]:
    return (m // 2,) if m % 2 else (m // 2 - 1, m // 2)


def _moments(y: np.ndarray) -> tuple[float, float]:
    """Mean and standard deviation (ddof 1) in fixed chunks: no full-size temporaries (JCGM 101 7.6).

    Values of extreme magnitude are divided by their largest magnitude first, so no sum overflows.
    """
    import numpy as np

    m = len(y)
    scale = max(abs(float(y.min())), abs(float(y.max()))) or 1.0
    s = 1.0 if 1e-100 < scale < 1e100 else scale
    total = 0.0
    for i in range(0, m, MOMENT_CHUNK):
        c = y[i:i + MOMENT_CHUNK]
        total += float(np.sum(c / s if s != 1.0 else c))
    mean_s = total / m
    ss = 0.0
    for i in range(0, m, MOMENT_CHUNK):
        c = y[i:i + MOMENT_CHUNK]
        d = (c / s if s != 1.0 else c) - mean_s
        d *= d
        ss += float(np.sum(d))
    return mean_s * s, math.sqrt(ss / (m - 1)) * s if m > 1 else 0.0


BlockStats = tuple[float, float | None, float, float]  # value, u, low, high of one block


def _block_stats(y: np.ndarray, p: float, heavy: bool) -> BlockStats:
    """Estimate, u and symmetric-interval endpoints of one block of finite values (reorders ``y``)."""
    m = len(y)
    if heavy:
        medians = _median_ranks(m)
        (low, high), _, stats = _order_statistics(y, p, medians)
        return sum(stats[i] for i in medians) / len(medians), None, low, high
    mean, sd = _moments(y)
    (low, high), _, _ = _order_statistics(y, p)
    return mean, sd, low, high


def _precision(stats: list[BlockStats], per_block: int) -> Precision | None:
    """Standard deviations of the block averages, s / sqrt(h) (JCGM 101 7.9.4 f))."""
    import numpy as np

    h = len(stats)
    if h < 2:
        return None

    def se(values: list[float]) -> float:
        return float(np.std(np.array(values), ddof=1)) / math.sqrt(h)

    us = [s[1] for s in stats]
    return Precision(h, per_block, se([s[0] for s in stats]),
                     None if any(u is None for u in us) else se([u for u in us if u is not None]),
                     se([s[2] for s in stats]), se([s[3] for s in stats]))


def _minimum_block(p: float) -> int:
    """Smallest block whose endpoints mean something: 100/(1 - p) trials (JCGM 101 7.9.4 a))."""
    return int(math.ceil(100.0 / (1.0 - p)))


def _segment_stats(y: np.ndarray, p: float, heavy: bool) -> tuple[list[BlockStats], int]:
    """Results of PRECISION_BLOCKS equal consecutive blocks of ``y`` (fewer for short runs)."""
    h = min(PRECISION_BLOCKS, len(y) // _minimum_block(p))
    if h < 2:
        return [], 0
    size = len(y) // h
    return [_block_stats(y[i * size:(i + 1) * size], p, heavy) for i in range(h)], size


def _summarise(budget: Budget, y: np.ndarray, seed: int, p: float, *, adaptive: bool = False,
               digits: int | None = None, stages: int = 1,
               blocks: tuple[list[BlockStats], int] | None = None,
               correlations: tuple[SampledCorrelation, ...] = ()) -> MonteCarloResult:
    import numpy as np

    trials = len(y)
    finite = np.isfinite(y)
    nonfinite = int(trials - np.count_nonzero(finite))
    del finite
    if nonfinite:
        y = y[np.isfinite(y)]
    if len(y) < 2:
        raise MonteCarloError("every trial gave a non-finite model value")
    heavy = heavy_tailed_inputs(budget)
    m = len(y)
    sd: float | None
    if heavy:
        mean, sd = math.nan, None
    else:
        mean, sd = _moments(y)  # before any partition reorders y
    stats, per_block = blocks if blocks is not None else _segment_stats(y, p, bool(heavy))
    lo_i, hi_i = int(0.0005 * (m - 1)), int(math.ceil(0.9995 * (m - 1)))
    medians = _median_ranks(m) if heavy else ()
    symmetric, shortest, order = _order_statistics(y, p, (lo_i, hi_i, *medians))
    value = sum(order[i] for i in medians) / len(medians) if heavy else mean
    lo, hi = order[lo_i], order[hi_i]
    if not hi - lo > 1e-9 * max(abs(lo), abs(hi)):  # (nearly) constant output: a narrow window around it
        centre = 0.5 * lo + 0.5 * hi
        spread = max(abs(centre) * 1e-6, 1e-300)
        lo, hi = centre - spread, centre + spread
    counts, edges = np.histogram(y, bins=HISTOGRAM_BINS, range=(float(lo), float(hi)))
    histogram = Histogram(tuple(int(c) for c in counts), tuple(float(e) for e in edges), int(m - counts.sum()))
    notes = []
    if budget.coverage.probability is None:
        notes.append(f"coverage is a fixed k; Monte Carlo intervals use the Gaussian probability of ±k, {p:.2%}")
    if heavy:
        names = ", ".join(f"'{n}'" for n in heavy)
        notes.append(f"the standard uncertainty is not defined: {names} "
                     f"{'is a t' if len(heavy) == 1 else 'are t-distributions'} with 2 or fewer degrees of "
                     "freedom, whose variance does not exist (JCGM 101 6.4.9); the estimate is the median and "
                     "the coverage intervals stand")
    for c in correlations:
        achieved = "not defined (a variance does not exist)" if c.achieved is None else f"{c.achieved:.4f}"
        how = {"gaussian": "jointly Gaussian (JCGM 101 6.4.8)",
               "multivariate t": "multivariate t (JCGM 102), each keeping its t",
               "gaussian copula": "Gaussian copula, each keeping its own distribution"}[c.method]
        notes.append(f"'{c.a}' and '{c.b}' sampled {how}: correlation stated {c.stated:g}, achieved {achieved}")
    result = MonteCarloResult(
        measurand=budget.measurand.symbol, unit=budget.measurand.unit, trials=trials, seed=seed, value=value,
        standard_uncertainty=sd, coverage_probability=p, interval=symmetric, shortest_interval=shortest,
        nonfinite=nonfinite, histogram=histogram, adaptive=adaptive, digits=digits, stages=stages,
        notes=tuple(notes), precision=_precision(stats, per_block), heavy_tailed=heavy,
        estimate="median" if heavy else "mean", correlations=correlations,
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
    _check_trials(trials)
    if block_size < 1:
        raise ComputationError("block size must be positive", subject="block_size")
    seed = new_seed() if seed is None else seed
    p = coverage_probability_for(budget)
    sampler = Sampler(budget, seed)
    y = _run_trials(budget, sampler, trials, block_size, progress)
    return _summarise(budget, y, seed, p, correlations=sampler.correlations)


def numerical_tolerance(u: float, digits: int) -> float:
    """delta = 10^l / 2 where u = c x 10^l with c a ``digits``-digit integer (JCGM 101 7.9.2, 8.2)."""
    if u <= 0 or not math.isfinite(u):
        return 0.0
    exponent = math.floor(math.log10(u)) - digits + 1
    if round(u / 10.0**exponent) >= 10**digits:  # u just below a power of ten rounds up a digit
        exponent += 1
    return 0.5 * 10.0**exponent


def interval_scale(interval: tuple[float, float], p: float) -> float:
    """The standard deviation of a Gaussian with this probabilistically symmetric interval: half-width / z_p.

    Used in place of u for the numerical tolerance when the output variance does not exist.
    """
    from statistics import NormalDist

    return 0.5 * (interval[1] - interval[0]) / NormalDist().inv_cdf(0.5 + p / 2.0)


def simulate_adaptive(budget: Budget, *, digits: int = 2, seed: int | None = None,
                      block_size: int = DEFAULT_BLOCK, max_trials: int = 50_000_000,
                      progress: Progress | None = None) -> MonteCarloResult:
    """Adaptive Monte Carlo (JCGM 101 7.9): stages of M trials until y, u and both endpoints are stable.

    When the output variance does not exist (6.4.9) stability is judged on the two endpoints alone, with delta
    from :func:`interval_scale`.
    """
    import numpy as np

    if digits < 1 or digits > 6:
        raise ComputationError(f"digits must be between 1 and 6 (got {digits})", subject="digits")
    _check_trials(max_trials)
    seed = new_seed() if seed is None else seed
    p = coverage_probability_for(budget)
    heavy = bool(heavy_tailed_inputs(budget))
    stage = max(_minimum_block(p), 10_000)  # J = max(100/(1-p), 10^4), 7.9.4 a)
    sampler = Sampler(budget, seed)
    blocks: list[np.ndarray] = []
    stats: list[BlockStats] = []
    while True:
        done = sum(len(b) for b in blocks)
        y = _run_trials(budget, sampler, stage, block_size, progress, done, max(done + stage, 1))
        blocks.append(y)
        finite = y[np.isfinite(y)]
        if len(finite) >= 2:
            stats.append(_block_stats(finite, p, heavy))
        h = len(stats)
        if h >= 2:
            arr = np.array([[s[0], s[1] if s[1] is not None else 0.0, s[2], s[3]] for s in stats])
            s = arr.std(axis=0, ddof=1) / math.sqrt(h)  # standard deviations of the averages, 7.9.4 f)
            if heavy:
                scale = interval_scale((float(arr[:, 2].mean()), float(arr[:, 3].mean())), p)
                checked = s[2:]
            else:
                scale, checked = float(arr[:, 1].mean()), s
            delta = numerical_tolerance(scale, digits)
            if delta > 0 and bool(np.all(2.0 * checked <= delta)):
                break
        if (h + 1) * stage > max_trials:
            raise MonteCarloError(f"adaptive Monte Carlo did not stabilise within {max_trials} trials")
    y_all = np.concatenate(blocks)
    del blocks
    return _summarise(budget, y_all, seed, p, adaptive=True, digits=digits, stages=len(stats),
                      correlations=sampler.correlations,
                      blocks=(stats, stage))


def validate(gum: GumResult, mc: MonteCarloResult, digits: int = 2, budget: Budget | None = None) -> Validation:
    """Compare y ± U (GUM) with the MC probabilistically symmetric interval (JCGM 101 8.2).

    delta follows from ``digits`` significant digits of u_c; d_low = |y - U - y_low|, d_high = |y + U - y_high|.
    Only the endpoints are used, so the comparison holds where the output variance does not exist. With the
    budget, the inputs far from Gaussian and the non-linearities that may explain a difference are named.
    """
    delta = numerical_tolerance(gum.standard_uncertainty, digits)
    low, high = gum.value - gum.expanded_uncertainty, gum.value + gum.expanded_uncertainty
    prec = mc.precision
    v = Validation(digits, delta, abs(low - mc.interval[0]), abs(high - mc.interval[1]), (low, high),
                   None if prec is None else 2.0 * prec.low, None if prec is None else 2.0 * prec.high, mc.trials)
    if budget is None or v.verdict == "passed":
        return v
    import dataclasses

    return dataclasses.replace(v, causes=departures(budget, gum))


def departures(budget: Budget, gum: GumResult) -> tuple[str, ...]:
    """What makes the GUM's Gaussian (or t) output an approximation here (JCGM 101 5.7, 8.1).

    Inputs with a component of at least 5 % of u_c^2 whose distribution is far from Gaussian (a t with few dof,
    rectangular, arcsine, trapezoidal), inputs whose curvature term (1/2)|d2f/dx2| u^2 and pairs whose cross term
    |d2f/dxi dxj| u_i u_j exceeds 2 % of u_c (the second-order terms of JCGM 100 5.1.2 note).
    """
    shares = {c.input: c.variance_share for c in gum.contributions}
    out: list[str] = []
    for name in budget.model.inputs:
        q = budget.quantities[name]
        if shares.get(name, 0.0) < NOTABLE_SHARE or not q.components:
            continue
        total = q.standard_uncertainty
        shapes = []
        for c in q.components:
            d = c.distribution
            share = shares[name] * (c.standard_uncertainty / total) ** 2 if total else 0.0
            if share < NOTABLE_SHARE:
                continue  # the component's own share of u_c^2: a few-dof t inside a many-dof input still counts
            if d.shape == "t" and d.dof < FAR_FROM_GAUSSIAN_DOF:
                shapes.append(f"a t with {d.dof:g} degrees of freedom ({share:.0%} of u_c²)")
            elif d.shape not in ("normal", "t", "triangular"):
                shapes.append(f"{d.shape.replace('_', ' ')} ({share:.0%} of u_c²)")
        if shapes:
            verb = "is" if len(q.components) == 1 else "has a component that is"
            out.append(f"input '{name}' {verb} {' and '.join(shapes)}")
    env = {n: budget.quantities[n].value for n in budget.model.inputs}
    uc = gum.standard_uncertainty
    uncertain = [n for n in budget.model.inputs if budget.quantities[n].standard_uncertainty > 0]
    for i, a in enumerate(uncertain):
        for b in uncertain[i:] if len(uncertain) <= MAX_CROSS_TERM_INPUTS else (a,):
            try:
                d2 = float(budget.model.evaluate_tree(budget.model.derivative(a, b), env))
            except (ArithmeticError, ValueError):
                continue
            term = abs(d2) * budget.quantities[a].standard_uncertainty * budget.quantities[b].standard_uncertainty
            term *= 0.5 if a == b else 1.0
            if not (math.isfinite(term) and term > NONLINEAR_SHARE * uc):
                continue
            size = f"{term / uc:.0%} of u_c" if uc > 0 else "while u_c is zero"
            if a == b:
                out.append(f"the model is non-linear in '{a}' (curvature term (1/2)|∂²f/∂{a}²|u² is {size})")
            else:
                out.append(f"the model is non-linear in '{a}' and '{b}' together (cross term "
                           f"|∂²f/∂{a}∂{b}|·u·u is {size})")
    return tuple(out)


def with_validation(mc: MonteCarloResult, validation: Validation) -> MonteCarloResult:
    import dataclasses

    return dataclasses.replace(mc, validation=validation)
