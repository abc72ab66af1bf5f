"""Improvement planning and scenarios: every figure against a budget recomputed with the change made by hand."""

from __future__ import annotations

import json
import math

import pytest
from typer.testing import CliRunner

from ucalc.budget.load import load_budget_text
from ucalc.cli import app
from ucalc.engines.gum import propagate

from .conftest import BUDGETS

runner = CliRunner()

# three Type A inputs; k fixed so that U = 2 u_c exactly and the known answers below follow by hand
KNOWN = """\
ucalc: 1
title: known answer
measurand: {symbol: y}
model: 'y = x1 + x2 + x3'
coverage: {k: 2}
inputs:
  x1: {replicates: {values: [9.0, 11.0]}}      # s = sqrt(2), n = 2: u^2 = 1
  x2: {replicates: {values: [19.0, 21.0]}}     # u^2 = 1
  x3: {replicates: {values: [4.9, 5.1, 5.0, 5.0]}}
"""


def _u2_x3(n: int) -> float:
    import statistics

    return statistics.stdev([4.9, 5.1, 5.0, 5.0]) ** 2 / n


def improve_json(path, *args: str) -> dict:
    result = runner.invoke(app, ["improve", str(path), "-f", "json", *args])
    assert result.exit_code == 0, result.output
    return json.loads(result.stdout)


def test_options_match_budgets_changed_by_hand(write_budget) -> None:
    data = improve_json(write_budget(KNOWN))
    assert data["expanded_uncertainty"] == pytest.approx(2 * math.sqrt(2 + _u2_x3(4)), rel=1e-12)
    by = {(o["input"], o["action"]): o["expanded_uncertainty"] for o in data["options"]}
    # x1 averaged over 4 replicates with the same s: written by hand as a pooled estimate
    by_hand = KNOWN.replace("x1: {replicates: {values: [9.0, 11.0]}}",
                            "x1: {replicates: {mean: 10.0, pooled: {s: 1.4142135623730951, dof: 1, n: 4}}}")
    assert by[("x1", "4 replicates instead of 2")] == pytest.approx(
        propagate(load_budget_text(by_hand)).expanded_uncertainty, rel=1e-12)
    assert by[("x1", "uncertainty zero (bound)")] == pytest.approx(2 * math.sqrt(1 + _u2_x3(4)), rel=1e-12)
    assert by[("x1", "uncertainty halved")] == pytest.approx(2 * math.sqrt(1.25 + _u2_x3(4)), rel=1e-12)
    reductions = [o["reduction"] for o in data["options"]]
    assert reductions == sorted(reductions, reverse=True)


def test_target_search_finds_the_known_smallest_set(write_budget) -> None:
    # u^2(x1) = u^2(x2) = 2/n. Target U = 1.8, i.e. u_c^2 <= 0.81: one action leaves at least 1 + 2/6; two at
    # 2n and 2n give 1.0, 2n and 3n give 0.83; only 3n and 3n (2/3) reach it
    data = improve_json(write_budget(KNOWN), "--target", "1.8")
    plan = data["target"]
    assert plan["reachable"] is True
    assert sorted((a["input"], a["action"]) for a in plan["actions"]) == [
        ("x1", "6 replicates instead of 2"), ("x2", "6 replicates instead of 2")]
    assert plan["expanded_uncertainty"] == pytest.approx(2 * math.sqrt(2 / 3 + _u2_x3(4)), rel=1e-12)
    assert "exhaustive" in plan["searched"]


def test_unreachable_target_states_the_floor(write_budget) -> None:
    data = improve_json(write_budget(KNOWN), "--target", "10%")  # 10 % of y = 35 is 3.5 > U: met already
    assert data["target"]["reachable"] is True and data["target"]["actions"] == []
    data = improve_json(write_budget(KNOWN), "--target", "0.5")
    plan = data["target"]
    assert plan["reachable"] is False
    assert plan["floor"] == pytest.approx(2 * math.sqrt(2 / 3 + _u2_x3(12)), rel=1e-12)


def test_improve_answers_the_target_on_every_example() -> None:
    for budget in sorted(BUDGETS.glob("*.yaml")):
        result = runner.invoke(app, ["improve", str(budget), "--target", "1%", "--format", "json"])
        assert result.exit_code == 0, (budget.name, result.output)
        data = json.loads(result.stdout)
        plan = data["target"]
        assert plan["target"] == pytest.approx(0.01 * abs(data["value"]), rel=1e-12), budget.name  # 1 % of y
        if data["expanded_uncertainty"] <= plan["target"]:
            assert plan["reachable"] and plan["actions"] == [], budget.name
        elif plan["reachable"]:
            assert plan["actions"] and plan["expanded_uncertainty"] <= plan["target"], budget.name
        else:
            assert plan["floor"] > plan["target"], budget.name


