"""Waveform plots of a stage's two edges, as small inline SVG, for the HTML report.

A plot shows what the analysis computed, nothing else: each corner's curve is
the exact edge trajectory of drc.analysis (`edge_solution` at the nominal
corner and at the corners the analysis found fastest and slowest, sampled by
the same `sample` function `edge_waveform` uses), and each crossing mark is
that trajectory's own crossing time. `stage_plot_data` gathers these numbers
(testable without drawing); `stage_plot_svg` draws them with matplotlib
(imported lazily, no pyplot, so no GUI backend is ever touched), keeping the
SVG small: curves resampled to a few hundred points, text left as text
(svg.fonttype "none"), ids prefixed so many plots can share one page.
"""

from __future__ import annotations

import io
import re
from dataclasses import dataclass
from typing import Any

import numpy as np

from drc.analysis.results import EDGES, StageResult
from drc.units import format_quantity

CORNERS = ("nominal", "fastest", "slowest")
COLOURS = {"nominal": "#1d3557", "fastest": "#d1495b", "slowest": "#2a9d8f"}
STYLES = {"nominal": "-", "fastest": "--", "slowest": "-."}
_POINTS = 120  # resampled points per curve: enough for an exponential at this size
_PRE = 0.06  # the part of the time axis shown before the contact moves


@dataclass(frozen=True, slots=True)
class Curve:
    """One corner's receiver waveform for one edge; crossing_s None = never crosses."""

    corner: str
    t: np.ndarray
    v: np.ndarray
    threshold_v: float
    crossing_s: float | None


@dataclass(frozen=True, slots=True)
class EdgePlot:
    edge: str
    direction: str | None
    curves: tuple[Curve, ...]
    note: str | None = None  # why there is no curve (or only some)


@dataclass(frozen=True, slots=True)
class StagePlot:
    """Everything one stage's plot draws. thresholds: (label, volts) lines."""

    edges: tuple[EdgePlot, ...]
    thresholds: tuple[tuple[str, float], ...]
    bounce_s: float
    receiver: str
    note: str | None = None

    def drawable(self) -> bool:
        return any(e.curves for e in self.edges)


def threshold_lines(rx) -> tuple[tuple[str, float], ...]:
    """VT+ and VT- (typical) for a Schmitt input, VIH and VIL for a plain one."""
    if rx.schmitt:
        return (("VT+", rx.rising_threshold[1]), ("VT-", rx.falling_threshold[1]))
    return (("VIH", rx.vih_min), ("VIL", rx.vil_max))


def _corner_argument(edge_result, corner: str):
    # The corner mappings the analysis reported: the exact corner behind each time.
    if corner == "fastest":
        return edge_result.corner_fastest or "fastest"
    if corner == "slowest":
        return edge_result.corner_slowest or "slowest"
    return "nominal"


def _edge_plot(result: StageResult, edge: str) -> EdgePlot:
    from drc.analysis.physics.transient import sample  # what edge_waveform samples with
    from drc.analysis.stage_analysis import edge_solution

    edge_result = result.edges.get(edge)
    if edge_result is None:
        reason = next((n for n in result.notes if n.startswith(edge + ":")), f"{edge}: not timed")
        return EdgePlot(edge, None, (), reason)
    thresholds = {"nominal": edge_result.threshold_v, "fastest": edge_result.threshold_fastest_v,
                  "slowest": edge_result.threshold_slowest_v}
    rx = result.receiver_electrical
    if rx is None:
        return EdgePlot(edge, edge_result.direction, (), f"{edge}: no waveform (no receiver model)")
    curves: list[Curve] = []
    for corner in CORNERS:
        try:
            solution = edge_solution(result.stage, rx, edge,
                                     _corner_argument(edge_result, corner))
        except (ValueError, ArithmeticError, np.linalg.LinAlgError) as exc:
            return EdgePlot(edge, edge_result.direction, tuple(curves), f"{edge}: no waveform ({exc})")
        t, v = sample(solution)
        curves.append(Curve(corner, t, v, thresholds[corner], solution.crossing_s))
    return EdgePlot(edge, edge_result.direction, tuple(curves))


def stage_plot_data(result: StageResult) -> StagePlot:
    """The curves, crossings, thresholds and bounce window of one stage's plot."""
    stage = result.stage
    rx = result.receiver_electrical
    if rx is None:
        return StagePlot((), (), stage.contact.bounce_s, stage.receiver.ref,
                         "no receiver data in this result: waveforms not drawn")
    edges = tuple(_edge_plot(result, e) for e in EDGES)
    note = None if any(e.curves for e in edges) else "no edge is timed: " + "; ".join(
        e.note for e in edges if e.note)
    return StagePlot(edges, threshold_lines(rx), stage.contact.bounce_s, stage.receiver.ref, note)


