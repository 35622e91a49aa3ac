"""The words and the JSON of `drc simulate`: output edges per actuation, and a verdict.

`drc.simulation.injection` counts the receiver's output edges over many
bounce trials; this module only presents a `SimulationResult`, as a table per
actuation on a rich Console or as plain JSON data. Formats; never computes.
"""

from __future__ import annotations

from typing import Any, Literal

from rich import box
from rich.console import Console
from rich.table import Table
from rich.text import Text

from drc.report.layout import path_name, plain, print_lines
from drc.simulation.injection import SimulationResult
from drc.units import format_quantity

# Edges-per-actuation ranges of the text histogram; None: no upper end.
_BINS = ((0, 0), (1, 1), (2, 2), (3, 5), (6, 10), (11, 30), (31, 100), (101, None))
_COLUMNS: tuple[tuple[str, Literal["left", "right"]], ...] = (
    ("actuation", "left"), ("clean", "right"), ("missed", "right"),
    ("most edges", "right"), ("mean", "right"), ("edges per actuation", "left"))


def simulation_json(result: SimulationResult) -> dict[str, Any]:
    """The result as plain JSON data (trials and clean trials per edge and in total).

    simulated: false when the stage was not simulated (notes say why; no verdict).
    band_v / linger_limit_s: a plain input's undefined band and the longest stay
    in it an actuation may make; lingering_trials: actuations that stayed longer.
    """
    return {
        "stage": result.stage, "kind": result.kind, "contact_class": result.contact_class,
        "simulated": result.simulated,
        "trials": result.trials, "seed": result.seed, "bounce_s": result.bounce_s,
        "receiver_model": result.receiver_model, "upper_v": result.upper_v, "lower_v": result.lower_v,
        "band_v": list(result.band_v) if result.band_v else None, "linger_limit_s": result.linger_limit_s,
        "clean_trials": result.clean_trials,
        "edges": {e: {"trials": s.trials, "clean_trials": s.clean_trials, "missed_trials": s.missed_trials,
                      "lingering_trials": s.lingering_trials, "longest_stay_s": s.longest_stay_s,
                      "max_edges": s.max_edges, "mean_edges": round(s.mean_edges, 6),
                      "histogram": {str(k): v for k, v in sorted(s.histogram.items())}}
                  for e, s in result.edges.items()},
        "worst_trial": {"index": result.worst_trial, "edges": dict(result.worst_edges)},
        "notes": list(result.notes),
    }


def histogram_bins(histogram: dict[int, int]) -> list[tuple[str, int]]:
    """Edges-per-actuation counts folded into a few readable ranges ("3-5": 17, ">100": 2)."""
    out = []
    for low, high in _BINS:
        count = sum(n for edges, n in histogram.items()
                    if edges >= low and (high is None or edges <= high))
        if count:
            label = str(low) if low == high else (f">{low - 1}" if high is None else f"{low}-{high}")
            out.append((label, count))
    return out


def _model_text(result: SimulationResult) -> str:
    fq = format_quantity
    if result.receiver_model in ("schmitt", "latch"):
        model = f"Schmitt VT+ {fq(result.upper_v, 'V')}, VT- {fq(result.lower_v, 'V')}" \
            if result.upper_v != result.lower_v else f"inputs switching at {fq(result.upper_v, 'V')}"
        return f"cross-coupled latch, {model}" if result.receiver_model == "latch" else model
    text = f"plain input, switching at {fq(result.upper_v, 'V')}"
    if result.band_v and result.linger_limit_s is not None:
        text += (f", undefined {fq(result.band_v[0], 'V')}-{fq(result.band_v[1], 'V')} "
                 f"(at most {fq(result.linger_limit_s, 's')} there)")
    return text


def stage_title(name: str) -> str:
    """The stage's name as every screen writes it: "SW1 → U1:1" (the simulation names
    it in ASCII, "SW1 -> U1:1", as its SPICE decks do)."""
    contact, arrow, receiver = name.partition(" -> ")
    return path_name(contact, receiver) if arrow else name


def render_simulation_text(result: SimulationResult, console: Console) -> None:
    """Print the result to a rich Console: a table per actuation and a verdict."""
    title = plain(f"{stage_title(result.stage)} ({result.kind}, {result.contact_class})", "bold")
    if not result.simulated:
        print_lines(console, [title] + [plain(note, "bold yellow", hang=2) for note in result.notes])
        return
    print_lines(console, [title, plain(f"{result.trials} trials, seed {result.seed}, bursts up to "
                                       f"{format_quantity(result.bounce_s, 's')}; {_model_text(result)}; "
                                       "nominal corner", hang=2)])
    lingers = result.band_v is not None
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, header_style="bold")
    for name, justify in _COLUMNS[:3] + ((("lingering", "right"),) if lingers else ()) + _COLUMNS[3:]:
        table.add_column(name, justify=justify)
    for edge, s in result.edges.items():
        hist = "  ".join(f"{k}:{v}" for k, v in histogram_bins(s.histogram))
        style = "green" if s.clean_trials == s.trials else "bold red"
        cells: list[str | Text] = [edge, Text(f"{s.clean_trials}/{s.trials}", style=style), str(s.missed_trials)]
        cells += [str(s.lingering_trials)] if lingers else []
        table.add_row(*cells, str(s.max_edges), f"{s.mean_edges:.2f}", hist)
    console.print(table)
    worst = ", ".join(f"{e} {n}" for e, n in result.worst_edges.items())
    verdict_ok = result.clean_trials == result.trials
    words = "one edge per press and per release" + (", no lingering in the band" if lingers else "")
    print_lines(console, [
        plain(f"clean trials ({words}): {result.clean_trials}/{result.trials}",
              "green" if verdict_ok else "bold red", hang=2),
        plain(f"worst trial: #{result.worst_trial} ({worst} output edges)", hang=2),
        *(plain(f"note: {note}", "dim", hang=6) for note in result.notes)])
