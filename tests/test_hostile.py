"""Hostile budgets are refused with one clear located line and exit code 2; numerical edge cases have clear
outcomes. How long each refusal takes is measured by benchmarks/hostile.py (target: under one second each)."""

from __future__ import annotations

import csv
import errno
import io
import json
import os
import re
import stat
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest
from typer.testing import CliRunner

from ucalc.cli import app

from .conftest import BUDGETS
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
    data = json.loads(r.stdout)
    assert data["standard_uncertainty"] == pytest.approx(3 * float(u), rel=1e-12)


def test_underflowing_product_is_explained(write_budget) -> None:
    text = (BASE % "x * x").replace("value: 2", "value: 1e-300").replace("standard: 0.1", "standard: 1e-302")
    r = run(write_budget, text)
    assert r.exit_code == 2 and "underflows" in r.stderr


def test_nearly_cancelling_correlation_keeps_the_sample_dof(write_budget) -> None:
    # a - b from the same two paired results (dof 1 each, r = 0.999): the paired difference is a t with 1 dof
    # (Student), so nu_eff = 1 and k = t_0.975(1) = 12.706 (scipy.stats); before, the budget was refused with an
    # effective dof below 1
    from scipy import stats

    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = a - b'\ninputs:\n"
            "  a: {value: 2, components: [{name: a, standard: 1, dof: 1}]}\n"
            "  b: {value: 1, components: [{name: b, standard: 1, dof: 1}]}\n"
            "correlations:\n  - {between: [a, b], r: 0.999}\n")
    r = run(write_budget, text, "-f", "json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.stdout)
    assert data["effective_dof"] == pytest.approx(1.0, rel=1e-9)
    assert data["coverage_factor"] == pytest.approx(stats.t.ppf(0.975, 1), rel=1e-9)


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


# ---- second round: hangs, crashes and unsafe output found by an adversarial pass over the CLI --------------

LEAD = BUDGETS / "lead-in-drinking-water.yaml"


def _chain_budget(lines: int, body: str, x: str, u: str) -> str:
    model = ["a1 = x"] + [f"a{i} = " + body.format(p=f"a{i - 1}") for i in range(2, lines + 1)] + [f"y = a{lines}"]
    return ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: |\n" + "".join(f"  {m}\n" for m in model)
            + f"inputs:\n  x: {{value: {x}, components: [{{name: a, standard: {u}}}]}}\n")


def test_500_chained_lines_give_the_exact_result(write_budget) -> None:
    # y = 500 x, so u(y) = 500 u(x) (JCGM 100 5.1.2 with c = 500); this ended in a RecursionError before
    r = run(write_budget, _chain_budget(500, "{p} + x", "1", "0.001"), "-f", "json")
    assert r.exit_code == 0, r.output
    assert json.loads(r.stdout)["standard_uncertainty"] == pytest.approx(0.5, rel=1e-12)


def test_shared_sub_expressions_are_evaluated_once(write_budget) -> None:
    # a_i = a_(i-1)^2 for 30 lines gives y = x^(2^29), dy/dx = 2^29 x^(2^29 - 1) = 2^29 at x = 1 (power rule);
    # walking the shared sub-trees again and again took 2^30 steps before
    r = run(write_budget, _chain_budget(30, "{p}*{p}", "1", "1e-12"), "-f", "json")
    assert r.exit_code == 0, r.output
    assert json.loads(r.stdout)["standard_uncertainty"] == pytest.approx(2**29 * 1e-12, rel=1e-9)


def test_yaml_merge_key_is_expanded(write_budget) -> None:
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = x'\ninputs:\n  x:\n    value: 2\n"
            "    components:\n      - &common {name: a, standard: 0.3}\n"
            "      - {<<: *common, name: b}\n")  # 'standard' comes from the merged mapping
    r = run(write_budget, text, "-f", "json")
    assert r.exit_code == 0, r.output
    assert json.loads(r.stdout)["standard_uncertainty"] == pytest.approx(0.3 * 2**0.5, rel=1e-12)  # root sum of squares


def test_yaml_merge_key_errors_are_located(write_budget) -> None:
    text = ("ucalc: 1\ntitle: t\nmeasurand: {symbol: y}\nmodel: 'y = x'\ninputs:\n  x:\n    value: 2\n"
            "    components:\n      - &common {name: a, standard: 0.3, colour: red}\n      - {<<: *common, name: b}\n")
    r = run(write_budget, text)
    assert r.exit_code == 2 and "Traceback" not in r.output
    assert all(re.match(r".*budget\.yaml:\d+:\d+: ", line) for line in r.stderr.strip().splitlines())


