"""Shared helpers for the test suite."""

from __future__ import annotations

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
REFERENCE = Path(__file__).resolve().parent / "reference"
BUDGETS = ROOT / "budgets"


@pytest.fixture
def write_budget(tmp_path: Path):
    """Write budget text to a temporary file and return its path."""

    def write(text: str, name: str = "budget.yaml") -> Path:
        path = tmp_path / name
        path.write_text(text, encoding="utf-8")
        return path

    return write
