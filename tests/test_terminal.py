"""Terminal output at 80 and 120 columns: the budget and improvement tables fit, nothing is cut, figures are right.

Output sent to a pipe (CliRunner) follows COLUMNS, as documented in docs/cli.md.
"""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

from ucalc.cli import app
from ucalc.reports.common import dof_text, estimate_text, fig, relative_text, share_text

from .conftest import BUDGETS, REFERENCE

runner = CliRunner()
WIDTHS = (80, 120)


def _run(args: list[str], width: int) -> str:
    result = runner.invoke(app, args, env={"COLUMNS": str(width)})
    assert result.exit_code == 0, result.output
    return result.stdout


def _rows(text: str, names: list[str]) -> dict[str, list[str]]:
    """The table lines that start with an input's name, split on white space (the first such line)."""
    rows: dict[str, list[str]] = {}
    for line in text.splitlines():
        tokens = line.split()
        if tokens and tokens[0] in names and tokens[0] not in rows:
            rows[tokens[0]] = tokens
    return rows


@pytest.mark.parametrize("width", WIDTHS)
def test_jcgm100_h1_budget_table_at_width(width: int) -> None:
    # JCGM 100:2008 H.1, Table H.2 (end-gauge calibration): u(x_i), nu_i and |c_i| u(x_i) per input  # from memory
    # l_s: u = 25 nm, nu = 18, u_i(y) = 25 nm; d: 9.7 nm, 25.6, 9.7 nm; d_alpha: 0.58e-6 /K, 50, 2.9 nm;
    # d_theta: 0.029 K, 2, 16.6 nm (c = -l_s alpha_s = -0.575 um/K); u_c = 32 nm
    text = _run(["run", str(REFERENCE / "jcgm100_h1.yaml")], width)
    assert max(len(line) for line in text.splitlines()) <= width
    assert "…" not in text
    rows = _rows(text, ["l_s", "d", "d_alpha", "d_theta"])
    # the five columns after the unit: u(x_i), nu_i, c_i, u_i(y) in mm, share of u_c^2 in %
    assert rows["l_s"][-5:-3] == ["2.50e-5", "18"] and rows["l_s"][-2] == "2.50e-5"
    assert rows["d_theta"][-5:-3] == ["0.0289", "2"] and rows["d_theta"][-2] == "1.66e-5"
    assert rows["d_theta"][-3] == "-5.75e-4"
    assert rows["d_alpha"][-5:-3] == ["5.77e-7", "50"] and rows["d_alpha"][-2] == "2.89e-6"
    assert rows["d"][-4] == "25.4"  # Table H.2 prints 25.6 from rounded inputs  # from memory
    assert "u_c = 3.17e-5 mm" in text  # 32 nm in H.1.6  # from memory


@pytest.mark.parametrize("width", WIDTHS)
@pytest.mark.parametrize("budget", sorted(BUDGETS.glob("*.yaml")), ids=lambda p: p.name)
def test_every_example_fits_the_width_with_whole_numbers(budget, width: int) -> None:
    text = _run(["run", str(budget)], width)
    lines = text.splitlines()
    assert max(len(line) for line in lines) <= width, budget.name
    assert "…" not in text
    data = json.loads(_run(["run", str(budget), "-f", "json"], width))
    table = text.split("\nInputs (")[0]
    for c in data["contributions"]:
        # the input's row, or its two rows where the table is printed in two parts at a narrow width
        parts = [line.split(maxsplit=1) for line in table.splitlines() if line.split()[:1] == [c["input"]]]
        assert 1 <= len(parts) <= 2, (budget.name, c["input"])
        row = " " + " ".join(p[1] for p in parts if len(p) > 1) + " "
        share = c["variance_share"]
        for figure in (share_text(share), fig(c["contribution"]), fig(c["standard_uncertainty"]),
                       estimate_text(c["value"], c["standard_uncertainty"]), fig(c["sensitivity"]),
                       dof_text(float("inf") if c["dof"] is None else c["dof"])):
            assert f" {figure} " in row, (budget.name, c["input"], figure, row)


@pytest.mark.parametrize("width", WIDTHS)
def test_improve_table_fits_and_wraps_whole_words(width: int) -> None:
    text = _run(["improve", str(BUDGETS / "nickel-in-drinking-water.yaml")], width)
    lines = text.splitlines()
    assert max(len(line) for line in lines) <= width
    assert "…" not in text
    words_alone = [line for line in lines if len(line.split()) == 1 and line.startswith(" ")]
    assert len(words_alone) <= 2  # the change text wraps at word breaks, not one word per line
    data = json.loads(_run(["improve", str(BUDGETS / "nickel-in-drinking-water.yaml"), "-f", "json"], width))
    run = _run(["run", str(BUDGETS / "nickel-in-drinking-water.yaml")], width)
    now = text.splitlines()[0].split("now U = ")[1]
    assert f"U = {now}" in run  # the same rounding of U in run and improve (JCGM 100 7.2.6)
    assert data["expanded_uncertainty"] > 0


def test_piped_output_default_width_and_no_colour() -> None:
    result = runner.invoke(app, ["run", str(BUDGETS / "selenium-isotope-dilution.yaml")], env={"COLUMNS": ""})
    assert result.exit_code == 0
    assert "\x1b[" not in result.stdout
    assert max(len(line) for line in result.stdout.splitlines()) <= 100


@pytest.mark.parametrize(
    ("U", "value", "expected"),
    [
        (0.6234, 9.8421, "6.3 %"),  # two significant digits, as U itself (JCGM 100 7.2.6)  # common practice
        (220.0, 100.0, "220 %"),
        (0.0995, 9.8421, "1.0 %"),
        (0.00012, 1.0, "0.012 %"),
    ],
)
def test_relative_expanded_uncertainty_text(U: float, value: float, expected: str) -> None:
    assert relative_text(U, value) == expected


@pytest.mark.parametrize(
    ("nu", "expected"),
    [(6.53, "6.5"), (9.0, "9"), (334.2, "334"), (1000.0, "1000"), (1764010.0, "> 1000"), (float("inf"), "∞")],
)
def test_dof_text(nu: float, expected: str) -> None:
    assert dof_text(nu) == expected
