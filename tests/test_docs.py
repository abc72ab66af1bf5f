"""The documentation works as written: its command lines run, its tables render, its budget is the shipped one.

A command line counts when it sits in a fenced code block, starts with `ucalc ` and names a file of the
repository; every input file it names must then be shipped, so an example runs from a fresh clone.
"""

from __future__ import annotations

import re
import shlex
from pathlib import Path

import pytest
from typer.testing import CliRunner

from ucalc.cli import app

from .conftest import ROOT

DOCS = [ROOT / "README.md", *sorted((ROOT / "docs").glob("*.md"))]
OUTPUT_OPTIONS = {"-o", "--output", "--chart"}
FILE_LIKE = re.compile(r"\.(ya?ml|csv|xlsx|html|md|pdf|svg|json)$")


def _fenced(text: str) -> list[tuple[str, list[str]]]:
    """(info string, lines) of every fenced code block."""
    blocks: list[tuple[str, list[str]]] = []
    current: list[str] | None = None
    info = ""
    for line in text.splitlines():
        if line.startswith("```"):
            if current is None:
                info, current = line[3:].strip(), []
            else:
                blocks.append((info, current))
                current = None
        elif current is not None:
            current.append(line)
    return blocks


def _commands() -> list[tuple[str, list[str]]]:
    found = []
    for doc in DOCS:
        for _info, lines in _fenced(doc.read_text(encoding="utf-8")):
            for line in lines:
                if not line.startswith("ucalc "):
                    continue
                args = shlex.split(line, comments=True)[1:]
                if any((ROOT / a).is_file() for a in args):
                    found.append((f"{doc.name}: {line.split('#')[0].strip()}", args))
    return found


COMMANDS = _commands()


def test_the_docs_hold_command_lines() -> None:
    assert len(COMMANDS) >= 8  # README quick tour, reports, improvement, batch, QC data


@pytest.mark.slow
@pytest.mark.parametrize(("line", "args"), COMMANDS, ids=[c[0] for c in COMMANDS])
def test_every_documented_command_runs(line: str, args: list[str], tmp_path: Path, monkeypatch) -> None:
    for name in ("budgets", "tests"):
        (tmp_path / name).symlink_to(ROOT / name)
    monkeypatch.chdir(tmp_path)
    inputs = [a for i, a in enumerate(args) if FILE_LIKE.search(a) and (i == 0 or args[i - 1] not in OUTPUT_OPTIONS)]
    missing = [a for a in inputs if not (ROOT / a).is_file()]
    assert missing == [], f"{line}: not shipped: {missing}"
    result = CliRunner().invoke(app, args, env={"COLUMNS": "100"})
    assert result.exit_code == 0, (line, result.output)


def test_readme_budget_is_the_shipped_file() -> None:
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    shipped = (ROOT / "budgets" / "stock-standard.yaml").read_text(encoding="utf-8")
    yaml_blocks = ["\n".join(lines) + "\n" for info, lines in _fenced(readme) if info == "yaml"]
    assert shipped in yaml_blocks


def _cells(row: str) -> int:
    return len(re.split(r"(?<!\\)\|", row.strip().strip("|")))


@pytest.mark.parametrize("doc", DOCS, ids=lambda p: p.name)
def test_markdown_tables_render(doc: Path) -> None:
    """Every table (outside code) has a separator row under its header, no blank line inside, and rows with as
    many cells as the header (CommonMark/GFM tables; a blank line ends a table)."""
    text = doc.read_text(encoding="utf-8")
    outside = re.sub(r"```.*?```", "", text, flags=re.S)
    lines = outside.splitlines()
    i = 0
    while i < len(lines):
        if not lines[i].startswith("|"):
            i += 1
            continue
        start = i
        while i < len(lines) and lines[i].startswith("|"):
            i += 1
        table = lines[start:i]
        assert len(table) >= 2 and re.fullmatch(r"\|( *:?-+:? *\|)+", table[1].replace(" ", "")) is not None, (
            doc.name, table[0])
        width = _cells(table[0])
        for row in table:
            assert _cells(row) == width, (doc.name, row)
