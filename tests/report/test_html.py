"""The HTML report: self-contained, complete, escaped, and drawn from the analysis' own data.

External checks: the page is parsed with the standard library's HTML parser
(html.parser) to collect tags, ids and links; ids must be unique (the HTML
Living Standard requires it, from memory). The plot test compares the plotted
trajectories with the StageResults (a consistency check: both must read the
same analysis, so no outside figure applies) and checks that each plotted
curve passes through its corner's threshold at the marked instant.
"""

from __future__ import annotations

import html
from dataclasses import replace
from html.parser import HTMLParser

import numpy as np
import pytest

from drc.report.html import render_html
from drc.report.plots import resample, stage_plot_data, stage_plot_svg, time_window
from drc.report.run_report import BoardReport, RunReport
from tests.report.html_demo import ALL, board_report, run_report


class _Collect(HTMLParser):
    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict]] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))

    def handle_startendtag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))

    def handle_data(self, data):
        self.text.append(data)


def _parse(page: str) -> _Collect:
    parser = _Collect()
    parser.feed(page)
    parser.close()
    return parser


@pytest.fixture(scope="module")
def all_boards_page() -> tuple[RunReport, str]:
    run = run_report(*ALL)
    return run, render_html(run)


def test_one_section_per_board_and_one_row_per_stage(all_boards_page):
    run, page = all_boards_page
    doc = _parse(page)
    sections = [a for t, a in doc.tags if t == "section" and a.get("class") == "board"]
    assert [s["id"] for s in sections] == [f"board-{i}" for i in range(len(run.boards))]
    rows = [a for t, a in doc.tags if t == "tr" and a.get("class", "").startswith("row-")]
    assert len(rows) == sum(len(b.stages) for b in run.boards)
    articles = [a for t, a in doc.tags if t == "article"]
    assert len(articles) == len(rows)


def test_ids_unique_and_links_resolve(all_boards_page):
    _, page = all_boards_page
    doc = _parse(page)
    ids = [a["id"] for _, a in doc.tags if "id" in a]
    dupes = {i for i in ids if ids.count(i) > 1}
    assert not dupes, f"duplicate ids: {sorted(dupes)[:10]}"
    targets = set(ids)
    refs = [a.get("href") or a.get("xlink:href") for _, a in doc.tags]
    internal = [r[1:] for r in refs if r and r.startswith("#")]
    assert internal and all(r in targets for r in internal), [r for r in internal if r not in targets][:5]


def test_self_contained(all_boards_page):
    _, page = all_boards_page
    doc = _parse(page)
    assert not any(t in ("script", "link", "iframe", "img") for t, _ in doc.tags)
    for _, attrs in doc.tags:
        for key in ("src", "href", "xlink:href"):
            value = attrs.get(key) or ""
            assert not value.startswith(("http:", "https:", "//")), (key, value)
    assert "@import" not in page and "url(http" not in page
    assert "@media print" in page and "@media (max-width" in page


def test_caution_findings_and_fixes_present(all_boards_page):
    run, page = all_boards_page
    text = html.unescape(page)
    assert run.caution in text
    for board in run.boards:
        for f in board.active():
            assert f.message in text, f.message
            if f.fix:
                assert f.fix in text, f.fix
            if f.measured is not None:
                assert f.measured.text in text
            if f.limit is not None:  # against its bound, named as the rule names it: "(min 10 ms)"
                assert f"({run.rule_doc(f.rule).bound} {f.limit.text})" in text


def test_table_shows_every_time(all_boards_page):
    run, page = all_boards_page
    from drc.units import format_quantity
    text = html.unescape(page)
    for board in run.boards:
        for result in board.stages:
            for edge in result.edges.values():
                for t in (edge.fastest_s, edge.nominal_s, edge.slowest_s):
                    assert (format_quantity(t, "s") if t is not None else "never") in text


def test_untrusted_text_is_escaped():
    bad = BoardReport(path='<script>alert("x")</script>.cir', error="bad & <b>broken</b>")
    page = render_html(RunReport(boards=(bad,), caution="caution <i>text</i>"))
    assert "<script>" not in page and "<b>broken</b>" not in page and "<i>text</i>" not in page
    assert "&lt;script&gt;" in page and "bad &amp; &lt;b&gt;broken&lt;/b&gt;" in page


def test_undefined_level_and_missing_receiver_data_show_notes():
    board = board_report("dimmer_rack.cir")
    floating = next(r for r in board.stages if r.stage.kind == "direct")  # SW15: released floats
    assert not floating.edges
    plot = stage_plot_data(floating)
    assert not plot.drawable() and "undefined" in plot.note
    assert stage_plot_svg(plot) == ""
    no_rx = replace(board.stages[0], receiver_electrical=None)
    page = render_html(RunReport(boards=(replace(board, stages=(floating, no_rx)),)))
    assert "no edge is timed" in page and "no receiver data" in page
    assert page.count('class="waveform"') == 0


def test_one_plot_per_drawable_stage(all_boards_page):
    run, page = all_boards_page
    drawable = sum(1 for b in run.boards for r in b.stages if r.edges and r.receiver_electrical)
    assert page.count('<svg class="waveform"') == drawable


@pytest.mark.parametrize("name", ALL)
def test_plotted_crossings_are_the_stage_results_times(name):
    board = board_report(name)
    checked = 0
    for result in board.stages:
        plot = stage_plot_data(result)
        t_end = time_window(plot)
        for edge_plot in plot.edges:
            edge = result.edges.get(edge_plot.edge)
            if edge is None:
                assert not edge_plot.curves and edge_plot.note
                continue
            assert [c.corner for c in edge_plot.curves] == ["nominal", "fastest", "slowest"]
            for curve in edge_plot.curves:
                table = getattr(edge, f"{curve.corner}_s")
                where = f"{result.stage.name} {edge_plot.edge} {curve.corner}"
                if table is None:
                    assert curve.crossing_s is None, where
                    continue
                assert curve.crossing_s == pytest.approx(table, rel=1e-9, abs=1e-15), where
                threshold = {"nominal": edge.threshold_v, "fastest": edge.threshold_fastest_v,
                             "slowest": edge.threshold_slowest_v}[curve.corner]
                assert curve.threshold_v == threshold
                if table > 0:
                    # The drawn curve passes through its mark: the value at the instant is the threshold.
                    tt, vv = resample(curve, t_end)
                    i = int(np.flatnonzero(tt == curve.crossing_s)[0]) if curve.crossing_s <= t_end else None
                    assert i is not None, where
                    assert vv[i] == pytest.approx(threshold, abs=1e-6), where
                    sign = 1 if edge.direction == "rising" else -1
                    assert sign * (vv[i - 1] - threshold) <= 1e-9, where  # not yet past it just before
                checked += 1
    assert checked > 0 or all(not r.edges for r in board.stages)


def test_svg_is_small_and_text_stays_text():
    board = board_report("front_panel.cir")
    svg = stage_plot_svg(stage_plot_data(board.stages[0]), "t0")
    assert svg.startswith("<svg") and "viewBox" in svg
    assert "<text" in svg and "glyph" not in svg.lower()  # svg.fonttype "none": no embedded glyph paths
    assert len(svg) < 40_000, len(svg)
