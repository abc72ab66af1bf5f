"""Project-level guarantees: the README's quick start, CI's command, and no code execution of budget text."""

from __future__ import annotations

import re

from .conftest import ROOT


def _quick_start_commands() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text.split("## Quick start", 1)[1].split("\n## ", 1)[0]
    return re.findall(r"```sh\n(.+?)\n```", section, flags=re.S)


def test_readme_quick_start_has_exactly_two_commands() -> None:
    commands = _quick_start_commands()
    assert len(commands) == 2
    assert all("\n" not in c for c in commands)
    assert "ucalc run budgets/" in commands[0]
    assert "pytest" in commands[1]


def test_ci_runs_the_readme_install_and_test_command() -> None:
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert 'pip install --quiet ".[test]"' in ci
    assert ".venv/bin/python -m pytest" in ci and ".venv/bin/python -m pytest" in _quick_start_commands()[1]


def test_package_never_evaluates_text() -> None:
    pattern = re.compile(r"(^|[^a-zA-Z_.])(eval|exec)\(|yaml\.load\(|pickle|typ=.unsafe.")
    offenders = []
    for path in (ROOT / "ucalc").rglob("*.py"):
        for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), 1):
            if pattern.search(line):
                offenders.append(f"{path.relative_to(ROOT)}:{number}: {line.strip()}")
    assert offenders == []