def test_set_changes_a_budget_like_editing_it(write_budget) -> None:
    glass = (KNOWN.replace("x3: {replicates: {values: [4.9, 5.1, 5.0, 5.0]}}",
                           "x3: {glassware: {item: flask, nominal: 100, class: B}}")
             .replace("x1: {replicates", "x1: {unit: mL, replicates")
             .replace("x2: {replicates", "x2: {unit: mL, replicates")
             .replace("measurand: {symbol: y}", "measurand: {symbol: y, unit: mL}"))
    path = write_budget(glass)
    changed = json.loads(runner.invoke(app, ["run", str(path), "-f", "json", "--set", "x3.class=A",
                                             "--set", "x1.n=4"]).stdout)
    by_hand = glass.replace("class: B", "class: A").replace(
        "x1: {unit: mL, replicates: {values: [9.0, 11.0]}}",
        "x1: {unit: mL, replicates: {mean: 10.0, pooled: {s: 1.4142135623730951, dof: 1, n: 4}}}")
    assert changed["expanded_uncertainty"] == pytest.approx(
        propagate(load_budget_text(by_hand)).expanded_uncertainty, rel=1e-12)
    assert path.read_text(encoding="utf-8") == glass  # the file is not touched
    assert changed["settings"] == ["x3.class=A", "x1.n=4"]  # and the output says it is a scenario


def test_set_errors_list_valid_fields(write_budget) -> None:
    path = write_budget(KNOWN)
    r = runner.invoke(app, ["run", str(path), "--set", "x1.colour=red"])
    assert r.exit_code == 2
    assert "--set x1.colour=red: input 'x1': unknown field 'colour'; valid fields: n, replicates.values" in r.stderr
    r = runner.invoke(app, ["run", str(path), "--set", "x9.n=3"])
    assert r.exit_code == 2 and "unknown input 'x9'; inputs are x1, x2, x3" in r.stderr
    r = runner.invoke(app, ["run", str(path), "--set", "x1.n=zero"])
    assert r.exit_code == 2 and "n must be a whole number" in r.stderr
    r = runner.invoke(app, ["run", str(path), "--set", "nonsense"])
    assert r.exit_code == 2 and "write INPUT.FIELD=VALUE" in r.stderr


def test_bad_target_is_refused(write_budget) -> None:
    r = runner.invoke(app, ["improve", str(write_budget(KNOWN)), "--target", "lots"])
    assert r.exit_code == 2 and "is not a number or a percentage" in r.stderr


def test_improve_chart(tmp_path, write_budget) -> None:
    out = tmp_path / "plan.svg"
    r = runner.invoke(app, ["improve", str(write_budget(KNOWN)), "--chart", str(out)])
    assert r.exit_code == 0 and out.read_text(encoding="utf-8").startswith("<svg")


def test_options_from_terms_equal_rebuilt_budgets() -> None:
    # agreement test: improve computes each option from the budget's terms; the reference is the changed budget
    # rebuilt from its data and propagated by `ucalc run` (JCGM 100 clause 5 and G.4.1)
    import copy
    import dataclasses

    from ucalc.budget.load import build_budget
    from ucalc.planning import improve
    from ucalc.scenarios import actions_for
    from ucalc.workflow import load_with_settings

    for path in sorted(BUDGETS.glob("*.yaml")):
        doc, budget = load_with_settings(path)
        result = improve(doc, budget)
        by_label = {(o.action, o.input): o.expanded_uncertainty for o in result.options if o.kind == "action"}
        checked = 0
        for top, raw in doc.data["inputs"].items():
            if not isinstance(raw, dict):
                continue
            for label, new_raw in actions_for(raw):
                found = [U for (action, _), U in by_label.items() if action == label]
                if not found:
                    continue
                data = copy.deepcopy(doc.data)
                data["inputs"][top] = new_raw
                ref = propagate(build_budget(dataclasses.replace(doc, data=data))).expanded_uncertainty
                assert any(U == pytest.approx(ref, rel=1e-11) for U in found), (path.name, top, label)
                checked += 1
        assert checked or not by_label