def test_relative_uncertainty_below_1e_28_is_printed(write_budget) -> None:
    r = run(write_budget, (BASE % "x").replace("value: 2", "value: 1").replace("standard: 0.1", "standard: 1e-29"))
    assert r.exit_code == 0, r.output
    assert "U = 2.0E-29" in r.stdout  # 1.96 x 1e-29 to two significant digits (JCGM 100 7.2.6)


def test_second_order_overflow_is_a_message(write_budget) -> None:
    r = run(write_budget, (BASE % "x*x").replace("standard: 0.1", "standard: 1e200"), "--second-order")
    assert r.exit_code == 2 and "Traceback" not in r.output
    assert r.stderr.startswith(str(Path(r.stderr.split(":")[0]))) and "overflow" in r.stderr


def test_absurd_trial_counts_are_refused(write_budget) -> None:
    r = run(write_budget, BASE % "x", "-m", "mc", "--trials", "5000000000")
    assert r.exit_code == 2 and "--trials" in r.stderr and "budget.yaml" in r.stderr


def test_key_with_a_line_break_stays_on_one_line(write_budget) -> None:
    text = (BASE % "x") + '  "q\\nfake.yaml:1:1: all good":\n    value: 1\n    bogus: 2\n'
    path = write_budget(text)
    r = runner.invoke(app, ["check", str(path)])
    assert r.exit_code == 2
    lines = r.stderr.strip().splitlines()
    assert lines and all(line.startswith(str(path)) for line in lines)
    assert not any(line.startswith("fake.yaml") for line in lines)


def test_markdown_report_escapes_html(write_budget, tmp_path) -> None:
    text = (BASE % "x").replace("title: t", "title: '<script>alert(1)</script>'").replace(
        "name: a", "name: '<img src=x onerror=alert(1)>'")
    out = tmp_path / "r.md"
    r = runner.invoke(app, ["report", str(write_budget(text)), "-o", str(out), "-m", "gum"])
    assert r.exit_code == 0, r.output
    body = out.read_text(encoding="utf-8")
    assert "<script" not in body and "<img" not in body and "&lt;script&gt;" in body


def test_improve_computation_errors_name_the_file(write_budget) -> None:
    text = (BASE % "x * x").replace("value: 2", "value: 1e-300").replace("standard: 0.1", "standard: 1e-302")
    path = write_budget(text)
    r = runner.invoke(app, ["improve", str(path)])
    assert r.exit_code == 2 and r.stderr.startswith(str(path)) and "underflows" in r.stderr, r.output


# ---- outputs ---------------------------------------------------------------------------------------------------


def _disk_full(monkeypatch) -> None:
    import ucalc.outputs

    def full(fd: int) -> None:
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(ucalc.outputs.os, "fsync", full)


@pytest.mark.parametrize("command", ["report", "batch", "improve"])
def test_full_disk_is_reported_and_leaves_nothing(command: str, tmp_path, monkeypatch) -> None:
    table = tmp_path / "s.csv"
    table.write_text("sample,c_inst\nA,2.184\n", encoding="utf-8")
    out = tmp_path / {"report": "r.html", "batch": "o.csv", "improve": "c.svg"}[command]
    args = {"report": ["report", str(LEAD), "-o", str(out), "-m", "gum"],
            "batch": ["batch", str(LEAD), str(table), "-o", str(out)],
            "improve": ["improve", str(LEAD), "--chart", str(out)]}[command]
    _disk_full(monkeypatch)
    r = runner.invoke(app, args)
    assert r.exit_code == 2 and "Traceback" not in r.output
    assert r.stderr.startswith(str(out)) and "disk is full" in r.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["s.csv"]  # no output, no temporary file


def test_force_refuses_devices_and_fifos(tmp_path) -> None:
    fifo = tmp_path / "out.html"
    os.mkfifo(fifo)
    for target in (fifo, Path("/dev/null")):
        r = runner.invoke(app, ["report", str(LEAD), "-o", str(target), "-m", "gum", "--force"])
        assert r.exit_code == 2 and "not a file" in r.stderr
    assert stat.S_ISFIFO(fifo.stat().st_mode)


def test_stale_temporary_files_are_removed(tmp_path) -> None:
    from ucalc.outputs import STARTED, write_atomic

    dead = 2**22 + 12345  # above the usual pid_max of 2^22: no such process
    stale = tmp_path / f".old.csv.ucalc-{dead}-abc12345.tmp"
    fresh = tmp_path / f".new.csv.ucalc-{dead}-def67890.tmp"
    alive = tmp_path / f".mine.csv.ucalc-{os.getpid()}-ghi13579.tmp"
    foreign = tmp_path / ".notes.txt.tmp"
    for p in (stale, fresh, alive, foreign):
        p.write_text("x")
    for p in (stale, alive, foreign):
        os.utime(p, (STARTED - 3600, STARTED - 3600))
    os.utime(fresh, (STARTED + 1, STARTED + 1))
    write_atomic(tmp_path / "result.txt", "ok")
    assert not stale.exists()
    assert fresh.exists() and alive.exists() and foreign.exists()


