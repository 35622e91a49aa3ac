"""One interface for every report format, and the registry that finds them by name.

Every format of `drc check` (text, json, sarif, junit, html) is a formatter:
an object with a `name` and `render(run, options) -> str` that turns a
RunReport into the whole text of a report, computing nothing. The command
line looks a formatter up by its name here and writes what it renders, to
standard output or to a file; it knows nothing else about any format.

The registry names the module and class of each formatter instead of
importing them, so that choosing a format imports only that format's module
(rich for text, jinja2 and matplotlib for html...) and `drc --version` stays
fast.
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass
from enum import StrEnum
from pathlib import Path
from typing import TYPE_CHECKING, Any, Protocol, runtime_checkable

if TYPE_CHECKING:
    from drc.report.run_report import RunReport


class BoardOrder(StrEnum):
    """The order of boards in the archive views (`drc check --sort`)."""

    WORST = "worst"  # not checked, then errors, then warnings, ..., then clean
    PATH = "path"  # alphabetical (natural order of the paths)


@dataclass(frozen=True, slots=True)
class RenderOptions:
    """What a report may depend on besides the run.

    quiet: only error findings and the summary (text). working_dir: the
    folder paths are made relative to (SARIF artifact URIs); None = the
    current folder when rendering. sort: the order of the boards in the
    archive views (text table, HTML): "worst" first, or by "path".
    """

    quiet: bool = False
    working_dir: Path | None = None
    sort: BoardOrder = BoardOrder.WORST


@runtime_checkable
class Formatter(Protocol):
    """A report format: its name and the whole report text of a run."""

    name: str

    def render(self, run: RunReport, options: RenderOptions) -> str: ...


@runtime_checkable
class ConsoleFormatter(Formatter, Protocol):
    """A format that can also print to a rich Console (colour on a terminal)."""

    def print_to(self, console: Any, run: RunReport, options: RenderOptions) -> None: ...


# Format name -> (module, class); the order is the order `--format` lists them in.
_REGISTRY: dict[str, tuple[str, str]] = {
    "text": ("drc.report.text", "TextFormatter"),
    "json": ("drc.report.json_report", "JsonFormatter"),
    "sarif": ("drc.report.sarif", "SarifFormatter"),
    "junit": ("drc.report.junit", "JunitFormatter"),
    "html": ("drc.report.html", "HtmlFormatter"),
}

FORMATS: tuple[str, ...] = tuple(_REGISTRY)


def formatter(name: str) -> Formatter:
    """The formatter of format `name` (one of FORMATS); KeyError for another name."""
    module, attribute = _REGISTRY[name]
    return getattr(importlib.import_module(module), attribute)()
