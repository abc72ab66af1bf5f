"""Monte Carlo propagation (JCGM 101:2008) against its worked examples and closed forms."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import integrate, optimize, stats
from typer.testing import CliRunner

from ucalc.budget.load import load_budget_text
from ucalc.cli import app
from ucalc.distributions import Distribution
from ucalc.engines import montecarlo
from ucalc.engines.gum import propagate

from .conftest import BUDGETS

TRIALS = 1_000_000


def budget(model: str, inputs: dict[str, str], coverage: str = "{probability: 0.95}") -> str:
    lines = "\n".join(f"  {name}: {{value: 0, components: [{comp}]}}" for name, comp in inputs.items())
    return (f"ucalc: 1\ntitle: t\nmeasurand: {{symbol: Y}}\nmodel: 'Y = {model}'\ncoverage: {coverage}\n"
            f"inputs:\n{lines}\n")


def run(text: str, trials: int = TRIALS, seed: int = 20081, **kw) -> montecarlo.MonteCarloResult:
    return montecarlo.simulate(load_budget_text(text), trials=trials, seed=seed, **kw)


GAUSS = "{name: g, standard: 1}"
RECT_U1 = f"{{name: r, half_width: {math.sqrt(3)!r}, distribution: rectangular}}"  # u = 1


def test_jcgm101_9_2_2_four_gaussian_inputs() -> None:
    # JCGM 101:2008 9.2.2: Y = X1+X2+X3+X4, Xi ~ N(0, 1): u(y) = 2.00, 95 % interval [-3.92, 3.92]  # from memory
    # exact: N(0, 4), so the interval is ±1.959964 * 2 (scipy.stats.norm)
    r = run(budget("X1 + X2 + X3 + X4", {f"X{i}": GAUSS for i in range(1, 5)}))
    exact = 2 * stats.norm.ppf(0.975)
    assert round(r.standard_uncertainty, 2) == 2.00
    assert r.interval[0] == pytest.approx(-exact, abs=0.02) and r.interval[1] == pytest.approx(exact, abs=0.02)
    assert round(r.interval[1], 2) in (3.91, 3.92, 3.93)


def _irwin_hall_cdf(x: float, n: int) -> float:
    return sum((-1) ** k * math.comb(n, k) * (x - k) ** n for k in range(int(math.floor(x)) + 1)) / math.factorial(n)


def test_jcgm101_9_2_3_four_rectangular_inputs() -> None:
    # JCGM 101:2008 9.2.3: four rectangular inputs, each u = 1: MC 95 % interval [-3.88, 3.88]  # from memory
    # exact: Y = sqrt(3) (2 S - 4), S Irwin-Hall with n = 4 (sum of four U(0, 1)); quantile by root finding
    s975 = optimize.brentq(lambda x: _irwin_hall_cdf(x, 4) - 0.975, 2.0, 4.0)
    exact = math.sqrt(3) * (2 * s975 - 4)
    assert round(exact, 2) == 3.88
    r = run(budget("X1 + X2 + X3 + X4", {f"X{i}": RECT_U1 for i in range(1, 5)}))
    assert r.interval[1] == pytest.approx(exact, abs=0.02)
    assert r.interval[0] == pytest.approx(-exact, abs=0.02)
    assert r.standard_uncertainty == pytest.approx(2.0, abs=0.005)
    gum = propagate(load_budget_text(budget("X1 + X2 + X3 + X4", {f"X{i}": RECT_U1 for i in range(1, 5)})))
    assert round(gum.expanded_uncertainty, 2) == 3.92  # JCGM 101 9.2.3: GUM interval [-3.92, 3.92]  # from memory


def test_jcgm101_9_2_4_rectangular_input_dominates() -> None:
    # JCGM 101:2008 9.2.4: X1..X3 ~ N(0, 1), X4 rectangular with u = 10: GUM [-19.9, 19.9], MC [-17.0, 17.0]
    # from memory; exact 97.5 % point of N(0, 3) convolved with R(-a, a), a = 10 sqrt(3), by quadrature (scipy)
    a = 10 * math.sqrt(3)

    def cdf(y: float) -> float:
        return integrate.quad(lambda t: stats.norm.cdf((y - t) / math.sqrt(3)), -a, a)[0] / (2 * a)

    exact = optimize.brentq(lambda y: cdf(y) - 0.975, 10, 25)
    assert round(exact, 1) == 17.0
    inputs = {"X1": GAUSS, "X2": GAUSS, "X3": GAUSS,
              "X4": f"{{name: r, half_width: {a!r}, distribution: rectangular}}"}
    text = budget("X1 + X2 + X3 + X4", inputs)
    r = run(text)
    assert r.interval[1] == pytest.approx(exact, abs=0.05) and r.interval[0] == pytest.approx(-exact, abs=0.05)
    gum = propagate(load_budget_text(text))
    assert round(gum.expanded_uncertainty, 1) == 19.9
    v = montecarlo.validate(gum, r)
    assert not v.passed  # the GUM interval is too wide here (JCGM 101 9.2.4)


def test_sum_of_two_equal_rectangular_is_triangular() -> None:
    # closed form: X1 + X2 with Xi ~ R(-a, a) is triangular on [-2a, 2a]; P(|Y| <= y) = 1 - (1 - y/2a)^2,
    # so the 95 % interval is ±2a (1 - sqrt(0.05)), and the shortest interval equals it (symmetric, unimodal)
    a = 0.5
    r = run(budget("X1 + X2", {"X1": f"{{name: r, half_width: {a}, distribution: rectangular}}",
                               "X2": f"{{name: r, half_width: {a}, distribution: rectangular}}"}))
    exact = 2 * a * (1 - math.sqrt(0.05))
    assert r.interval[1] == pytest.approx(exact, abs=2e-3) and r.interval[0] == pytest.approx(-exact, abs=2e-3)
    assert r.shortest_interval[1] - r.shortest_interval[0] == pytest.approx(2 * exact, abs=4e-3)
    assert r.standard_uncertainty == pytest.approx(math.sqrt(2 / 3) * a, rel=3e-3)  # sqrt(2) * a / sqrt(3)


def test_square_of_a_standard_gaussian_is_chi_square_one() -> None:
    # closed form: Y = X^2, X ~ N(0, 1) is chi-square with 1 dof (scipy.stats.chi2): mean 1, sd sqrt(2);
    # symmetric 95 % interval [chi2.ppf(0.025), chi2.ppf(0.975)], shortest [0, chi2.ppf(0.95)]
    text = budget("X ** 2", {"X": GAUSS})
    r = run(text)
    assert r.value == pytest.approx(1.0, abs=0.01)
    assert r.standard_uncertainty == pytest.approx(math.sqrt(2), abs=0.01)
    assert r.interval[0] == pytest.approx(stats.chi2.ppf(0.025, 1), abs=1e-4)
    assert r.interval[1] == pytest.approx(stats.chi2.ppf(0.975, 1), abs=0.03)
    assert r.shortest_interval[0] == pytest.approx(0.0, abs=1e-4)
    assert r.shortest_interval[1] == pytest.approx(stats.chi2.ppf(0.95, 1), abs=0.03)
    gum = propagate(load_budget_text(text))
    assert gum.standard_uncertainty == 0.0  # first-order sensitivity 2x = 0 at x = 0
    assert not montecarlo.validate(gum, r).passed
    # second order (JCGM 100 5.1.2 note): u^2 = (1/2)(d2f/dx2)^2 u^4 = 2, the chi-square variance
    assert propagate(load_budget_text(text), second_order=True).standard_uncertainty == pytest.approx(math.sqrt(2))


def test_gum_and_mc_agree_on_a_linear_gaussian_budget() -> None:
    text = budget("2 * X1 - 3 * X2 + X3", {"X1": GAUSS, "X2": "{name: g, standard: 0.5}", "X3": GAUSS})
    b = load_budget_text(text)
    gum = propagate(b)
    r = montecarlo.simulate(b, trials=TRIALS, seed=7)
    assert montecarlo.validate(gum, r).passed  # JCGM 101 8: the GUM is exact for linear Gaussian models
    assert r.standard_uncertainty == pytest.approx(gum.standard_uncertainty, rel=0.01)


def test_correlated_gaussian_inputs() -> None:
    # Var(X1 - X2) = u1^2 + u2^2 - 2 r u1 u2 (JCGM 100 5.2.2); r = 0.8, u = 1: variance 0.4
    text = budget("X1 - X2", {"X1": GAUSS, "X2": GAUSS}) + "correlations:\n  - {between: [X1, X2], r: 0.8}\n"
    r = run(text)
    assert r.standard_uncertainty == pytest.approx(math.sqrt(0.4), rel=3e-3)
    assert propagate(load_budget_text(text)).standard_uncertainty == pytest.approx(math.sqrt(0.4), rel=1e-12)


def test_same_seed_same_result_whatever_the_block_size() -> None:
    text = (BUDGETS / "stock-standard.yaml").read_text(encoding="utf-8")
    a = run(text, trials=50_007, seed=3, block_size=50_007)
    b = run(text, trials=50_007, seed=3, block_size=1_000)
    c = run(text, trials=50_007, seed=3, block_size=777)
    assert (a.value, a.standard_uncertainty, a.interval, a.shortest_interval) == \
        (b.value, b.standard_uncertainty, b.interval, b.shortest_interval) == \
        (c.value, c.standard_uncertainty, c.interval, c.shortest_interval)
    d = run(text, trials=50_007, seed=4)
    assert d.value != a.value


def test_correlated_budget_is_block_size_independent() -> None:
    text = (BUDGETS / "internal-standard-ratio.yaml").read_text(encoding="utf-8")
    a = run(text, trials=20_001, seed=9, block_size=20_001)
    b = run(text, trials=20_001, seed=9, block_size=999)
    assert a.interval == b.interval and a.value == b.value


@pytest.mark.parametrize(
    ("dist", "reference"),
    [
        # each against scipy.stats with the same location and scale (Kolmogorov-Smirnov, fixed seed)
        (Distribution("t", 0.3, 5.0), stats.t(df=5, scale=0.3)),  # JCGM 101 6.4.9: scaled and shifted t
        (Distribution("rectangular", 2.0), stats.uniform(loc=-2.0, scale=4.0)),
        (Distribution("triangular", 1.5), stats.triang(c=0.5, loc=-1.5, scale=3.0)),
        (Distribution("arcsine", 1.0), stats.arcsine(loc=-1.0, scale=2.0)),
        (Distribution("normal", 0.7), stats.norm(scale=0.7)),
    ],
    ids=["t5", "rectangular", "triangular", "arcsine", "normal"],
)
def test_component_samples_follow_their_distribution(dist: Distribution, reference) -> None:
    sample = dist.sample(200_000, np.random.default_rng(11))
    assert stats.kstest(sample, reference.cdf).pvalue > 0.001
    if dist.shape != "t":
        assert dist.standard_uncertainty == pytest.approx(reference.std(), rel=1e-12)


def test_nonfinite_trials_are_counted() -> None:
    # sqrt(X) with X ~ N(4, 1): P(X < 0) = Phi(-4) = 3.2e-5 of trials are non-finite (scipy.stats.norm)
    text = budget("sqrt(X)", {"X": GAUSS}).replace("value: 0", "value: 4")
    r = run(text, trials=400_000)
    expected = stats.norm.cdf(-4) * 400_000
    assert 0 < r.nonfinite < 3 * expected + 10


def test_too_many_nonfinite_trials_is_an_error_with_partial_result() -> None:
    text = budget("sqrt(X)", {"X": GAUSS}).replace("value: 0", "value: 1")
    with pytest.raises(montecarlo.MonteCarloError) as info:
        run(text, trials=10_000)
    assert info.value.partial is not None and info.value.partial.nonfinite > 1000


def test_numerical_tolerance() -> None:
    # JCGM 101 7.9.2 example: u = 0.0284, two significant digits -> c = 28, l = -3, delta = 0.0005  # from memory
    assert montecarlo.numerical_tolerance(0.0284, 2) == pytest.approx(0.0005)
    assert montecarlo.numerical_tolerance(0.0284, 1) == pytest.approx(0.005)
    assert montecarlo.numerical_tolerance(0.0996, 2) == pytest.approx(0.005)  # rounds to 0.10


def test_adaptive_stops_with_stable_results() -> None:
    b = load_budget_text(budget("X1 + X2", {"X1": GAUSS, "X2": RECT_U1}))
    r = montecarlo.simulate_adaptive(b, digits=2, seed=1)
    assert r.adaptive and r.trials % 10_000 == 0 and r.stages >= 2
    assert r.standard_uncertainty == pytest.approx(math.sqrt(2), rel=0.01)


def test_fixed_k_uses_the_gaussian_probability() -> None:
    text = budget("X1", {"X1": GAUSS}, coverage="{k: 2}")
    r = run(text, trials=10_000)
    assert r.coverage_probability == pytest.approx(stats.norm.cdf(2) - stats.norm.cdf(-2), rel=1e-12)


@pytest.mark.parametrize("budget_file", sorted(BUDGETS.glob("*.yaml")), ids=lambda p: p.name)
def test_cli_both_gives_monte_carlo_json_on_every_example(budget_file) -> None:
    result = CliRunner().invoke(app, ["run", str(budget_file), "--method", "both", "--trials", "20000",
                                      "--seed", "5", "-f", "json"])
    assert result.exit_code == 0, result.output
    mc = json.loads(result.stdout)["monte_carlo"]
    assert {"trials", "seed", "value", "standard_uncertainty", "coverage_probability", "interval",
            "shortest_interval", "nonfinite", "validation"} <= set(mc)
    assert set(mc["validation"]) >= {"delta", "d_low", "d_high", "passed"}
    assert mc["trials"] == 20000 and mc["seed"] == 5
    assert mc["interval"][0] < mc["value"] < mc["interval"][1]


def test_cli_text_shows_validation_verdict() -> None:
    result = CliRunner().invoke(app, ["run", str(BUDGETS / "stock-standard.yaml"), "-m", "both", "-n", "20000",
                                      "--seed", "2"])
    assert result.exit_code == 0
    assert "GUM validation (JCGM 101 8.2)" in result.stdout and "seed 2" in result.stdout