# ---- tables in -------------------------------------------------------------------------------------------------


def _batch(tmp_path, content: str | bytes, *args: str, name: str = "s.csv", out: str = "o.csv"):
    table = tmp_path / name
    table.write_bytes(content if isinstance(content, bytes) else content.encode("utf-8"))
    result = runner.invoke(app, ["batch", str(LEAD), str(table), "-o", str(tmp_path / out), *args])
    return result, tmp_path / out


def _reference(c_inst: float, f_dil: float | None = None) -> float:
    """The budget run on its own with the row's values (`ucalc run --set`), the path every batch row must match."""
    from ucalc.engines.gum import propagate
    from ucalc.workflow import load_with_settings

    settings = [f"c_inst.value={c_inst}"] + ([f"f_dil.value={f_dil}"] if f_dil is not None else [])
    return propagate(load_with_settings(LEAD, settings)[1]).value


@pytest.mark.parametrize(("content", "args"), [
    ("sample;c_inst;f_dil\nA;2,184;5\nB;0,912;10\n", ()),  # spreadsheet export with a decimal comma
    ("sample\tc_inst\tf_dil\nA\t2.184\t5\nB\t0.912\t10\n", ()),  # tab-separated
    ("sample,C_Inst,F_DIL\nA,2.184,5\nB,0.912,10\n", ()),  # names differing only in case
    ("sample;c_inst;f_dil\nA;2.184;5\nB;0.912;10\n", ("--sep", ";", "--decimal", ".")),
])
def test_spreadsheet_locales_are_read(tmp_path, content: str, args: tuple[str, ...]) -> None:
    r, out = _batch(tmp_path, content, *args)
    assert r.exit_code == 0, r.output
    rows = list(csv.reader(out.read_text(encoding="utf-8").splitlines(), delimiter="\t" if "\t" in content else
                           (";" if ";" in content else ",")))
    header, body = rows[0], rows[1:]
    value = header.index("value")
    values = [float(row[value].replace(",", ".")) for row in body]
    assert values[0] == pytest.approx(_reference(2.184, 5), rel=1e-12)
    assert values[1] == pytest.approx(_reference(0.912, 10), rel=1e-12)


@pytest.mark.parametrize(("content", "fragment"), [
    ("sample,c_inst\nA,2,184\n", "s.csv:2:1: row has 3 cells but the header names 2 columns"),
    ("a;b,c\n1;2,3\n", "give --sep"),
    ("sample;c_inst;x\nA;2,184;1.5\n", "give --decimal"),
    ("sample,c_inst\nA,\"2,184\"\n", "give --decimal"),
    ("sample,x\nA,1\n", "no column is named after an input"),
    ("sample,c_inst,C_INST\nA,1,2\n", "no column"),
    ("sample,c_INST,C_inst\nA,1,2\n", "all match 'c_inst' when case is ignored"),
    ("sample,c_inst,sample\nA,1,2\n", "column 'sample' appears twice"),
    ("sample,c_inst,U\nA,1,2\n", "the table already has a column 'U'"),
    ("sample,error,c_inst\nA,x,1\n", "the table already has a column 'error'"),
    ("sample,c_inst\n" + "A" * 40_000 + ",1\n", "the limit is 32,767"),
    (b"sample,c_inst\nA,\xe92\n", "not UTF-8"),
])
def test_bad_tables_are_refused(tmp_path, content: str | bytes, fragment: str) -> None:
    if fragment == "no column" and isinstance(content, str) and "C_INST" in content:
        # an exact match wins over a case-insensitive one: this table is fine
        r, _ = _batch(tmp_path, content)
        assert r.exit_code == 0, r.output
        return
    r, out = _batch(tmp_path, content)
    assert r.exit_code == 2 and "Traceback" not in r.output
    assert fragment in r.stderr and r.stderr.startswith(str(tmp_path / "s.csv"))
    assert not out.exists()


def test_result_columns_under_a_prefix_keep_the_labs_columns(tmp_path) -> None:
    r, out = _batch(tmp_path, "sample,U,error,c_inst\nA,lab U,lab note,2.184\n", "--prefix", "ucalc_")
    assert r.exit_code == 0, r.output
    rows = list(csv.DictReader(out.read_text(encoding="utf-8").splitlines()))
    assert rows[0]["U"] == "lab U" and rows[0]["error"] == "lab note"
    assert float(rows[0]["ucalc_value"]) == pytest.approx(_reference(2.184), rel=1e-12)


