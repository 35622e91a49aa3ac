"""The JSON report: a documented, versioned document ("drc-report/1").

docs/report-schema.md is the schema; a test checks that the keys written
here and the keys documented there agree. Output is deterministic: keys
sorted, lists in the model's order, floats rounded to nine significant
figures (enough for any figure here, and immune to last-bit noise), no
timestamps, so two runs on the same input are byte-identical.
"""

from __future__ import annotations

import json
import math
from collections.abc import Callable

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
    }


def board_json(board: BoardReport) -> dict:
    return {
        "path": board.path,
        "config": board.config_path,
        "error": board.error,
        "contacts": board.contacts,
        "stage_kinds": dict(board.stage_kinds),
        "diagnostics": list(board.diagnostics),
        "inventory": board.inventory.as_json() if board.inventory is not None else None,
        "stages": [stage_json(s) for s in board.stages],
        "findings": [finding_json(f) for f in board.findings],
        "summary": board.counts(),
    }


def report_document(run: RunReport) -> dict:
    """The report as plain JSON data (the schema of docs/report-schema.md)."""
    baseline = None
    if run.baseline is not None:
        baseline = {"path": run.baseline.path, "matched": run.baseline.matched,
                    "new": run.baseline.new, "written": run.baseline.written,
                    "fixed": [e.as_json() for e in run.fixed]}
    return {
        "format": REPORT_FORMAT,
        "tool": {"name": "drc", "version": __version__},
        "caution": run.caution,
        "fail_level": str(run.fail_level),
        "boards": [board_json(b) for b in run.boards],
        "waiver_notes": list(run.waiver_notes),
        "baseline": baseline,
        "summary": {**run.counts(), "boards": len(run.boards)},
    }


def render_json(run: RunReport) -> str:
    """The JSON report text: sorted keys, two-space indent, UTF-8 characters kept, final newline.

    Byte-identical to json.dumps(doc, indent=2, sort_keys=True, ensure_ascii=False,
    allow_nan=False) (tests/report/test_json_report.py checks it); written by
    dump_indented because the standard library's indenting encoder is pure
    Python generators, three times slower on a report of thousands of stages.
    """
    return dump_indented(report_document(run)) + "\n"


class JsonFormatter:
    """The "json" format of `drc check`."""

    name = "json"

    def render(self, run: RunReport, options: RenderOptions) -> str:
        return render_json(run)


_escape: Callable[[str], str] = json.encoder.encode_basestring  # the C escaper when available
_float_repr = float.__repr__
_int_repr = int.__repr__
_CONTAINERS = frozenset((dict, list, tuple))


def _key_text(key) -> str:
    """A non-string key as json.dumps writes it."""
    if isinstance(key, str):
        return key
    if isinstance(key, float):
        return _float_text(key)
    if key is True:
        return "true"
    if key is False:
        return "false"
    if key is None:
        return "null"
    if isinstance(key, int):
        return _int_repr(key)
    raise TypeError(f"keys must be str, int, float, bool or None, not {type(key).__name__}")


def _float_text(value: float) -> str:
    if value != value or value in (math.inf, -math.inf):
        raise ValueError("Out of range float values are not JSON compliant: " + repr(value))
    return _float_repr(value)


def _scalar(value) -> str:
    """Any scalar, in json's order of checks (so subclasses such as numpy floats,
    IntEnum or StrEnum are written as their base type)."""
    if isinstance(value, str):
        return _escape(value)
    if value is None:
        return "null"
    if value is True:
        return "true"
    if value is False:
        return "false"
    if isinstance(value, int):
        return _int_repr(value)
    if isinstance(value, float):
        return _float_text(value)
    raise TypeError(f"Object of type {value.__class__.__name__} is not JSON serializable")


def _no_default(value):
    raise TypeError(f"Object of type {value.__class__.__name__} is not JSON serializable")


def dump_indented(value) -> str:
    """`value` as json.dumps(indent=2, sort_keys=True, ensure_ascii=False, allow_nan=False)."""
    writer = _IndentedWriter()
    writer.value(value, "\n")
    return "".join(writer.out)  # one copy of the text, whatever the nesting


class _IndentedWriter:
    """One dump: the pieces of text written so far, and what this dump remembers
    (the written form of each key, the encoder of each depth). Each `indent`
    argument is the newline and indent of the value's closing bracket."""

    __slots__ = ("out", "keys", "encoders")

    def __init__(self) -> None:
        self.out: list[str] = []
        self.keys: dict[str, str] = {}  # key -> its escaped text and ": "; the same few dozen recur
        self.encoders: dict[str, Callable] = {}

    def value(self, value, indent: str) -> None:
        kind = type(value)
        if kind is dict:
            self.mapping(value, indent)
        elif kind is list or kind is tuple:
            self.sequence(value, indent)
        elif kind is float:
            self.out.append(_float_text(value))
        elif isinstance(value, dict):
            self.mapping(dict(value), indent)
        elif isinstance(value, (list, tuple)):
            self.sequence(list(value), indent)
        else:
            self.out.append(_scalar(value))

    def leaf(self, value: dict | list | tuple, inner: str) -> str:
        """A container of scalars alone, in one call of the C encoder (the newline and
        indent as its item separator), without its brackets."""
        encoder = self.encoders.get(inner)
        if encoder is None:
            encoder = self.encoders[inner] = _leaf_encoder(inner)
        return "".join(encoder(value, 0))[1:-1]

    def key(self, key) -> str:
        if type(key) is not str:
            return _escape(_key_text(key)) + ": "
        text = self.keys[key] = _escape(key) + ": "
        return text

    def mapping(self, value: dict, indent: str) -> None:
        out = self.out
        if not value:
            out.append("{}")
            return
        inner = indent + "  "
        if _CONTAINERS.isdisjoint(map(type, value.values())) and type(next(iter(value))) is str:
            out += ("{" + inner, self.leaf(value, inner), indent + "}")
            return
        append = out.append
        keys = self.keys
        head = "{" + inner
        separator = "," + inner
        for k, v in sorted(value.items()):
            key = keys.get(k) if type(k) is str else None
            if key is None:
                key = self.key(k)
            kind = type(v)
            # Scalars inline: a call per value would be most of the cost of a report.
            if kind is str:
                append(head + key + _escape(v))
            elif kind is float:
                text = _float_repr(v)
                if text[-1] > "9":
                    _float_text(v)  # raises on inf and nan, as json does
                append(head + key + text)
            elif v is None:
                append(head + key + "null")
            else:
                append(head + key)
                self.value(v, inner)
            head = separator
        append(indent + "}")

    def sequence(self, value: list | tuple, indent: str) -> None:
        out = self.out
        if not value:
            out.append("[]")
            return
        inner = indent + "  "
        if _CONTAINERS.isdisjoint(map(type, value)):
            out += ("[" + inner, self.leaf(value, inner), indent + "]")
            return
        head = "[" + inner
        separator = "," + inner
        for v in value:
            out.append(head)
            self.value(v, inner)
            head = separator
        out.append(indent + "]")


def _leaf_encoder(inner: str) -> Callable:
    """An encoder for a container of scalars whose items are separated by "," and
    `inner`: the C encoder when there is one, else the standard library's Python one."""
    make = json.encoder.c_make_encoder  # type: ignore[attr-defined]  # None without the C accelerator
    if make is not None:
        return make(None, _no_default, _escape, None, ": ", "," + inner, True, False, False)
    plain = json.JSONEncoder(sort_keys=True, ensure_ascii=False, allow_nan=False,
                             separators=("," + inner, ": "))
    return lambda value, _level: plain.iterencode(value)