def time_window(plot: StagePlot) -> float:
    """End of the time axis: the bounce window and every finite crossing, with room to spare."""
    crossings = [c.crossing_s for e in plot.edges for c in e.curves if c.crossing_s is not None]
    end = max([plot.bounce_s * 1.15] + [1.2 * t for t in crossings])
    if end <= 0:
        ends = [float(c.t[-1]) for e in plot.edges for c in e.curves if c.t.size]
        end = max(ends, default=1e-3)
    return end


def resample(curve: Curve, t_end: float, points: int = _POINTS) -> tuple[np.ndarray, np.ndarray]:
    """The curve on [-pre, t_end]: steady level before 0, the step at 0, then `points` samples.

    Values come from the analysis' own samples (linear interpolation between
    them, the settled value held after their end); the crossing instant is kept
    as a sample so the curve passes through its mark.
    """
    t, v = curve.t, curve.v
    after = t > 0
    ta, va = t[after], v[after]
    v0_plus = v[1] if t.size > 1 and t[1] == 0 else (va[0] if va.size else v[0])
    grid = np.linspace(0.0, t_end, points)[1:]
    extra = [curve.crossing_s] if curve.crossing_s is not None and 0 < curve.crossing_s <= t_end else []
    grid = np.unique(np.concatenate([grid, np.array(extra, dtype=float)]))
    vg = np.interp(grid, ta, va) if ta.size else np.full(grid.shape, v0_plus)
    tt = np.concatenate([[-_PRE * t_end, 0.0, 0.0], grid])
    vv = np.concatenate([[v[0], v[0], v0_plus], vg])
    return tt, vv


def _time_unit(t_end: float) -> tuple[float, str]:
    for scale, name in ((1.0, "s"), (1e-3, "ms"), (1e-6, "µs"), (1e-9, "ns")):
        if t_end >= scale:
            return scale, name
    return 1e-9, "ns"


def _uniquify_ids(svg: str, prefix: str) -> str:
    """Keep only the ids something refers to, prefixed so several SVGs can share one page."""
    used = set(re.findall(r'(?:url\(#|href="#)([^")]+)', svg))
    svg = re.sub(r' id="([^"]+)"', lambda m: f' id="{prefix}-{m.group(1)}"' if m.group(1) in used else "", svg)
    return re.sub(r'(url\(#|href="#)([^")]+)', lambda m: f"{m.group(1)}{prefix}-{m.group(2)}", svg)


def _shrink(svg: str) -> str:
    """Drop what a page does not need: metadata, font lists (the page's CSS sets the font), empty groups."""
    svg = re.sub(r"\s*<metadata>.*?</metadata>", "", svg, flags=re.S)
    # matplotlib's page-wide "*{stroke-linejoin...}" rule would leak into the page: the CSS scopes it.
    svg = re.sub(r"\s*<style[^>]*>[^<]*</style>", "", svg)
    svg = re.sub(r"<defs>\s*</defs>", "", svg)
    svg = re.sub(r"font-family: [^;\"]*;?\s*", "", svg)
    svg = re.sub(r' transform="rotate\(-0 [^)]*\)"', "", svg)
    for _ in range(3):  # groups left with nothing to identify them and a single child
        svg = re.sub(r"<g>\s*(<(?:use|path|text)[^>]*?/>)\s*</g>", r"\1", svg)
    svg = re.sub(r" ?\n\s*(?=[LMCZz])", " ", svg)  # path data on one line
    svg = re.sub(r"\n\s*", "\n", svg)
    # Coordinates to 0.01 of a point, finer than any screen; text (tick labels) untouched.
    return re.sub(r'(\b(?:d|x|y|transform)=")([^"]*)"',
                  lambda m: m.group(1) + re.sub(r"(\d\.\d\d)\d+", r"\1", m.group(2)) + '"', svg)