@pytest.mark.parametrize("kind", ["fifo", "device"])
def test_only_regular_files_are_read_as_tables(tmp_path, kind: str) -> None:
    table = tmp_path / "s.csv"
    if kind == "fifo":
        os.mkfifo(table)  # opening it would wait for a writer for ever
    else:
        table.symlink_to("/dev/zero")  # reading it would never end
    r = runner.invoke(app, ["batch", str(LEAD), str(table), "-o", str(tmp_path / "o.csv")])
    assert r.exit_code == 2 and "not a regular file" in r.stderr


@pytest.mark.parametrize("option", ["--limit", "--loq"])
def test_non_finite_limits_are_refused(tmp_path, option: str) -> None:
    r, _ = _batch(tmp_path, "sample,c_inst\nA,2.184\n", option, "nan")
    assert r.exit_code == 2 and "finite" in r.stderr


def test_no_numpy_warning_reaches_stderr(tmp_path) -> None:
    # a separate process, as a user runs it (in-process, pytest's warning filters would hide a leak)
    table = tmp_path / "s.csv"
    table.write_text("sample,c_inst,f_dil\nA,-1e308,1e308\nB,2.184,5\n", encoding="utf-8")
    out = tmp_path / "o.csv"
    r = subprocess.run([sys.executable, "-m", "ucalc.cli", "batch", str(LEAD), str(table), "-o", str(out)],
                       capture_output=True, text=True, timeout=300, env={**os.environ, "PYTHONWARNINGS": "default"})
    assert r.returncode == 2, r.stderr
    assert "Warning" not in r.stderr
    rows = list(csv.DictReader(out.read_text(encoding="utf-8").splitlines()))
    assert rows[0]["error"] and not rows[1]["error"]


# ---- tables out ------------------------------------------------------------------------------------------------

INJECTIONS = ["=HYPERLINK(\"http://example.invalid\",\"x\")", "=1+1", "@SUM(A1:A2)", "+1+1", "-1+1", "\tx", "\rx"]


def test_csv_output_neutralises_formulas(tmp_path) -> None:
    from ucalc.tables import CSV_TEXT_PREFIX

    lines = "sample,c_inst,f_dil\n" + "".join(f"\"{s.replace(chr(34), chr(34) * 2)}\",2.184,5\n" for s in INJECTIONS)
    r, out = _batch(tmp_path, lines + "neg,-1.5,5\n")
    assert r.exit_code == 0, r.output
    rows = list(csv.reader(io.StringIO(out.read_bytes().decode("utf-8"), newline="")))
    samples = [row[0] for row in rows[1:]]
    assert samples[:-1] == [CSV_TEXT_PREFIX + s for s in INJECTIONS]  # OWASP CSV injection advice
    assert rows[-1][1] == "-1.5"  # a number stays a number


def test_xlsx_output_has_no_formulas(tmp_path) -> None:
    from openpyxl import Workbook, load_workbook

    table = tmp_path / "s.xlsx"
    book = Workbook()
    book.active.append(["sample", "c_inst", "note"])
    for sample in INJECTIONS + ["007"]:
        book.active.append([sample, 2.184, "#N/A"])
        for cell in book.active[book.active.max_row]:
            cell.data_type = "s" if isinstance(cell.value, str) else cell.data_type  # text cells, as a lab types
    book.save(table)
    out = tmp_path / "o.xlsx"
    r = runner.invoke(app, ["batch", str(LEAD), str(table), "-o", str(out)])
    assert r.exit_code == 0, r.output
    with zipfile.ZipFile(out) as z:
        sheet = z.read("xl/worksheets/sheet1.xml").decode("utf-8")
    assert "<f>" not in sheet and "<f " not in sheet
    book = load_workbook(out)
    rows = list(book.active.iter_rows(values_only=True))
    header = rows[0]
    samples = [row[0] for row in rows[1:]]
    # the text itself, as string cells (an XML reader turns a CR into LF: XML 1.0 2.11)
    assert samples == [s.replace("\r", "\n") for s in INJECTIONS] + ["007"]
    assert all(cell.data_type == "s" for cell in book.active["A"])
    assert all(row[header.index("note")] == "#N/A" for row in rows[1:])
    c_inst, error = header.index("c_inst"), header.index("error")
    assert all(isinstance(row[c_inst], float) for row in rows[1:])  # numbers from the table stay numbers
    assert all(row[error] is None for row in rows[1:])  # empty results are empty cells


def test_control_characters_reach_xlsx_escaped(tmp_path) -> None:
    from openpyxl import load_workbook

    r, out = _batch(tmp_path, "sample,c_inst\nctl\x01\x1b,2.184\n", out="o.xlsx")
    assert r.exit_code == 0, r.output
    rows = list(load_workbook(out).active.iter_rows(values_only=True))
    assert rows[1][0] == "ctl\\x01\\x1b"  # shown, not dropped: ids stay distinct
