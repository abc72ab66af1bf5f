"""Every budget problem is one located line; these pin the exact messages (file:line:col: subject: rule)."""

from __future__ import annotations

from typing import Any

import pytest

from ucalc.budget.load import load_budget_text
from ucalc.errors import BudgetErrors

GOOD = """\
ucalc: 1
title: t
measurand: {symbol: c, unit: mg/L}
model: |
  k = m / V
  c = k * P
inputs:
  m:
    value: 100.28
    unit: mg
    components:
      - {name: balance, expanded: 0.1, k: 2}
  P:
    value: 0.9999
    components: [{name: purity, half_width: 0.0001, distribution: rectangular}]
  V:
    value: 100
    unit: mL
    components:
      - {name: flask, half_width: 0.1, distribution: triangular}
"""


def errors_of(text: str) -> list[str]:
    with pytest.raises(BudgetErrors) as info:
        load_budget_text(text, "b.yaml")
    return [e.message for e in info.value.errors]


def test_good_budget_loads() -> None:
    budget = load_budget_text(GOOD, "b.yaml")
    assert budget.model.inputs == ("m", "P", "V")
    assert [line.name for line in budget.model.lines] == ["k", "c"]


@pytest.mark.parametrize(
    ("old", "new", "expected"),
    [
        ("half_width: 0.1, distribution: triangular", "half_width: -0.1, distribution: triangular",
         "b.yaml:20:35: input 'V': components[0].half_width: must be greater than 0 (got -0.1)"),
        ("expanded: 0.1, k: 2", "expanded: 0.1",
         "b.yaml:12:9: input 'm': components[0]: 'expanded' needs its coverage factor 'k'"),
        ("expanded: 0.1, k: 2", "expanded: 0.1, k: 2, standard: 0.05",
         "b.yaml:12:9: input 'm': components[0]: give exactly one of 'standard', 'expanded' (with 'k') or "
         "'half_width' (with 'distribution'); got standard, expanded"),
        ("distribution: rectangular", "distribution: uniform",
         "b.yaml:15:67: input 'P': components[0].distribution: must be one of 'normal', 'rectangular', "
         "'triangular', 'arcsine', 'trapezoidal' or 'curvilinear_trapezoid' (got 'uniform')"),
        ("  k = m / V", "  k = m / VV",
         "b.yaml:5:11: model line 'k': unknown name 'VV'; did you mean 'V'?"),
        ("  k = m / V\n  c = k * P", "  c = k * P\n  k = m / V",
         "b.yaml:5:7: model line 'c': 'k' is used before the line that defines it (or defines itself)"),
        ("  k = m / V", "  m = m / V",
         "b.yaml:5:3: model line 'm': 'm' is defined twice (as an input or an earlier model line)"),
        ("    unit: mL", "    unit: flasks",
         "b.yaml:18:11: input 'V': unit 'flasks' is not known (UndefinedUnitError)"),
        ("    value: 100\n", "    value: 0\n",
         "b.yaml:5:3: model line 'k': the value is not finite at the estimates (division by zero)"),
        ("  c = k * P", "  c = k * sqrt(P - 0.9999)",
         "b.yaml:6:3: model line 'c': the sensitivity coefficient for 'P' is not finite at the estimates"),
        ("    value: 100.28", "    valeu: 100.28",
         "b.yaml:9:5: input 'm': unknown key 'valeu'; did you mean 'value'?"),
        ("ucalc: 1", "ucalc: 2",
         "b.yaml:1:8: ucalc: budget format version 2 is not supported; this ucalc reads version 1"),
        ("  c = k * P", "  c = k ^ P", "b.yaml:6:7: model line 'c': '^' is not a power operator; write '**'"),
        ("  c = k * P", "  c = k * P.__class__",
         "b.yaml:6:11: model line 'c': name '__class__' is not allowed: names may not start with '_' or hold '__'"),
        ("title: t\n", "title: t\ntitle: u\n", "b.yaml:3:1: YAML: found duplicate key \"title\""),
    ],
)
def test_error_messages(old: str, new: str, expected: str) -> None:
    assert old in GOOD
    assert expected in errors_of(GOOD.replace(old, new, 1))


