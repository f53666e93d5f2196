"""Figures: formats (SVG and deterministic PDF), one layout, titles and captions that name the
equation and sample, no one-slope partial panel, rasterised markers for large samples,
labels inside the figure, and parallel drawing that gives the serial bytes."""

from __future__ import annotations

import subprocess
import sys
import tomllib
import warnings

import numpy as np
import pandas as pd
import pytest

import steadyfit
from steadyfit import workers as W
from steadyfit.report import figures as F
from steadyfit.report.figures import all_figures, fit_figure, partial_figure
from steadyfit.workers import can_fork

LONG_EQUATION = "Augmented Solow model with the human-capital investment rate, all regressors"
LONG_SAMPLE = "Economies that do not export natural resources (commodity exporters out)"


@pytest.fixture(scope="module")
def demo_folder(tmp_path_factory):
    from steadyfit.demo import write_demo

    folder = tmp_path_factory.mktemp("figdemo")
    write_demo(folder)
    return folder


@pytest.fixture(scope="module")
def demo(demo_folder):
    return steadyfit.run(demo_folder / "demo.toml")


@pytest.fixture(scope="module")
def labelled(demo_folder, tmp_path_factory):
    """The demo with display labels near the longest allowed (80 characters)."""
    folder = tmp_path_factory.mktemp("labelled")
    text = (demo_folder / "demo.toml").read_text(encoding="utf-8")
    text = text.replace('file = "demo_economies.csv"',
                        f'file = "{(demo_folder / "demo_economies.csv").as_posix()}"')
    text += (f'\n[labels]\nequations = {{ with_schooling = "{LONG_EQUATION}" }}\n'
             f'samples = {{ no_resource_exporters = "{LONG_SAMPLE}" }}\n')
    spec = folder / "demo.toml"
    spec.write_text(text, encoding="utf-8")
    return steadyfit.run(spec)


@pytest.fixture(scope="module")
def many(demo_folder, tmp_path_factory):
    """The demo spec on 10,000 invented economies (random, independent columns)."""
    folder = tmp_path_factory.mktemp("many")
    rng = np.random.RandomState(3)
    rows = 10_000
    pd.DataFrame({
        "economy": [f"Q{i:05d}" for i in range(rows)],
        "region": rng.choice(["north", "coast", "islands", "highland"], rows),
        "resource_exporter": rng.randint(0, 2, rows),
        "population_start": rng.uniform(1e5, 1e8, rows),
        "output_per_worker_start": np.exp(rng.normal(8, 1, rows)),
        "output_per_worker_end": np.exp(rng.normal(8.5, 1, rows)),
        "investment_share": rng.uniform(5, 35, rows),
        "secondary_enrolment": rng.uniform(1, 12, rows),
        "schooling_index": rng.uniform(1, 20, rows),
        "workforce_growth": rng.uniform(0.2, 3.5, rows),
        "labour_share": rng.uniform(50, 75, rows),
    }).to_csv(folder / "many.csv", index=False)
    body = tomllib.loads((demo_folder / "demo.toml").read_text(encoding="utf-8"))
    body["data"]["file"] = str(folder / "many.csv")
    for section in ("bootstrap", "influence"):  # the figures are what is tested here
        body.pop(section, None)
    return steadyfit.run(steadyfit.spec_from_dict(body, folder))


@pytest.fixture(scope="module")
def both(demo):
    """Every figure of the demo in both formats, drawn serially."""
    return all_figures(demo, ("svg", "pdf"), workers=1)


# --- formats ---------------------------------------------------------------------------


def test_svg_and_pdf_bytes_are_deterministic(demo, both):
    again = all_figures(demo, ("svg", "pdf"))
    assert again == both
    for fig in both:
        assert fig.svg.startswith("<svg") and fig.svg.rstrip().endswith("</svg>")
        assert fig.pdf is not None and fig.pdf.startswith(b"%PDF")
        assert b"/CreationDate" not in fig.pdf and b"/ModDate" not in fig.pdf
        # TrueType (Type 42) fonts, embedded
        assert b"/CIDFontType2" in fig.pdf and b"/FontFile2" in fig.pdf
        assert b"/Type3" not in fig.pdf


def test_pdf_and_svg_identical_in_a_fresh_interpreter(demo, demo_folder):
    import hashlib

    code = ("import hashlib, steadyfit; from steadyfit.report.figures import shares_figure, "
            f"fit_figure; f = steadyfit.run({str(demo_folder / 'demo.toml')!r}); "
            "a, b = shares_figure(f, ('svg', 'pdf')), fit_figure(f.results[0], 5, ('svg', 'pdf')); "
            "print(hashlib.sha256(a.pdf + b.pdf + (a.svg + b.svg).encode()).hexdigest())")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    a, b = F.shares_figure(demo, ("svg", "pdf")), fit_figure(demo.results[0], 5, ("svg", "pdf"))
    assert a is not None and a.pdf is not None and b.pdf is not None
    assert out == hashlib.sha256(a.pdf + b.pdf + (a.svg + b.svg).encode()).hexdigest()


