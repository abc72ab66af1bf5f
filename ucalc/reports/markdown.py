"""Markdown report, the twin of the HTML one (without charts), for pasting into other documents."""

from __future__ import annotations

from typing import Any


def _cell(value: Any) -> Any:
    """Keep user text from breaking Markdown tables or carrying HTML (which Markdown passes through)."""
    if isinstance(value, str):
        value = value.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
        return value.replace("|", "\\|").replace("\n", " ")
    return value


def render(context: dict[str, Any]) -> str:
    from jinja2 import Environment, PackageLoader

    env = Environment(loader=PackageLoader("ucalc.reports", "templates"), autoescape=False, finalize=_cell,
                      keep_trailing_newline=True)
    return env.get_template("report.md.j2").render(**context)
