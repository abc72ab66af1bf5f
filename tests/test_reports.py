"""Reports and result statements: content, self-containment, formats and safe writes."""

from __future__ import annotations

import csv
import hashlib
import io
import json
import re

import pytest
from typer.testing import CliRunner

from ucalc.cli import app
from ucalc.reports.common import statement
from ucalc.statement import interval_texts

from .conftest import BUDGETS

runner = CliRunner()
STOCK = BUDGETS / "stock-standard.yaml"


@pytest.mark.parametrize(
    ("args", "expected"),
    [
        # JCGM 100 7.2.6 style: U to two significant digits, y to the same place  # common practice
        (("c", 9.8421, "µg/L", 0.6234, 2.0, 0.95),
         "c = (9.84 ± 0.62) µg/L, k = 2.00, coverage probability about 95 %; relative U = 6.3 %"),
        (("c", 9.8421, "µg/L", 0.0995, 2.0, 0.95),
         "c = (9.84 ± 0.10) µg/L, k = 2.00, coverage probability about 95 %; relative U = 1.0 %"),
        (("c", 123.4, "mg/L", 9.96, 2.0, None),
         "c = (123 ± 10) mg/L, k = 2.00 (about 95 % for a normal distribution); relative U = 8.1 %"),
        (("x", 0.5, "", 0.0123, 2.57, 0.95),
         "x = (0.500 ± 0.012), k = 2.57, coverage probability about 95 %; relative U = 2.5 %"),
    ],
)
def test_statement_table(args, expected: str) -> None:
    assert statement(*args) == expected


def test_html_report_is_self_contained_and_complete(tmp_path) -> None:
    out = tmp_path / "stock.html"
    result = runner.invoke(app, ["report", str(STOCK), "-o", str(out), "--seed", "7", "-n", "20000"])
    assert result.exit_code == 0, result.output
    html = out.read_text(encoding="utf-8")
    assert "<script" not in html
    external = re.findall(r'(?:src|href)\s*=\s*"(?!#)([^"]+)"', html)
    assert external == []  # nothing to fetch: inline CSS, inline SVG
    assert hashlib.sha256(STOCK.read_bytes()).hexdigest() in html
    assert "Monte Carlo seed</dt><dd>7</dd>" in html
    for section in ("Result", "Measurement model", "Budget table", "Inputs and their uncertainty components",
                    "Monte Carlo check", "Caution."):
        assert section in html
    assert html.count("<svg") == 2
    # the report states the same result as the JSON 'result' block of the same run (one result statement)
    data = json.loads(runner.invoke(app, ["run", str(STOCK), "-m", "both", "--seed", "7", "-n", "20000",
                                          "-f", "json"]).stdout)
    stated = data["result"]
    if stated["method"] == "gum":
        expected = statement("c_std", stated["value"], "mg/L", stated["expanded_uncertainty"],
                             stated["coverage_factor"], stated["coverage_probability"])
    else:
        _, low, high = interval_texts(stated["value"], tuple(stated["interval"]))
        expected = f"coverage interval [{low}, {high}] mg/L by Monte Carlo"
    assert expected in html and stated["reason"].split("(")[0] in html
    assert "fill repeatability" in html and "divisor" in html


def test_markdown_twin(tmp_path) -> None:
    out = tmp_path / "stock.md"
    assert runner.invoke(app, ["report", str(STOCK), "-o", str(out), "--seed", "7", "-n", "20000"]).exit_code == 0
    md = out.read_text(encoding="utf-8")
    assert md.startswith("# Stock standard")
    assert "| V |" in md and "## Monte Carlo check" in md and "SHA-256" in md
    # one result statement: the GUM y ± U or, when the GUM is not validated, the Monte Carlo interval (the same
    # figures here, 1002.7 ± 1.6 mg/L)
    assert ("c_std = (1002.7 ± 1.6) mg/L" in md) != (
        "c_std = 1002.7 mg/L, probabilistically symmetric 95 % coverage interval [1001.1, 1004.3] mg/L" in md)


def test_report_never_overwrites_without_force_nor_the_budget(tmp_path) -> None:
    out = tmp_path / "r.html"
    out.write_text("keep me", encoding="utf-8")
    r = runner.invoke(app, ["report", str(STOCK), "-o", str(out), "-m", "gum"])
    assert r.exit_code == 2 and "exists already; use --force" in r.stderr
    assert out.read_text(encoding="utf-8") == "keep me"
    assert runner.invoke(app, ["report", str(STOCK), "-o", str(out), "-m", "gum", "--force"]).exit_code == 0
    assert out.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")
    budget = tmp_path / "b.yaml"
    budget.write_bytes(STOCK.read_bytes())
    r = runner.invoke(app, ["report", str(budget), "-o", str(budget), "-m", "gum", "--force"])
    assert r.exit_code == 2 and "is an input of this command" in r.stderr
    assert budget.read_bytes() == STOCK.read_bytes()
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".")] == []  # no temporary file left


def test_run_csv_budget_table_matches_json() -> None:
    text = runner.invoke(app, ["run", str(STOCK), "-f", "csv"]).stdout
    rows = list(csv.DictReader(io.StringIO(text)))
    data = json.loads(runner.invoke(app, ["run", str(STOCK), "-f", "json"]).stdout)
    assert [r["input"] for r in rows] == [c["input"] for c in data["contributions"]]
    assert float(rows[0]["contribution"]) == data["contributions"][0]["contribution"]