def test_formats_asked_for_only(demo, both):
    svg_only = all_figures(demo)
    assert all(f.svg and f.pdf is None for f in svg_only)
    assert [f.svg for f in both] == [f.svg for f in svg_only]
    r = demo.results[0]
    pdf_only = fit_figure(r, formats=("pdf",))
    assert pdf_only.svg == "" and pdf_only.pdf == both[1].pdf
    with pytest.raises(ValueError, match="svg"):
        all_figures(demo, ("png",))
    with pytest.raises(ValueError):
        all_figures(demo, ())


def test_laid_out_once_and_drawn_once_per_format(demo, monkeypatch):
    from matplotlib.figure import Figure as MplFigure

    draws: list[int] = []
    real_draw = MplFigure.draw

    def counting_draw(self, renderer):
        draws.append(id(self))
        return real_draw(self, renderer)

    def refuse(*args, **kwargs):
        raise AssertionError("a layout engine ran")

    monkeypatch.setattr(MplFigure, "draw", counting_draw)
    monkeypatch.setattr(MplFigure, "tight_layout", refuse)
    monkeypatch.setattr(MplFigure, "get_tightbbox", refuse)
    conv = demo.result("convergence", "no_resource_exporters")
    figs = [F.shares_figure(demo, ("svg", "pdf")), fit_figure(conv, formats=("svg", "pdf")),
            partial_figure(conv, ("svg", "pdf")), F.convergence_figure(conv, ("svg", "pdf"))]
    assert all(f is not None for f in figs)
    per_figure = {i: draws.count(i) for i in set(draws)}
    assert len(per_figure) == len(figs)
    assert set(per_figure.values()) == {2}  # one draw for the SVG, one for the PDF


def test_unicode_labels_draw_without_missing_glyphs(demo):
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # "Glyph ... missing from font" would be a warning
        figs = [F.partial_figure(demo.result("convergence", "no_resource_exporters"),
                                 ("svg", "pdf")),
                F.convergence_figure(demo.result("convergence", "no_resource_exporters"),
                                     ("svg", "pdf")),
                fit_figure(demo.results[0], formats=("svg", "pdf")),
                F.shares_figure(demo, ("svg", "pdf"))]
    svg = "".join(f.svg for f in figs if f is not None)
    for text in ("ln(sₖ)", "ln(n + g + δ)", "ln(y₀)", "−", "45°", "α", "β"):
        assert text in svg, text