MORE = """\
ucalc: 1
title: more data
measurand: {symbol: c, unit: ug/L}
model: 'c = x / R'
coverage: {probability: 0.95}
inputs:
  x:
    unit: ug/L
    replicates: {values: [10.2, 9.7, 10.4, 9.9]}
  R:
    recovery:
      found: [0.96, 1.01, 0.93, 0.99]
      reference: {value: 1.0, expanded: 0.02, k: 2}
"""


def test_more_replicates_keep_s_and_take_the_new_dof(write_budget) -> None:
    # JCGM 100 4.2.3: n' replicates with the observed s give u = s/sqrt(n') with n' - 1 dof (by hand, with the
    # recovery term entered as its own u and dof); k = t_0.975 of the truncated nu_eff (G.4.1, G.6.4)
    import statistics

    from scipy import stats

    from ucalc.workflow import load_with_settings

    path = write_budget(MORE)
    budget = load_with_settings(path, ["x.n=12"])[1]
    result = propagate(budget)
    xs = [10.2, 9.7, 10.4, 9.9]
    s, mean = statistics.stdev(xs), statistics.fmean(xs)
    r = budget.quantities["R"]
    t_x, t_r = s / math.sqrt(12) / r.value, mean / r.value**2 * r.standard_uncertainty
    nu = (t_x**2 + t_r**2) ** 2 / (t_x**4 / 11 + t_r**4 / r.dof)
    assert budget.quantities["x"].dof == 11
    assert result.expanded_uncertainty == pytest.approx(stats.t.ppf(0.975, math.floor(nu)) * math.hypot(t_x, t_r),
                                                        rel=1e-12)
    assert any("same scatter as observed" in w for w in budget.quantities["x"].working)


def test_more_recovery_results_do_not_copy_the_data(write_budget) -> None:
    # EURACHEM/CITAC CG4 7.7: u(R) = R sqrt((s/sqrt(n)/mean)^2 + (u_ref/ref)^2) with the found s and n = 8 planned
    # results (dof 7 for the scatter term), not the s of the four results written twice
    import statistics

    from ucalc.planning import improve
    from ucalc.workflow import load_with_settings

    path = write_budget(MORE)
    doc, budget = load_with_settings(path)
    option = next(o for o in improve(doc, budget).options if o.action.startswith("8 results"))
    found = [0.96, 1.01, 0.93, 0.99]
    s, mean = statistics.stdev(found), statistics.fmean(found)
    text = MORE.replace("""    recovery:
      found: [0.96, 1.01, 0.93, 0.99]
      reference: {value: 1.0, expanded: 0.02, k: 2}""", f"""    value: {mean!r}
    components:
      - {{name: scatter, standard: {mean * (s / math.sqrt(8) / mean)!r}, dof: 7}}
      - {{name: reference, standard: {mean * 0.01!r}}}""")
    ref = propagate(load_budget_text(text)).expanded_uncertainty
    assert option.expanded_uncertainty == pytest.approx(ref, rel=1e-12)


def test_zero_for_a_correlated_input_says_why_u_rises(write_budget) -> None:
    # JCGM 100 5.2.2: R = a/b with r(a, b) = 0.9; the correlation term cancels variance, so u(a) = 0 raises U
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: R}\nmodel: 'R = a / b'\ninputs:\n"
            "  a: {value: 100, components: [{name: a, standard: 2}]}\n"
            "  b: {value: 50, components: [{name: b, standard: 1}]}\n"
            "correlations:\n  - {between: [a, b], r: 0.9}\n")
    data = improve_json(write_budget(text))
    zero = next(o for o in data["options"] if o["input"] == "a" and o["kind"] == "zero")
    u_now = math.sqrt((2 / 50) ** 2 + (100 / 2500) ** 2 - 2 * 0.9 * (2 / 50) * (100 / 2500))
    assert data["expanded_uncertainty"] == pytest.approx(1.959963984540054 * u_now, rel=1e-12)
    assert zero["expanded_uncertainty"] == pytest.approx(1.959963984540054 * 100 / 2500, rel=1e-12)
    assert "correlation" in zero["note"] and "'b'" in zero["note"]


def test_plan_says_which_search_it_used(write_budget) -> None:
    data = improve_json(write_budget(KNOWN), "--target", "0.1")
    assert data["target"]["searched"].startswith(("exhaustive", "greedy", "the budget"))
