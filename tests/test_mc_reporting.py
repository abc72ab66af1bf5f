"""Monte Carlo a laboratory can report: inputs without a variance, block precision, one result statement."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import stats
from typer.testing import CliRunner

from ucalc.budget.load import load_budget_text
from ucalc.cli import app
from ucalc.engines import montecarlo
from ucalc.engines.gum import propagate
from ucalc.statement import state

from .conftest import BUDGETS

runner = CliRunner()

DUPLICATE = """ucalc: 1
title: mean of two readings
measurand: {symbol: c, unit: ug/L}
model: 'c = x'
inputs:
  x: {unit: ug/L, replicates: {values: [12.1, 12.5]}}
"""
TRIPLICATE = DUPLICATE.replace("[12.1, 12.5]", "[12.1, 12.5, 12.2]").replace("two", "three")


def _t_interval(values: list[float], p: float = 0.95) -> tuple[float, float]:
    # JCGM 101 6.4.9: the mean of n readings is x̄ + (s/sqrt(n)) t_{n-1}; its interval from scipy.stats.t
    n = len(values)
    half = stats.t.ppf(0.5 + p / 2, n - 1) * float(np.std(values, ddof=1)) / math.sqrt(n)
    return float(np.mean(values)) - half, float(np.mean(values)) + half


@pytest.mark.parametrize(("text", "values"), [(DUPLICATE, [12.1, 12.5]), (TRIPLICATE, [12.1, 12.5, 12.2])],
                         ids=["duplicate", "triplicate"])
def test_variance_that_does_not_exist_is_not_reported(text: str, values: list[float]) -> None:
    budget = load_budget_text(text)
    r = montecarlo.simulate(budget, trials=400_000, seed=5)
    assert r.standard_uncertainty is None and r.heavy_tailed == ("x",) and r.estimate == "median"
    low, high = _t_interval(values)
    # order statistic of 4e5 draws: standard error sqrt(p(1-p)/M)/f(q) in scale units; 0.05 is > 4 of them
    assert r.interval[0] == pytest.approx(low, abs=0.05) and r.interval[1] == pytest.approx(high, abs=0.05)
    assert r.value == pytest.approx(float(np.mean(values)), abs=0.005)  # the median of a symmetric t
    assert r.precision is not None and r.precision.standard_uncertainty is None
    assert any("not defined" in n for n in r.notes)


def test_json_and_text_say_the_standard_uncertainty_is_not_defined(write_budget) -> None:
    path = write_budget(DUPLICATE)
    out = runner.invoke(app, ["run", str(path), "-m", "both", "-n", "100000", "--seed", "2", "-f", "json"])
    assert out.exit_code == 0, out.output
    mc = json.loads(out.stdout)["monte_carlo"]
    assert mc["standard_uncertainty"] is None and mc["heavy_tailed_inputs"] == ["x"]
    assert mc["precision"]["standard_uncertainty"] is None and mc["precision"]["interval_low"] > 0
    text = runner.invoke(app, ["run", str(path), "-m", "both", "-n", "100000", "--seed", "2"]).stdout
    assert "standard deviation not defined (an input's variance does not exist)" in text


def test_adaptive_duplicate_stabilises_on_endpoints_and_reruns_agree() -> None:
    budget = load_budget_text(DUPLICATE)
    runs = [montecarlo.simulate_adaptive(budget, digits=1, seed=s) for s in (1, 2, 3)]
    p = 0.95
    delta = montecarlo.numerical_tolerance(montecarlo.interval_scale(runs[0].interval, p), 1)
    for r in runs:
        assert r.standard_uncertainty is None and r.trials < 5_000_000
    for a in runs:  # JCGM 101 7.9: each endpoint is stable to delta, so reruns agree within delta
        for b in runs:
            assert abs(a.interval[0] - b.interval[0]) <= delta and abs(a.interval[1] - b.interval[1]) <= delta
    low, high = _t_interval([12.1, 12.5])
    assert abs(runs[0].interval[0] - low) <= delta and abs(runs[0].interval[1] - high) <= delta


def test_intervals_by_partition_equal_a_full_sort() -> None:
    # JCGM 101 7.7.1 and 7.7.2 computed directly on the fully sorted values (numpy sort) as the reference
    rng = np.random.default_rng(4)
    for m, p in [(10_001, 0.95), (20_000, 0.99), (5_000, 0.5), (7_919, 0.6827)]:
        y = rng.gamma(2.0, size=m)
        ys = np.sort(y)
        q = int(p * m) if float(p * m).is_integer() else int(p * m + 0.5)
        r = (m - q) // 2 if (m - q) % 2 == 0 else (m - q + 1) // 2
        widths = ys[q:] - ys[:m - q]
        best = int(np.argmin(widths))
        sym, short, _ = montecarlo._order_statistics(y.copy(), p)
        assert sym == (ys[r - 1], ys[r + q - 1])
        assert short == (ys[best], ys[best + q])


def test_block_standard_errors_match_sampling_theory() -> None:
    # Y = X ~ N(0, 1), 10 blocks of 10^5: standard error of the mean 1/sqrt(M); of a p-quantile
    # sqrt(p(1-p)/M)/phi(z_p) (asymptotic variance of an order statistic); of s, 1/sqrt(2(M-1)). Ten blocks give
    # each estimate a relative scatter of about 1/sqrt(18), so the band is a factor 1.8.
    budget = load_budget_text("ucalc: 1\ntitle: t\nmeasurand: {symbol: Y}\nmodel: 'Y = X'\n"
                              "inputs:\n  X: {value: 0, components: [{name: g, standard: 1}]}\n")
    r = montecarlo.simulate(budget, trials=1_000_000, seed=3)
    pr = r.precision
    assert pr is not None and pr.blocks == 10 and pr.trials_per_block == 100_000
    m = 1_000_000
    quantile = math.sqrt(0.025 * 0.975 / m) / stats.norm.pdf(stats.norm.ppf(0.975))
    for estimate, theory in [(pr.value, 1 / math.sqrt(m)), (pr.low, quantile), (pr.high, quantile),
                             (pr.standard_uncertainty, 1 / math.sqrt(2 * (m - 1)))]:
        assert estimate is not None and theory / 1.8 < estimate < theory * 1.8


def test_same_result_for_a_seed_whatever_the_block_size_with_precision() -> None:
    text = (BUDGETS / "nickel-in-drinking-water.yaml").read_text(encoding="utf-8")
    a = montecarlo.simulate(load_budget_text(text), trials=60_000, seed=8, block_size=60_000)
    b = montecarlo.simulate(load_budget_text(text), trials=60_000, seed=8, block_size=4_099)
    assert a == b  # every figure, the precision and the histogram


def test_undecided_verdict_and_the_trials_that_would_decide() -> None:
    # margin 0.001 to delta, endpoint scatter 0.002: undecided; the scatter falls as 1/sqrt(M), so the margin
    # exceeds it at M (0.002/0.001)^2 = 4 times the trials (JCGM 101 7.9.4 scaling)
    v = montecarlo.Validation(2, 0.005, 0.004, 0.001, (0.0, 1.0), 0.002, 0.0005, 100_000)
    assert v.passed and v.verdict == "undecided" and v.rerun_trials == 400_000
    decided = montecarlo.Validation(2, 0.005, 0.009, 0.001, (0.0, 1.0), 0.002, 0.0005, 100_000)
    assert decided.verdict == "failed" and decided.rerun_trials is None


def test_failed_validation_names_the_rectangular_input() -> None:
    # JCGM 101 9.2.4: X4 rectangular with u = 10 dominates, the GUM interval is too wide
    a = 10 * math.sqrt(3)
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: Y}\nmodel: 'Y = X1 + X2 + X3 + X4'\ninputs:\n"
            + "".join(f"  X{i}: {{value: 0, components: [{{name: g, standard: 1}}]}}\n" for i in (1, 2, 3))
            + f"  X4: {{value: 0, components: [{{name: r, half_width: {a!r}, distribution: rectangular}}]}}\n")
    b = load_budget_text(text)
    gum = propagate(b)
    mc = montecarlo.simulate(b, trials=400_000, seed=1)
    v = montecarlo.validate(gum, mc, 2, b)
    assert v.verdict == "failed"
    assert v.causes == ("input 'X4' is rectangular (97% of u_c²)",)
    stated = state(b, gum, montecarlo.with_validation(mc, v))
    assert stated.method == "monte-carlo" and "input 'X4' is rectangular" in stated.reason


def test_few_dof_component_inside_a_many_dof_input_is_named() -> None:
    # a mean of 4 results (a t with 3 dof, JCGM 101 6.4.9) beside a larger Gaussian term in one input: the input's
    # W-S dof is high, but the t_3 component's heavy tails still widen the interval; its own share of u_c^2 here is
    # 0.2 / (1 + 0.2) = 17 %, so it is named (before, only components with a quarter of their input's variance were)
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: Y}\nmodel: 'Y = X'\ninputs:\n"
            "  X: {value: 10, components: [{name: ref, standard: 1}, "
            "{name: mean, standard: 0.4472135955, dof: 3}]}\n")
    b = load_budget_text(text)
    assert montecarlo.departures(b, propagate(b)) == (
        "input 'X' has a component that is a t with 3 degrees of freedom (17% of u_c²)",)


def test_non_linearity_is_named() -> None:
    # Y = X^2 at X = 0 (JCGM 101 9.3-like): first-order u_c is 0, the curvature term is (1/2)*2*u^2 = 1
    b = load_budget_text("ucalc: 1\ntitle: t\nmeasurand: {symbol: Y}\nmodel: 'Y = X ** 2'\ncoverage: {k: 2}\n"
                         "inputs:\n  X: {value: 0, components: [{name: g, standard: 1}]}\n")
    causes = montecarlo.departures(b, propagate(b))
    assert causes == ("the model is non-linear in 'X' (curvature term (1/2)|∂²f/∂X²|u² is while u_c is zero)",)


@pytest.mark.parametrize("budget_file", sorted(BUDGETS.glob("*.yaml")), ids=lambda p: p.name)
def test_every_example_states_one_result(budget_file) -> None:
    args = ["run", str(budget_file), "-m", "both", "-n", "50000", "--seed", "4"]
    data = json.loads(runner.invoke(app, [*args, "-f", "json"]).stdout)
    result, verdict = data["result"], data["monte_carlo"]["validation"]["verdict"]
    assert result["method"] == ("gum" if verdict == "passed" else "monte-carlo")  # JCGM 101 8.2
    text = runner.invoke(app, args).stdout
    assert result["line"].split(" = ")[1].split(" ")[0] in text
    if result["method"] == "monte-carlo":  # no bold GUM result line that would contradict the interval
        assert all(line.startswith(("GUM: ", "  ")) for line in text.splitlines() if ", U = " in line)
        assert "coverage interval" in result["line"] and result["expanded_uncertainty"] is None


def test_budget_fixes_the_reporting_method(write_budget, tmp_path) -> None:
    fixed = DUPLICATE + "reporting: {method: gum, reason: the method validation report requires it}\n"
    path = write_budget(fixed)
    data = json.loads(runner.invoke(app, ["run", str(path), "-m", "both", "-n", "20000", "--seed", "1",
                                          "-f", "json"]).stdout)
    assert data["result"]["method"] == "gum"
    assert data["result"]["reason"] == "the budget fixes the reporting method: the method validation report requires it"
    mc_path = write_budget(DUPLICATE + "reporting: {method: monte-carlo, reason: duplicates}\n", "mc.yaml")
    data = json.loads(runner.invoke(app, ["run", str(mc_path), "-f", "json", "--seed", "1", "-n", "20000"]).stdout)
    assert data["result"]["method"] == "monte-carlo" and data["monte_carlo"]["trials"] == 20000
    table = tmp_path / "rows.csv"
    table.write_text("x\n12.3\n", encoding="utf-8")
    out = runner.invoke(app, ["batch", str(mc_path), str(table), "-o", str(tmp_path / "o.csv")])
    assert out.exit_code == 2 and "fixes Monte Carlo as its reporting method (duplicates)" in out.stderr
    bad = write_budget(DUPLICATE + "reporting: {method: bayes, reason: x}\n", "bad.yaml")
    out = runner.invoke(app, ["check", str(bad)])
    assert out.exit_code == 2 and "reporting" in out.stderr


@pytest.mark.parametrize("trials", ["100000000000", "99"])
def test_absurd_trials_are_refused(trials: str) -> None:
    out = runner.invoke(app, ["run", str(BUDGETS / "stock-standard.yaml"), "-m", "mc", "-n", trials])
    assert out.exit_code == 2 and "Traceback" not in out.output
