"""The HTML report in a real browser: headless Chromium (Debian's package, installed by .ci/run), and the PDF
report's pages as images (pdftoppm from Debian's poppler-utils).

Checks that the page loads without console errors, that every chart is visible and not blank, that the print
layout fits the printable width of A4 and Letter, that the printed PDF has the expected number of pages, each with
its running header and "page X of Y" footer, and that every page of every example's PDF report carries them and
is drawn (not blank). Skips, saying why, only where Chromium or pdftoppm is absent outside CI.
"""

from __future__ import annotations

import io
import os
import shutil
import subprocess

import pytest
from typer.testing import CliRunner

from ucalc.budget.load import load_budget
from ucalc.cli import app

from .conftest import BUDGETS

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
        "--disable-sync", "--no-first-run", "--disable-quic"]
# pages of the stock-standard report (GUM + Monte Carlo) when printed; pinned from the layout  # common practice
EXPECTED_PAGES = {"A4": 3, "Letter": 3}
PDFTOPPM = shutil.which("pdftoppm")


def _require_browser():  # type: ignore[no-untyped-def]
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        sync_playwright = None
    if CHROMIUM and sync_playwright:
        return sync_playwright
    reason = "Chromium (Debian package 'chromium') or the playwright package is not installed"
    if os.environ.get("CI"):
        pytest.fail(f"{reason}, but CI must run this test")
    pytest.skip(reason)


def _write_report(budget, out):  # type: ignore[no-untyped-def]
    result = CliRunner().invoke(app, ["report", str(budget), "-o", str(out), "--seed", "3", "-n", "50000"])
    assert result.exit_code == 0, result.output
    return out


@pytest.fixture(scope="module")
def report_file(tmp_path_factory):
    out = tmp_path_factory.mktemp("report") / "stock.html"
    result = CliRunner().invoke(app, ["report", str(BUDGETS / "stock-standard.yaml"), "-o", str(out),
                                      "--seed", "3", "-n", "50000"])
    assert result.exit_code == 0, result.output
    return out


def test_report_in_headless_chromium(report_file) -> None:
    from PIL import Image, ImageStat
    from pypdf import PdfReader

    sync_playwright = _require_browser()
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=ARGS)
        page = browser.new_page(viewport={"width": 1000, "height": 1400})
        problems: list[str] = []
        page.on("console", lambda m: problems.append(m.text) if m.type == "error" else None)
        page.on("pageerror", lambda e: problems.append(str(e)))
        page.on("request", lambda r: problems.append(f"request {r.url}") if not r.url.startswith("file:") else None)
        page.goto(report_file.as_uri())
        assert problems == []

        charts = page.locator("figure svg")
        assert charts.count() == 2
        for i in range(charts.count()):
            chart = charts.nth(i)
            assert chart.is_visible()
            box = chart.bounding_box()
            assert box is not None and box["width"] > 300 and box["height"] > 100
            image = Image.open(io.BytesIO(chart.screenshot())).convert("L")
            stats = ImageStat.Stat(image)
            assert stats.stddev[0] > 10, "chart is blank"
            dark = sum(image.histogram()[:128]) / (image.width * image.height)
            assert 0.005 < dark < 0.6, "chart has no drawing or is a solid block"

        page.emulate_media(media="print")
        for width_px in (703, 737):  # printable width of A4 and Letter with the 12 mm side margins, at 96 px/in
            page.set_viewport_size({"width": width_px, "height": 1000})
            overflow = page.evaluate("document.documentElement.scrollWidth - document.documentElement.clientWidth")
            assert overflow <= 0, f"content wider than the printable width ({width_px} px)"

        for paper, pages in EXPECTED_PAGES.items():
            pdf = page.pdf(format=paper, print_background=True, prefer_css_page_size=False)
            reader = PdfReader(io.BytesIO(pdf))
            assert len(reader.pages) == pages, paper
            for number, printed in enumerate(reader.pages, start=1):
                text = printed.extract_text()
                assert f"page {number} of {pages}" in text, (paper, number)  # the running footer
                assert "UB-SP02-Cd version 2" in text, (paper, number)  # the running header
        browser.close()


def test_every_example_report_renders_cleanly(tmp_path) -> None:
    sync_playwright = _require_browser()
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=ARGS)
        page = browser.new_page(viewport={"width": 1000, "height": 1400})
        for budget in sorted(BUDGETS.glob("*.yaml")):
            problems: list[str] = []
            page.on("console", lambda m, bag=problems: bag.append(m.text) if m.type == "error" else None)
            out = _write_report(budget, tmp_path / f"{budget.stem}.html")
            page.goto(out.as_uri())
            assert problems == [], budget.name
            charts = page.locator("figure svg")
            residual_plots = sum(1 for d in load_budget(budget).details.values() if d.get("model") == "calibration")
            assert charts.count() == 2 + residual_plots, budget.name  # contributions, distribution, residuals
            assert all(charts.nth(i).is_visible() for i in range(charts.count()))
            page.emulate_media(media="print")
            page.set_viewport_size({"width": 703, "height": 1000})
            overflow = page.evaluate("document.documentElement.scrollWidth - document.documentElement.clientWidth")
            assert overflow <= 0, budget.name
            page.emulate_media(media="screen")
            page.set_viewport_size({"width": 1000, "height": 1400})
        browser.close()


def _require_pdftoppm() -> str:
    if PDFTOPPM:
        return PDFTOPPM
    reason = "pdftoppm (Debian package 'poppler-utils') is not installed"
    if os.environ.get("CI"):
        pytest.fail(f"{reason}, but CI must run this test")
    pytest.skip(reason)


@pytest.mark.slow
def test_every_example_pdf_report_has_numbered_drawn_pages(tmp_path) -> None:
    from PIL import Image, ImageStat
    from pypdf import PdfReader

    pytest.importorskip("weasyprint", reason="the 'pdf' extra is not installed", exc_type=ImportError)
    pdftoppm = _require_pdftoppm()
    for budget in sorted(BUDGETS.glob("*.yaml")):
        out = _write_report(budget, tmp_path / f"{budget.stem}.pdf")
        assert out.read_bytes().startswith(b"%PDF-"), budget.name
        reader = PdfReader(out)
        pages = len(reader.pages)
        assert 2 <= pages <= 6, (budget.name, pages)
        title_start = reader.pages[0].extract_text().split("\n")[0][:20]
        for number, printed in enumerate(reader.pages, start=1):
            text = printed.extract_text()
            assert f"page {number} of {pages}" in text, (budget.name, number)
            assert title_start in text, (budget.name, number)  # running header on every page
        subprocess.run([pdftoppm, "-png", "-r", "40", str(out), str(tmp_path / budget.stem)], check=True,
                       timeout=120)
        images = sorted(tmp_path.glob(f"{budget.stem}-*.png"))
        assert len(images) == pages, budget.name
        for image_path in images:
            image = Image.open(image_path).convert("L")
            assert image.width < image.height  # portrait pages
            assert ImageStat.Stat(image).stddev[0] > 10, (image_path.name, "blank page")
