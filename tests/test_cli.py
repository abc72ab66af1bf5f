"""The command line through typer's CliRunner: exit codes and output."""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

from ucalc.cli import app

from .conftest import BUDGETS, REFERENCE

runner = CliRunner()


@pytest.mark.parametrize("budget", sorted(BUDGETS.glob("*.yaml")), ids=lambda p: p.name)
def test_every_example_budget_checks_and_runs(budget) -> None:
    check = runner.invoke(app, ["check", str(budget)])
    assert check.exit_code == 0, check.output
    assert "ok (" in check.output
    run = runner.invoke(app, ["run", str(budget)])
    assert run.exit_code == 0, run.output
    assert ", U = " in run.output and "coverage" in run.output


def test_run_json_keys_and_values() -> None:
    result = runner.invoke(app, ["run", str(REFERENCE / "jcgm100_h1.yaml"), "--format", "json"])
    assert result.exit_code == 0
    data = json.loads(result.stdout)
    for key in ("measurand", "unit", "value", "standard_uncertainty", "effective_dof", "coverage_factor",
                "coverage_probability", "expanded_uncertainty", "contributions"):
        assert key in data
    assert data["measurand"] == "l" and data["unit"] == "mm"
    assert round(data["standard_uncertainty"] * 1e6) == 32  # JCGM 100 H.1.5: u_c = 32 nm  # from memory
    row = data["contributions"][0]
    assert set(row) == {"input", "value", "unit", "standard_uncertainty", "dof", "sensitivity", "contribution",
                        "variance_share"}
    assert data["contributions"][0]["input"] == "l_s"  # largest contribution first (25 nm, Table H.1)


def test_json_null_for_infinite_dof_and_fixed_k() -> None:
    result = runner.invoke(app, ["run", str(REFERENCE / "cg4_a1.yaml"), "-f", "json"])
    data = json.loads(result.stdout)
    assert data["effective_dof"] is None and data["coverage_probability"] is None
    assert data["coverage_factor"] == 2


def test_second_order_flag() -> None:
    result = runner.invoke(app, ["run", str(REFERENCE / "jcgm100_h1.yaml"), "--second-order", "-f", "json"])
    assert result.exit_code == 0
    assert round(json.loads(result.stdout)["standard_uncertainty"] * 1e6) == 34  # JCGM 100 H.1.7  # from memory


def test_bad_budget_exits_2_with_located_lines(write_budget) -> None:
    path = write_budget("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = a + b'\n"
                        "inputs:\n  a: {value: 1, components: [{name: s, standard: -1}]}\n")
    result = runner.invoke(app, ["check", str(path)])
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert lines == [
        f"{path}:4:17: model line 'y': unknown name 'b'",
        f"{path}:6:50: input 'a': components[0].standard: must be greater than 0 (got -1)",
    ]
    assert "Traceback" not in result.output


def test_missing_file_exits_2() -> None:
    result = runner.invoke(app, ["run", "no-such-budget.yaml"])
    assert result.exit_code == 2
    assert "no-such-budget.yaml: cannot read budget file" in result.stderr


def test_second_order_with_correlations_is_refused() -> None:
    result = runner.invoke(app, ["run", str(BUDGETS / "internal-standard-ratio.yaml"), "--second-order"])
    assert result.exit_code == 2
    assert "need uncorrelated inputs" in result.stderr


def test_version_and_help() -> None:
    from ucalc import __version__

    assert runner.invoke(app, ["--version"]).stdout.strip() == f"ucalc {__version__}"
    help_text = runner.invoke(app, ["--help"]).stdout
    for command in ("check", "run", "report", "improve", "batch"):
        assert command in help_text
