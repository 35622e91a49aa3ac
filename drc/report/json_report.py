"""The JSON report: a documented, versioned document ("drc-report/1").

docs/report-schema.md is the schema; a test checks that the keys written
here and the keys documented there agree. Output is deterministic: keys
sorted, lists in the model's order, floats rounded to nine significant
figures (enough for any figure here, and immune to last-bit noise), no
timestamps, so the same input and tool version give the same bytes. orjson
writes the text (a C writer: a report of thousands of stages is written in
a few milliseconds, where the standard library's indenting encoder took a
large part of a big board's check).
"""

from __future__ import annotations

import math
import re
from collections import Counter

from drc import __version__
from drc.analysis.results import EdgeResult, LevelResult, StageResult
from drc.caching import memoized
from drc.checks.findings import Figure, Finding
from drc.errors import SourceLocation
from drc.report.formats import RenderOptions
from drc.report.run_report import BoardReport, RunReport

REPORT_FORMAT = "drc-report/1"


def number(value: float | None) -> float | None:
    """A JSON-safe float: None for missing, infinite or NaN; nine significant figures."""
    if value is None or isinstance(value, bool):
        return None
    value = float(value)
    if not value:  # 0.0 and -0.0 are one key: each keeps its own sign
        return value
    return _rounded(value)


# Corner values, thresholds and rails recur across thousands of stages: round each once.
@memoized(200_000)
def _rounded(value: float) -> float | None:
    return float(f"{value:.9g}") if math.isfinite(value) else None


def location_json(location: SourceLocation | None) -> dict | None:
    if location is None:
        return None
    return {"file": location.file, "line": location.line or None, "column": location.column or None}


def figure_json(figure: Figure | None) -> dict | None:
    if figure is None:
        return None
    return {"value": number(figure.value), "unit": figure.unit, "text": figure.text}


def edge_json(edge: EdgeResult) -> dict:
    return {
        "direction": edge.direction,
        "start_v": number(edge.start_v),
        "final_v": number(edge.final_v),
        "threshold_v": number(edge.threshold_v),
        "threshold_fastest_v": number(edge.threshold_fastest_v),
        "threshold_slowest_v": number(edge.threshold_slowest_v),
        "nominal_s": number(edge.nominal_s),
        "fastest_s": number(edge.fastest_s),
        "slowest_s": number(edge.slowest_s),
        "slope_v_per_s": number(edge.slope_v_per_s),
        "slowest_slope_v_per_s": number(edge.slowest_slope_v_per_s),
        "corner_fastest": {k: number(v) for k, v in edge.corner_fastest.items()},
        "corner_slowest": {k: number(v) for k, v in edge.corner_slowest.items()},
    }


def level_json(level: LevelResult) -> dict:
    return {
        "logic": level.logic,
        "nominal_v": number(level.nominal_v),
        "worst_v": number(level.worst_v),
        "required_v": number(level.required_v),
        "margin_v": number(level.margin_v),
        "thevenin_v": number(level.thevenin_v),
        "thevenin_ohms": number(level.thevenin_ohms),
    }


def stage_json(result: StageResult) -> dict:
    stage = result.stage
    contact, receiver = stage.contact, stage.receiver
    return {
        "contact": contact.designator,
        "contact_class": contact.contact_class,
        "form": contact.form,
        "bounce_s": number(contact.bounce_s),
        "receiver": receiver.ref,
        "part_type": receiver.part_type,
        "family": receiver.family,
        "schmitt": receiver.schmitt,
        "edge_sensitive": receiver.edge_sensitive,
        "kind": stage.kind,
        "parts": list(stage.parts),
        "nets": list(stage.nets),
        "edges": {name: edge_json(edge) for name, edge in sorted(result.edges.items())},
        "levels": {name: level_json(level) for name, level in sorted(result.levels.items())},
        "currents": {
            "pull_a": number(result.pull_current_a),
            "contact_a": number(result.contact_current_a),
            "surge_peak_a": number(result.surge_peak_a),
            "clamp_a": number(result.clamp_current_a),
        },
        "max_input_v": number(result.max_input_v),
        "notes": list(result.notes),
    }


