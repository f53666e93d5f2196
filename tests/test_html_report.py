"""The HTML report: structure, verdicts first, escaping, no external references, a browser."""

from __future__ import annotations

import json
import re
import shutil
import subprocess
from html.parser import HTMLParser

import pandas as pd
import pytest

import steadyfit
from steadyfit.report.runfolder import write_run

EVIL = "<script>alert(1)</script>"


class _Collector(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.section_ids: list[str] = []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append((tag, a))
        if tag == "section" and a.get("id"):
            self.section_ids.append(a["id"])


@pytest.fixture(scope="module")
def evil_run(tmp_path_factory):
    """The demo with its worst-fitting economy renamed to a script tag, and a title with HTML."""
    from steadyfit.demo import write_demo

    folder = tmp_path_factory.mktemp("evil")
    spec_path = write_demo(folder)
    f = steadyfit.run(spec_path)
    r = f.result("physical_only", "all")
    worst = r.economies[int(abs(r.unrestricted.resid).argmax())]
    csv = folder / "demo_economies.csv"
    d = pd.read_csv(csv)
    d.loc[d.economy == worst, "economy"] = EVIL
    d.to_csv(csv, index=False)
    spec_path.write_text(spec_path.read_text().replace(
        'title = "Steady-state income', 'title = "<b>Bold</b> & steady-state income'))
    run = write_run(steadyfit.run(spec_path), folder / "out", command=["steadyfit", "run"])
    return run


def test_sections_in_order_with_verdicts_first(evil_run):
    html = (evil_run / "report.html").read_text()
    p = _Collector()
    p.feed(html)
    assert p.section_ids == ["verdicts", "tables", "figures", "data", "caveats", "provenance"]
    n_results = len(json.loads((evil_run / "results.json").read_text())["results"])
    assert html.count("class=\"verdict\"") == n_results == 8
    for needed in ("g + δ is an assumption", "SHA-256", "Economies dropped", "Samples",
                   "Implied shares and plausible bands", "steadyfit run"):
        assert needed in html, needed


def test_strings_from_data_and_spec_are_escaped(evil_run):
    html = (evil_run / "report.html").read_text()
    assert "<script" not in html.lower()
    assert "<b>Bold</b>" not in html
    assert "&lt;b&gt;Bold&lt;/b&gt; &amp; steady-state" in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    # the economy is named in the fit figure, escaped inside the inline SVG too
    svg = (evil_run / "figures" / "fit_physical_only_all.svg").read_text()
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in svg and "<script" not in svg


def test_no_external_references(evil_run):
    html = (evil_run / "report.html").read_text()
    p = _Collector()
    p.feed(html)
    banned = {"script", "link", "iframe", "object", "embed", "img", "base"}
    assert not [t for t, _ in p.tags if t in banned]
    for tag, attrs in p.tags:
        for key in ("src", "href", "xlink:href", "action", "data", "poster"):
            value = attrs.get(key)
            assert value is None or value.startswith("#"), (tag, key, value)
    assert "@import" not in html
    urls = re.findall(r"url\(([^)]*)\)", html)
    assert not [u for u in urls if not u.strip("'\"").startswith("#")]


def test_print_stylesheet(evil_run):
    html = (evil_run / "report.html").read_text()
    assert "@media print" in html and "break-inside: avoid" in html


CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.mark.skipif(CHROMIUM is None, reason="chromium is not installed (.ci/run installs it)")
def test_renders_in_a_headless_browser(evil_run, tmp_path):
    png = tmp_path / "report.png"
    proc = subprocess.run(
        [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
         "--no-first-run", "--disable-background-networking", "--disable-component-update",
         "--disable-sync", f"--user-data-dir={tmp_path / 'profile'}",
         f"--screenshot={png}", "--window-size=1200,1600",
         (evil_run / "report.html").as_uri()],
        capture_output=True, text=True, timeout=120)
    assert png.exists(), proc.stderr
    from PIL import Image

    hist = Image.open(png).convert("L").histogram()  # 256 grey levels
    dark = sum(hist[:200]) / sum(hist)
    assert dark > 0.01, f"only {dark:.2%} of the page is ink"
    assert sum(1 for n in hist if n) > 20


@pytest.mark.skipif(CHROMIUM is None, reason="chromium is not installed (.ci/run installs it)")
def test_prints_to_pdf(evil_run, tmp_path):
    pdf = tmp_path / "report.pdf"
    subprocess.run(
        [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         f"--user-data-dir={tmp_path / 'profile'}", "--no-pdf-header-footer",
         f"--print-to-pdf={pdf}", (evil_run / "report.html").as_uri()],
        capture_output=True, text=True, timeout=120)
    assert pdf.exists() and pdf.read_bytes()[:5] == b"%PDF-"
    assert pdf.read_bytes().count(b"/Type /Page") >= 3  # several pages, not one long one
