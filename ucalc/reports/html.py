"""Self-contained HTML report: inline CSS, charts as inline SVG, no script and no network access when opened."""

from __future__ import annotations

from typing import Any


def css_string(text: Any) -> Any:
    """A CSS string literal for page headers and footers; every character but ASCII letters and digits is
    written as a CSS escape, so budget text can neither close the string nor the style element."""
    from markupsafe import Markup

    body = "".join(c if c.isascii() and c.isalnum() else f"\\{ord(c):06x}" for c in str(text))
    return Markup(f'"{body}"')


def page_marks(context: dict[str, Any]) -> dict[str, str]:
    """Texts of the printed page header and footer (page X of Y is added by the stylesheet)."""
    doc = context.get("document") or {}
    tag = " ".join(p for p in (doc.get("id", ""), f"version {doc['version']}" if doc.get("version") else "") if p)
    footer = f"ucalc {context['version']} · budget SHA-256 {context['sha256'][:12]}… · generated {context['date']}"
    return {"page_tag": tag or "uncertainty budget", "footer": footer}


def render(context: dict[str, Any]) -> str:
    from jinja2 import Environment, PackageLoader, select_autoescape

    env = Environment(loader=PackageLoader("ucalc.reports", "templates"), autoescape=select_autoescape(["j2"]),
                      trim_blocks=False, lstrip_blocks=False)
    env.filters["css_string"] = css_string
    return env.get_template("report.html.j2").render(**context, **page_marks(context))
