"""Self-contained HTML report: inline CSS, charts as inline SVG, no script and no network access when opened."""

from __future__ import annotations

from typing import Any


def render(context: dict[str, Any]) -> str:
    from jinja2 import Environment, PackageLoader, select_autoescape

    env = Environment(loader=PackageLoader("ucalc.reports", "templates"), autoescape=select_autoescape(["j2"]),
                      trim_blocks=False, lstrip_blocks=False)
    return env.get_template("report.html.j2").render(**context)