def test_matplotlib_imported_lazily():
    code = ("import sys, steadyfit.report.figures, steadyfit.cli; "
            "print('matplotlib' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "False"


# --- what the figures say ----------------------------------------------------------------


def test_no_partial_panel_for_a_one_slope_equation(demo):
    one = demo.result("unconditional", "all")
    assert len(one.unrestricted.names) == 2  # the constant and one slope
    assert partial_figure(one) is None
    keys = {f.key for f in all_figures(demo)}
    assert "partial_unconditional_all" not in keys
    assert "convergence_unconditional_all" in keys and "fit_unconditional_all" in keys
    # an equation with two slopes keeps its panels, one per regressor
    two = demo.result("physical_only", "all")
    fig = partial_figure(two)
    assert fig is not None and sum(t.startswith("slope ") for t in _svg_texts(fig.svg)) == 2


def test_titles_and_captions_name_equation_and_sample(labelled):
    figs = {f.key: f for f in all_figures(labelled)}
    for r in labelled.results:
        stems = [f"fit_{r.equation}_{r.sample}", f"partial_{r.equation}_{r.sample}",
                 f"convergence_{r.equation}_{r.sample}"]
        for key in (s for s in stems if s in figs):
            f = figs[key]
            assert r.heading in f.title, (key, f.title)
            assert r.heading in f.caption, (key, f.caption)
            # the title drawn in the figure itself (wrapped onto lines where long)
            drawn = " ".join(_svg_texts(f.svg))
            assert all(word in drawn for word in r.heading.split()), key
    long = labelled.result("with_schooling", "no_resource_exporters").heading
    assert LONG_EQUATION in long and LONG_SAMPLE in long
    # the share chart names every row's equation and sample on its axis
    drawn = " ".join(_svg_texts(figs["implied_shares"].svg))
    for r in labelled.results:
        if any(v.band is not None for v in r.shares):
            assert all(word in drawn for word in r.heading.split()), r.heading


def test_share_chart_rows_name_equation_and_sample(demo):
    chart = next(f for f in all_figures(demo) if f.key == "implied_shares")
    rows = _svg_texts(chart.svg)
    assert "physical only / all: α" in rows
    assert "with schooling / no resource exporters: β" in rows
    assert chart.title == "Implied shares and plausible bands"


def _svg_texts(svg: str) -> list[str]:
    import html
    import re

    return [html.unescape(t) for t in re.findall(r"<text[^>]*>([^<]*)</text>", svg)]


def _drawn(findings, monkeypatch, formats=("svg",)):
    """Every figure of a run as the matplotlib figure that was saved, with its Figure."""
    saved = []
    real = F.export

    def keep(fig, fmts, title):
        saved.append(fig)
        return real(fig, fmts, title)

    monkeypatch.setattr(F, "export", keep)
    figs = all_figures(findings, formats, workers=1)
    return list(zip(figs, saved, strict=True))


def test_no_label_outside_the_figure(labelled, monkeypatch):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.text import Text

    for fig, mpl_fig in _drawn(labelled, monkeypatch):
        canvas = FigureCanvasAgg(mpl_fig)
        renderer = canvas.get_renderer()
        box = mpl_fig.bbox
        texts = [a for a in mpl_fig.artists if isinstance(a, Text) and a.get_text()]
        assert texts
        for t in texts:
            ext = t.get_window_extent(renderer)
            assert (ext.x0 >= box.x0 - 0.5 and ext.x1 <= box.x1 + 0.5
                    and ext.y0 >= box.y0 - 0.5 and ext.y1 <= box.y1 + 0.5), (
                fig.key, t.get_text(), ext, box)
        # no two texts overlap (tick labels, axis labels, titles, names of economies)
        boxes = [(t.get_text(), t.get_window_extent(renderer)) for t in texts]
        for i, (a, ea) in enumerate(boxes):
            for b, eb in boxes[i + 1:]:
                inter_w = min(ea.x1, eb.x1) - max(ea.x0, eb.x0)
                inter_h = min(ea.y1, eb.y1) - max(ea.y0, eb.y0)
                assert inter_w <= 1.0 or inter_h <= 1.0, (fig.key, a, b)


# --- large samples ------------------------------------------------------------------------


def test_markers_rasterised_above_the_threshold_only(demo, monkeypatch):
    r = demo.result("physical_only", "all")
    assert r.nobs == 90
    assert "<image" not in fit_figure(r).svg
    monkeypatch.setattr(F, "RASTER_ABOVE", r.nobs - 1)
    raster = fit_figure(r, formats=("svg", "pdf"))
    assert raster.svg.count("<image") == 2  # one image per panel of markers
    assert raster.pdf is not None and b"/Subtype /Image" in raster.pdf
    # text and lines stay vector
    assert "Fit: physical only / all" in _svg_texts(raster.svg)
    monkeypatch.setattr(F, "RASTER_ABOVE", r.nobs)
    assert "<image" not in fit_figure(r).svg


def test_ten_thousand_economies_stay_small(many):
    r = many.result("physical_only", "all")
    assert r.nobs == 10_000
    fig = fit_figure(r)
    assert "<image" in fig.svg
    assert len(fig.svg.encode("utf-8")) < 1_000_000
    total = sum(len(f.svg.encode("utf-8")) for f in all_figures(many))
    assert total < 4_000_000, total


# --- parallel drawing ---------------------------------------------------------------------


needs_fork = pytest.mark.skipif(not can_fork(), reason="no fork here")


@needs_fork
def test_parallel_and_serial_give_the_same_bytes(demo, both, monkeypatch):
    forks = []
    real_fork = W.os.fork

    def counting_fork():
        pid = real_fork()
        if pid:
            forks.append(pid)
        return pid

    if not can_fork():  # an earlier test (a Dask cluster) left threads behind: no fork then
        pytest.skip("other threads are alive in this process, so figures are drawn serially")
    monkeypatch.setattr(W.os, "fork", counting_fork)
    parallel = all_figures(demo, ("svg", "pdf"), workers=2)
    assert len(forks) == 1
    assert [f.key for f in parallel] == [f.key for f in both]
    assert parallel == both  # "both" was drawn serially


@needs_fork
def test_a_failed_child_is_redrawn_here(demo, monkeypatch):
    def broken(*args, **kwargs):
        raise RuntimeError("the child cannot send its figures")

    monkeypatch.setattr(W.pickle, "dumps", broken)  # only the child pickles
    assert all_figures(demo, workers=2) == all_figures(demo, workers=1)


def test_serial_for_few_figures_or_one_worker(demo, monkeypatch):
    def no_fork():
        raise AssertionError("forked")

    monkeypatch.setattr(W.os, "fork", no_fork)
    assert all_figures(demo, workers=1)
    assert F.shares_figure(demo) is not None
    monkeypatch.setattr(F, "PARALLEL_FROM", 10_000)
    assert all_figures(demo, workers=2)


def test_ten_thousand_economy_report_under_five_megabytes(many, tmp_path):
    """The issue's bound on the whole HTML report with every figure inlined (5 MB)."""
    from steadyfit.report.runfolder import write_run

    folder = write_run(many, tmp_path)
    size = (folder / "report.html").stat().st_size
    assert size < 5_000_000, size