def test_every_problem_is_listed() -> None:
    text = GOOD.replace("half_width: 0.1,", "half_width: -0.1,").replace("k = m / V", "k = m / W")
    assert len(errors_of(text)) == 2


def test_correlation_problems() -> None:
    corr = ("correlations:\n  - {between: [m, V], r: 0.9}\n  - {between: [m, P], r: 0.9}\n"
            "  - {between: [P, V], r: -0.9}\n")
    assert errors_of(GOOD + corr) == [
        "b.yaml:21:1: correlations: the correlation matrix of P, V, m is not positive semi-definite "
        "(smallest eigenvalue -0.8); the coefficients contradict each other"
    ]
    assert errors_of(GOOD + "correlations:\n  - {between: [m, Q], r: 0.5}\n") == [
        "b.yaml:22:19: correlation 1: unknown input 'Q'"
    ]
    assert errors_of(GOOD + "correlations:\n  - {between: [m, V], r: 1.5}\n") == [
        "b.yaml:22:26: correlation 1: r: must be at most 1 (got 1.5)"
    ]


def test_last_line_must_define_the_measurand() -> None:
    assert errors_of(GOOD.replace("symbol: c,", "symbol: conc,")) == [
        "b.yaml:6:3: model line 'c': the last model line defines 'c' but the measurand is 'conc'"
    ]


def test_dof_below_one_is_refused() -> None:
    text = GOOD.replace("{name: balance, expanded: 0.1, k: 2}", "{name: balance, standard: 0.05, dof: 0.5}")
    assert errors_of(text) == ["b.yaml:12:46: input 'm': components[0].dof: must be at least 1 (got 0.5)"]


def test_yaml_tags_are_refused() -> None:
    text = GOOD.replace("title: t", "title: !!python/object/apply:os.system ['echo hi']")
    (message,) = errors_of(text)
    assert message.startswith("b.yaml:2:") and "not allowed" in message


def test_infinite_dof_may_be_written() -> None:
    text = GOOD.replace("{name: balance, expanded: 0.1, k: 2}", "{name: balance, expanded: 0.1, k: 2, dof: .inf}")
    budget = load_budget_text(text, "b.yaml")
    assert budget.quantities["m"].dof == float("inf")


# ---- the error classes: one module, structured fields, pickling, parameters shown as options by the CLI ----


def _all_errors() -> list[Exception]:
    from ucalc import errors

    where = errors.Location("b.yaml", 3, 7)
    return [
        errors.UcalcError("plain text"),
        errors.BudgetError("must be a number", location=where, subject="input 'm'"),
        errors.BudgetErrors([errors.BudgetError("b", location=errors.Location("b.yaml", 9, 1)),
                             errors.BudgetError("a", location=where)]),
        errors.ExpressionError("'^' is not a power operator; write '**'", 5),
        errors.UnitError("cannot add 'mL' to 'mg'", 3),
        errors.ComputationError("needs uncorrelated inputs", subject="second_order", location=errors.Location("b")),
        errors.MonteCarloError("every trial gave a non-finite model value"),
        errors.OutputError("out.csv", "is a folder; give a file name"),
        errors.OptionError("target", "must be positive (got '-1')"),
    ]


def test_every_error_class_lives_in_the_errors_module() -> None:
    import re

    from .conftest import ROOT

    found = []
    for path in (ROOT / "ucalc").rglob("*.py"):
        if path.name != "errors.py":
            text = path.read_text(encoding="utf-8")
            found += [f"{path.name}: {m}" for m in re.findall(r"^class (\w+(?:Error|Errors))\b", text, re.M)]
    assert found == []


def test_error_messages_are_built_from_their_fields() -> None:
    assert [str(e) for e in _all_errors()] == [
        "plain text",
        "b.yaml:3:7: input 'm': must be a number",
        "b.yaml:3:7: a\nb.yaml:9:1: b",
        "'^' is not a power operator; write '**'",
        "cannot add 'mL' to 'mg'",
        "b: second_order: needs uncorrelated inputs",
        "Monte Carlo: every trial gave a non-finite model value",
        "out.csv: is a folder; give a file name",
        "target: must be positive (got '-1')",
    ]