def test_run_markdown_output() -> None:
    out = runner.invoke(app, ["run", str(STOCK), "-f", "md"])
    assert out.exit_code == 0 and "## Budget table" in out.stdout and "| input |" in out.stdout


def test_markdown_escapes_pipes_in_user_text(write_budget) -> None:
    path = write_budget("ucalc: 1\ntitle: 'a | b'\nmeasurand: {symbol: y}\nmodel: 'y = x'\n"
                        "inputs:\n  x: {value: 1, components: [{name: 'p|q', standard: 0.1}]}\n")
    out = runner.invoke(app, ["run", str(path), "-f", "md"]).stdout
    assert "p\\|q" in out


def test_every_example_budget_reports(tmp_path) -> None:
    for budget in sorted(BUDGETS.glob("*.yaml")):
        out = tmp_path / f"{budget.stem}.html"
        r = runner.invoke(app, ["report", str(budget), "-o", str(out), "--seed", "1", "-n", "5000"])
        assert r.exit_code == 0, (budget.name, r.output)


def test_pdf_report_is_a_pdf_with_page_numbers(tmp_path) -> None:
    from pypdf import PdfReader

    pytest.importorskip("weasyprint", reason="the 'pdf' extra is not installed", exc_type=ImportError)
    out = tmp_path / "stock.pdf"
    r = runner.invoke(app, ["report", str(STOCK), "-o", str(out), "-m", "gum"])
    assert r.exit_code == 0, r.output
    reader = PdfReader(out)
    pages = len(reader.pages)
    text = reader.pages[0].extract_text()
    assert f"page 1 of {pages}" in text and "UB-SP02-Cd" in text and "Reviewed by" in text


def test_pdf_without_its_extra_says_how_to_get_it(tmp_path, monkeypatch) -> None:
    import sys

    monkeypatch.setitem(sys.modules, "weasyprint", None)  # as if the 'pdf' extra were not installed
    out = tmp_path / "stock.pdf"
    r = runner.invoke(app, ["report", str(STOCK), "-o", str(out), "-m", "gum"])
    assert r.exit_code == 2 and 'pip install "ucalc[pdf]"' in r.stderr
    assert not out.exists()


@pytest.mark.parametrize(("name", "extra", "message"), [
    ("r.txt", [], "extension '.txt' is not a report format; name the file .html, .pdf or .md"),
    ("report", [], "no extension is not a report format"),
    ("r.pdf", ["-f", "md"], "the extension '.pdf' says pdf, but --format says md"),
])
def test_unknown_or_contradicting_extension_is_refused(tmp_path, name, extra, message) -> None:
    r = runner.invoke(app, ["report", str(STOCK), "-o", str(tmp_path / name), "-m", "gum", *extra])
    assert r.exit_code == 2 and message in r.stderr
    assert list(tmp_path.iterdir()) == []


def test_report_output_checked_before_the_work(tmp_path) -> None:
    r = runner.invoke(app, ["report", str(STOCK), "-o", str(tmp_path / "no" / "r.html")])
    assert r.exit_code == 2 and "folder" in r.stderr and "does not exist; create it first" in r.stderr
    r = runner.invoke(app, ["report", str(STOCK), "-o", str(STOCK)])  # the budget itself, without --force
    assert r.exit_code == 2 and "is an input of this command" in r.stderr


def test_report_accepts_set_and_says_so(tmp_path) -> None:
    out = tmp_path / "r.md"
    r = runner.invoke(app, ["report", str(STOCK), "-o", str(out), "-m", "gum", "--set", "m.value=100.5"])
    assert r.exit_code == 0, r.output
    md = out.read_text(encoding="utf-8")
    assert "Scenario, not the budget as written" in md and "m.value=100.5" in md


def test_document_control_fields(write_budget, tmp_path) -> None:
    path = write_budget("ucalc: 1\ntitle: t\ndocument:\n  method: M-1 <b>x</b>\n  id: UB-1\n  version: 4\n"
                        "  prepared: {by: analyst, date: 2026-01-05}\n  approved: {by: quality manager}\n"
                        "measurand: {symbol: y, unit: mg/L}\nmodel: 'y = x'\n"
                        "inputs:\n  x: {value: 1, unit: mg/L, components: [{name: s, standard: 0.1}]}\n")
    out = tmp_path / "r.html"
    assert runner.invoke(app, ["report", str(path), "-o", str(out), "-m", "gum"]).exit_code == 0
    html = out.read_text(encoding="utf-8")
    assert "UB-1, version 4" in html and "M-1 &lt;b&gt;x&lt;/b&gt;" in html
    assert "<td>Prepared by</td><td>analyst</td><td>2026-01-05</td>" in html
    assert "<td>Approved by</td><td>quality manager</td><td></td>" in html
    bad = write_budget("ucalc: 1\ntitle: t\ndocument: {prepared: {by: a, date: 2026-02-30}}\n"
                       "measurand: {symbol: y}\nmodel: 'y = x'\ninputs:\n  x: {value: 1}\n", "bad.yaml")
    r = runner.invoke(app, ["check", str(bad)])
    assert r.exit_code == 2 and "write dates YYYY-MM-DD" in r.stderr and "Traceback" not in r.output


def test_help_names_option_types_in_words() -> None:
    for command in ("run", "report", "improve", "batch"):
        text = runner.invoke(app, [command, "--help"], env={"COLUMNS": "120"}).stdout
        assert "<bool>" not in text and "list[str]" not in text and "<int" not in text, command
    assert "integer" in runner.invoke(app, ["run", "--help"], env={"COLUMNS": "120"}).stdout
