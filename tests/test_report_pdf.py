"""The report printed to PDF by headless Chromium: pages, and no figure taller than a page.

Chromium is Debian's ``chromium`` package, which .ci/run installs; where no browser can be
had the test is skipped with that reason.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest
from tests.cli.test_widths import twelve_site_campaign

from firstrung.cli import main

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "campaign.toml"
BROWSER = shutil.which("chromium") or shutil.which("chromium-browser")
#: A4 less the report's 14 mm margins, in CSS points (1 mm = 72 / 25.4 pt).
PRINTABLE_HEIGHT_PT = (297 - 2 * 14) * 72 / 25.4
#: The report's widest content, 190 mm, in points: wider figures are scaled down to it.
CONTENT_WIDTH_PT = 190 * 72 / 25.4


def printed_pages(html: Path, tmp_path: Path) -> int:
    """Print an HTML file to A4 PDF with headless Chromium; its number of pages."""
    pdf = html.with_suffix(".pdf")
    cmd = [BROWSER, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
           "--disable-background-networking", "--disable-component-update", "--disable-sync",
           f"--user-data-dir={tmp_path / 'profile'}", "--no-pdf-header-footer", f"--print-to-pdf={pdf}",
           html.as_uri()]
    subprocess.run(cmd, capture_output=True, timeout=120, check=False)
    assert pdf.exists() and pdf.read_bytes()[:5] == b"%PDF-"
    return len(re.findall(rb"/Type\s*/Page[^s]", pdf.read_bytes()))


def assert_figures_whole(html: Path, expected: int) -> None:
    """Every figure fits on one printed page (the print CSS keeps figures whole: break-inside: avoid)."""
    figures = re.findall(r'<svg[^>]*width="([\d.]+)pt"[^>]*height="([\d.]+)pt"', html.read_text())
    assert len(figures) == expected
    for width, height in figures:
        scale = min(1.0, CONTENT_WIDTH_PT / float(width))
        assert float(height) * scale < PRINTABLE_HEIGHT_PT


@pytest.mark.skipif(BROWSER is None, reason="no headless Chromium on this machine (Debian package 'chromium')")
def test_report_prints_to_pdf_with_every_figure_whole(tmp_path, capsys, monkeypatch):
    html = tmp_path / "report.html"
    with pytest.raises(SystemExit) as done:
        main(["report", str(EXAMPLE), "-o", str(html), "--samples", "20000"])
    assert done.value.code == 0
    capsys.readouterr()
    pages = printed_pages(html, tmp_path)
    assert 2 <= pages <= 8, pages  # the demo's report: at most 8 A4 pages
    assert_figures_whole(html, 8)  # the transit's chords, the parallax ellipse and the light curve beside the five of the other rungs


@pytest.mark.skipif(BROWSER is None, reason="no headless Chromium on this machine (Debian package 'chromium')")
def test_a_twelve_site_report_keeps_to_eight_pages(tmp_path, capsys, monkeypatch):
    """Twelve sites (64 N to 41 S) with shadow, eclipse and half-moon logs: still at most 8 A4 pages."""
    twelve_sites = twelve_site_campaign(tmp_path / "twelve")
    capsys.readouterr()
    html = tmp_path / "report.html"
    with pytest.raises(SystemExit) as done:
        main(["report", str(twelve_sites), "-o", str(html), "--samples", "4000"])
    assert done.value.code == 0
    capsys.readouterr()
    text = html.read_text()
    assert all(f"site{i:02d}" in text for i in range(1, 13))  # every site is in it, none left out to save room
    pages = printed_pages(html, tmp_path)
    assert 2 <= pages <= 8, pages
    assert_figures_whole(html, 5)