def test_errors_pickle_with_their_fields() -> None:
    import pickle

    for error in _all_errors():
        copy = pickle.loads(pickle.dumps(error))  # noqa: S301 - our own objects, round trip
        assert type(copy) is type(error)
        assert str(copy) == str(error)
        assert {k: str(v) for k, v in vars(copy).items()} == {k: str(v) for k, v in vars(error).items()}


def test_the_command_line_names_its_options(write_budget: Any) -> None:
    from typer.testing import CliRunner

    from ucalc.cli import app

    runner = CliRunner()
    path = write_budget(GOOD + "correlations:\n  - {between: [m, V], r: 0.5}\n")
    result = runner.invoke(app, ["run", str(path), "--second-order"])
    assert result.exit_code == 2
    assert result.stderr == (f"{path}: --second-order: second-order terms (JCGM 100 5.1.2 note) need uncorrelated "
                             "inputs; use --method mc (JCGM 101) for this model\n")
    result = runner.invoke(app, ["improve", str(path), "--target", "5x"])
    assert (result.exit_code, result.stderr) == (2, "--target: '5x' is not a number or a percentage such as 5%\n")


def test_the_python_interface_names_its_parameters(write_budget: Any) -> None:
    import ucalc
    from ucalc.errors import ComputationError, OptionError

    budget = ucalc.load(write_budget(GOOD + "correlations:\n  - {between: [m, V], r: 0.5}\n", "c.yaml"))
    with pytest.raises(ComputationError) as info:
        budget.propagate(second_order=True)
    assert info.value.subject == "second_order"
    assert str(info.value).endswith("c.yaml: second_order: second-order terms (JCGM 100 5.1.2 note) need "
                                    "uncorrelated inputs; use --method mc (JCGM 101) for this model")
    import pandas as pd

    with pytest.raises(OptionError) as option:
        ucalc.batch(budget, pd.DataFrame({"m": [100.0]}), maps={"mass": "m"})
    assert str(option.value) == "maps: 'mass' is not an input of the budget; inputs are P, V, m"


CORRELATED = GOOD + "correlations:\n  - {between: [m, V], r: 0.2}\n"


@pytest.mark.parametrize(
    ("old", "new", "expected"),
    [
        # a tab after a colon, a missing space after a colon, a key out of line: the parser's words plus the fix
        ("title: t", "title:\tt",
         "b.yaml:2:7: YAML: found character '\\t' that cannot start any token; a tab follows a colon; put a space "
         "after ':' instead"),
        ("    value: 0.9999", "    value:0.9999",
         "b.yaml:15:15: YAML: mapping values are not allowed here; a space is missing after the colon of "
         "'value:'; write 'value: ' and then the value"),
        ("    value: 0.9999", "     value: 0.9999",
         "b.yaml:15:5: YAML: expected <block end>, but found '<block mapping start>'; check the indentation: keys "
         "of one mapping start in the same column, and a nested block is indented further than its key (spaces "
         "only)"),
        # a decimal comma: the value is not a number, and the fix is the decimal point
        ("    value: 0.9999", "    value: 0,9999",
         "b.yaml:14:12: input 'P': value: '0,9999' is not a number; write it with a decimal point: 0.9999"),
        ("r: 0.2", "r: 0,2",  # inside {...} the comma splits the number into two entries
         "b.yaml:22:28: unknown key '2': a number written with a decimal comma splits in two inside {...} (',2' "
         "became a key); write the decimal point '.'"),
        # "did you mean" for a misspelt input in correlations
        ("between: [m, V]", "between: [m, VV]",
         "b.yaml:22:19: correlation 1: unknown input 'VV'; did you mean 'V'?"),
    ],
)
def test_messages_say_how_to_fix(old: str, new: str, expected: str) -> None:
    assert old in CORRELATED
    assert errors_of(CORRELATED.replace(old, new)) == [expected]


def test_a_failed_input_gives_no_follow_on_errors() -> None:
    # 'V' fails its own validation; the correlation and the model line naming it must not add "unknown" errors
    text = CORRELATED.replace("half_width: 0.1, distribution: triangular", "half_width: -0.1, distribution: triangular")
    assert errors_of(text) == ["b.yaml:20:35: input 'V': components[0].half_width: must be greater than 0 (got -0.1)"]
