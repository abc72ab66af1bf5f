"""PDF report: the HTML report laid out on pages by WeasyPrint (CSS paged media, headers, footers, page X of Y).

WeasyPrint is an optional extra (``pip install "ucalc[pdf]"``) because it needs the system's Pango library; the
HTML report prints to the same pages from a browser.
"""

from __future__ import annotations

from typing import Any

from ..errors import UcalcError

INSTALL_HINT = ('writing PDF needs the optional WeasyPrint package: pip install "ucalc[pdf]" (it also needs the '
                "Pango library, e.g. Debian's libpango-1.0-0); or write .html and print it to PDF from a browser")


def _weasyprint() -> Any:
    try:
        import weasyprint
    except (ImportError, OSError):  # OSError: the package is there but Pango is not
        raise UcalcError(INSTALL_HINT) from None
    return weasyprint


def require() -> None:
    """Raise a :class:`UcalcError` saying how to get PDF output when WeasyPrint cannot be loaded."""
    _weasyprint()


def render(html: str) -> bytes:
    """The PDF of a self-contained HTML report (no network: the report has no external resources)."""
    import logging

    weasyprint = _weasyprint()
    logging.getLogger("weasyprint").setLevel(logging.ERROR)  # unsupported CSS in screen-only rules is noise here
    logging.getLogger("fontTools").setLevel(logging.ERROR)
    return bytes(weasyprint.HTML(string=html, base_url=None).write_pdf())
