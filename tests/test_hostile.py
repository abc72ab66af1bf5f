"""Hostile budgets are refused with one clear located line and exit code 2; numerical edge cases have clear
outcomes. How long each refusal takes is measured by benchmarks/hostile.py (target: under one second each)."""

from __future__ import annotations

import pytest
from typer.testing import CliRunner

from ucalc.cli import app

from .hostile_cases import BASE, CASES

runner = CliRunner()


@pytest.mark.parametrize("name", list(CASES))
def test_hostile_budget_is_refused(name: str, tmp_path) -> None:
    raw, fragment = CASES[name]
    path = tmp_path / "hostile.yaml"
    path.write_bytes(raw)
    result = runner.invoke(app, ["run", str(path)])
    assert result.exit_code == 2, result.output
    assert fragment in result.stderr
    assert "Traceback" not in result.output
    assert all(line.startswith(str(path)) for line in result.stderr.strip().splitlines())


def test_byte_order_mark_is_accepted(tmp_path) -> None:
    path = tmp_path / "bom.yaml"
    path.write_bytes(b"\xef\xbb\xbf" + (BASE % "x").encode())
    assert runner.invoke(app, ["run", str(path)]).exit_code == 0


def run(write_budget, text: str, *args: str):
    return runner.invoke(app, ["run", str(write_budget(text)), *args])


def test_all_uncertainties_zero(write_budget) -> None:
    r = run(write_budget, "ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = 2 * x'\ninputs:\n  x: {value: 3}\n")
    assert r.exit_code == 0
    assert "y = 6, U = 0" in r.stdout and "the combined uncertainty is zero" in r.stdout


def test_derivative_not_finite_at_the_estimate(write_budget) -> None:
    r = run(write_budget, (BASE % "sqrt(x)").replace("value: 2", "value: 0"))
    assert r.exit_code == 2 and "sensitivity coefficient for 'x' is not finite at the estimates" in r.stderr


def test_model_not_finite_at_the_estimate(write_budget) -> None:
    r = run(write_budget, (BASE % "log(x)").replace("value: 2", "value: 0"))
    assert r.exit_code == 2 and "the value is not finite at the estimates" in r.stderr


@pytest.mark.parametrize(("value", "u"), [("1e-300", "1e-301"), ("1e300", "1e299")])
def test_extreme_magnitudes_propagate(write_budget, value: str, u: str) -> None:
    text = (BASE % "3 * x").replace("value: 2", f"value: {value}").replace("standard: 0.1", f"standard: {u}")
    r = run(write_budget, text, "-f", "json")
    assert r.exit_code == 0, r.output
    import json

    data = json.loads(r.stdout)
    assert data["standard_uncertainty"] == pytest.approx(3 * float(u), rel=1e-12)


def test_underflowing_product_is_explained(write_budget) -> None:
    text = (BASE % "x * x").replace("value: 2", "value: 1e-300").replace("standard: 0.1", "standard: 1e-302")
    r = run(write_budget, text)
    assert r.exit_code == 2 and "underflows" in r.stderr


def test_effective_dof_below_one(write_budget) -> None:
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = a - b'\ninputs:\n"
            "  a: {value: 2, components: [{name: a, standard: 1, dof: 1}]}\n"
            "  b: {value: 1, components: [{name: b, standard: 1, dof: 1}]}\n"
            "correlations:\n  - {between: [a, b], r: 0.999}\n")
    r = run(write_budget, text)
    assert r.exit_code == 2 and "effective degrees of freedom" in r.stderr and "below 1" in r.stderr


def test_exit_codes(write_budget, monkeypatch) -> None:
    good = write_budget(BASE % "x", "good.yaml")
    assert runner.invoke(app, ["run", str(good)]).exit_code == 0
    assert runner.invoke(app, ["check", str(write_budget("ucalc: 2\n", "bad.yaml"))]).exit_code == 2
    assert runner.invoke(app, ["run", str(good), "--trials", "5", "-m", "mc"]).exit_code == 2  # bad option value
    import ucalc.engines.gum as gum

    def broken(*args, **kwargs):
        raise RuntimeError("a defect")

    monkeypatch.setattr(gum, "propagate", broken)
    result = runner.invoke(app, ["run", str(good)])
    assert result.exit_code not in (0, 2)  # anything else is a bug, reported as such
