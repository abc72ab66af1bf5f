"""Start-up: the command-line module imports no heavy library (timings are in benchmarks/startup.py)."""

from __future__ import annotations

import json
import subprocess
import sys

HEAVY = ("scipy.stats", "pandas", "matplotlib", "jinja2", "rich", "numpy", "pint", "openpyxl")


def _imported_after(statement: str) -> set[str]:
    code = f"import sys, json\n{statement}\nprint(json.dumps(sorted(sys.modules)))"
    out = subprocess.run([sys.executable, "-c", code], check=True, capture_output=True, text=True).stdout
    return set(json.loads(out))


def test_importing_the_cli_imports_no_heavy_library() -> None:
    loaded = _imported_after("import ucalc.cli")
    assert sorted(m for m in loaded if m.split(".")[0] in {h.split(".")[0] for h in HEAVY}) == []


def test_importing_the_package_imports_no_heavy_library() -> None:
    loaded = _imported_after("import ucalc")
    assert sorted(m for m in loaded if m.split(".")[0] in {h.split(".")[0] for h in HEAVY}) == []