def finding_json(finding: Finding) -> dict:
    suppressed = None
    if finding.suppression is not None:
        suppressed = {"kind": str(finding.suppression), "justification": finding.justification}
    return {
        "rule": finding.rule,
        "severity": str(finding.severity),
        "contact": finding.contact,
        "receiver": finding.receiver,
        "parts": list(finding.parts),
        "nets": list(finding.nets),
        "measured": figure_json(finding.measured),
        "limit": figure_json(finding.limit),
        "message": finding.message,
        "fix": finding.fix,
        "location": location_json(finding.location),
        "related": [location_json(r) for r in finding.related],
        "suppressed": suppressed,
        "reason": finding.reason,
    }


def board_json(board: BoardReport) -> dict:
    return {
        "path": board.path,
        "config": board.config_path,
        "error": board.error,
        "contacts": board.contacts,
        "coverage": board.coverage.as_json() if board.coverage is not None else None,
        "stage_kinds": dict(board.stage_kinds),
        "diagnostics": list(board.diagnostics),
        "notes": list(board.notes),
        "inventory": board.inventory.as_json() if board.inventory is not None else None,
        "stages": [stage_json(s) for s in board.stages],
        "findings": [finding_json(f) for f in board.findings],
        "summary": board.counts(),
        "status": str(board.status()),
        "needs_attention": board.needs_attention(),
    }


def report_document(run: RunReport) -> dict:
    """The report as plain JSON data (the schema of docs/report-schema.md)."""
    baseline = None
    if run.baseline is not None:
        baseline = {"path": run.baseline.path, "matched": run.baseline.matched,
                    "new": run.baseline.new, "written": run.baseline.written,
                    "fixed": [e.as_json() for e in run.fixed],
                    "waived": [e.as_json() for e in run.baseline_waived]}
    return {
        "format": REPORT_FORMAT,
        "tool": {"name": "drc", "version": __version__},
        "caution": run.caution,
        "fail_level": str(run.fail_level),
        "boards": [board_json(b) for b in run.boards],
        "waiver_notes": list(run.waiver_notes),
        "baseline": baseline,
        "summary": {**run.counts(), "boards": len(run.boards),
                    "contacts_checked": run.coverage().checked,
                    "contacts_not_checked": run.coverage().not_checked,
                    "contacts_non_logic_load": run.coverage().load_only,
                    "boards_by_status": dict(Counter(str(b.status()) for b in run.boards))},
    }


def render_json(run: RunReport) -> str:
    """The JSON report text: sorted keys, two-space indent, UTF-8 characters kept, final newline.

    Written by orjson (its float text is the shortest that reads back exactly,
    e.g. `2.2e-6`): the same bytes for the same input and tool version.
    """
    return dump_indented(report_document(run)) + "\n"


def render_json_utf8(run: RunReport) -> bytes:
    """`render_json`'s text as UTF-8 bytes, made without a text copy (orjson writes bytes)."""
    return dump_indented_utf8(report_document(run)) + b"\n"


def dump_indented(value) -> str:
    """`value` as indented JSON (two spaces, sorted keys, UTF-8 kept); keys that are
    not strings (enums, numbers) are written as strings."""
    return dump_indented_utf8(value).decode("utf-8")


def dump_indented_utf8(value) -> bytes:
    """`dump_indented`'s text, UTF-8 encoded."""
    import orjson
    option = orjson.OPT_INDENT_2 | orjson.OPT_SORT_KEYS | orjson.OPT_NON_STR_KEYS
    try:
        return orjson.dumps(value, option=option)
    except orjson.JSONEncodeError:
        # A string holding a byte of a file name that is not UTF-8 (Python keeps it
        # as a lone surrogate, which JSON cannot carry): U+FFFD, as every output
        # writes it (drc.atomic). Only this rare case pays for the walk.
        return orjson.dumps(_valid_text(value), option=option)


_SURROGATE = re.compile("[\ud800-\udfff]")


def _valid_text(value):
    """`value` with every lone surrogate in its strings (keys too) replaced by U+FFFD."""
    if isinstance(value, str):
        return _SURROGATE.sub("\ufffd", value)
    if isinstance(value, dict):
        return {_valid_text(k): _valid_text(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_valid_text(v) for v in value]
    return value


class JsonFormatter:
    """The "json" format of `drc check`."""

    name = "json"

    def render(self, run: RunReport, options: RenderOptions) -> str:
        return render_json(run)

    def render_utf8(self, run: RunReport, options: RenderOptions) -> bytes:
        """The same report as UTF-8 bytes (standard output writes them as they are)."""
        return render_json_utf8(run)