def stage_plot_svg(plot: StagePlot, id_prefix: str = "plot") -> str:
    """Inline <svg> of both edges (empty string when nothing is drawable)."""
    if not plot.drawable():
        return ""
    import matplotlib
    from matplotlib.figure import Figure

    t_end = time_window(plot)
    scale, unit = _time_unit(t_end)
    rc: dict[Any, object] = {"svg.fonttype": "none", "svg.hashsalt": id_prefix, "font.size": 8,
          "font.family": "sans-serif", "axes.linewidth": 0.6, "axes.edgecolor": "#5c6770",
          "xtick.color": "#3d4852", "ytick.color": "#3d4852", "xtick.major.width": 0.6,
          "ytick.major.width": 0.6, "lines.linewidth": 1.3, "path.simplify": True}
    with matplotlib.rc_context(rc):
        fig = Figure(figsize=(7.4, 2.5))
        axes = fig.subplots(1, 2, sharey=True)
        for ax, edge_plot in zip(axes, plot.edges, strict=False):
            _draw_edge(ax, edge_plot, plot, t_end, scale, unit)
        axes[0].set_ylabel(f"V at {plot.receiver}")
        handles = [h for h in axes[0].get_lines() if not h.get_label().startswith("_")]
        if not handles:
            handles = [h for h in axes[1].get_lines() if not h.get_label().startswith("_")]
        if handles:
            fig.legend(handles=handles, loc="upper center", ncol=len(handles), frameon=False,
                       bbox_to_anchor=(0.5, 1.0), fontsize=7.5)
        fig.subplots_adjust(left=0.07, right=0.93, bottom=0.19, top=0.84, wspace=0.2)
        buf = io.StringIO()
        fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None})
    text = buf.getvalue()
    text = text[text.index("<svg"):]
    # Drop the fixed size so CSS scales the drawing to its container (viewBox kept).
    text = re.sub(r'<svg([^>]*?) width="[^"]*" height="[^"]*"', r'<svg\1', text, count=1)
    text = text.replace("<svg", '<svg class="waveform" role="img" '
                        f'aria-label="receiver voltage at {_attr(plot.receiver)} for both edges"', 1)
    return _shrink(_uniquify_ids(text, id_prefix))


def _attr(text: str) -> str:
    return text.replace("&", "&amp;").replace('"', "&quot;").replace("<", "&lt;")


def _draw_edge(ax, edge_plot: EdgePlot, plot: StagePlot, t_end: float, scale: float, unit: str) -> None:
    ax.set_xlim(-_PRE * t_end / scale, t_end / scale)
    ax.axvspan(0.0, plot.bounce_s / scale, color="#f4a261", alpha=0.18, lw=0,
               label="_bounce")
    if plot.bounce_s > 0:
        ax.text(plot.bounce_s / scale, 0.98, "bounce ", transform=ax.get_xaxis_transform(),
                ha="right", va="top", fontsize=7, color="#9a5b13")
    for label, volts in plot.thresholds:
        ax.axhline(volts, color="#6c757d", lw=0.7, ls=(0, (4, 3)), label="_thr")
        ax.text(1.005, volts, label, transform=ax.get_yaxis_transform(), va="center", ha="left",
                fontsize=7, color="#495057")
    title = edge_plot.edge + (f" ({edge_plot.direction})" if edge_plot.direction else "")
    ax.set_title(title, fontsize=8.5, loc="left", pad=3)
    ax.set_xlabel(f"time after the contact moves ({unit})", fontsize=7.5)
    ax.grid(True, lw=0.3, color="#dee2e6")
    for curve in edge_plot.curves:
        tt, vv = resample(curve, t_end)
        ax.plot(tt / scale, vv, color=COLOURS[curve.corner], ls=STYLES[curve.corner], label=curve.corner)
        if curve.crossing_s is not None:
            ax.plot([curve.crossing_s / scale], [curve.threshold_v], marker="o", ms=4.5, mfc="white",
                    mec=COLOURS[curve.corner], mew=1.3, ls="none", label="_cross")
    if edge_plot.note and not edge_plot.curves:
        ax.text(0.5, 0.5, edge_plot.note, transform=ax.transAxes, ha="center", va="center",
                fontsize=7.5, color="#6c757d", wrap=True)


def crossing_summary(plot: StagePlot) -> dict[str, list[tuple[str, str]]]:
    """Per edge: (corner, crossing time text) as marked on the plot."""
    out = {}
    for edge_plot in plot.edges:
        out[edge_plot.edge] = [(c.corner, format_quantity(c.crossing_s, "s") if c.crossing_s is not None
                                else "never") for c in edge_plot.curves]
    return out


__all__ = ["CORNERS", "Curve", "EdgePlot", "StagePlot", "crossing_summary", "resample",
           "stage_plot_data", "stage_plot_svg", "threshold_lines", "time_window"]
