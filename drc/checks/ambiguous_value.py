"""Rule ambiguous-value: a value that SPICE reads differently than a person would."""

from __future__ import annotations

import re

from drc.checks.context import RuleContext, part_figure, part_value_text
from drc.checks.context import quantity_text as fq
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

DOC = RuleDoc(
    id="ambiguous-value",
    title="Value that SPICE reads differently than a person would",
    severity="warning",
    what=("Looks at every resistor and capacitor value as written: `1M` on a resistor (SPICE reads "
          "M as milli, so 1 mΩ, where a person almost always means 1 MΩ), a capacitor value whose "
          "scale letter is F (`1F`, `47F`: SPICE reads femto), and letter-and-digit codes of IEC "
          "60062 such as `4k7`, `2R2`, `1M5` (ngspice's default mode reads `4k7` as 4 kΩ). The "
          "letter-digit code is a note: drc reads it as a person means it; the other two are warnings."),
    why=("The same netlist means one thing to the schematic's author, another to a simulator and "
         "possibly a third to a bill-of-materials tool. drc's analysis uses the value a person "
         "means for the letter-digit code, but a simulation of the same file will not."),
    how="Text of the value: the suffix after the number, compared with the SPICE scale-factor table.",
    fix="Write the value unambiguously: `1Meg` for 1 MΩ, `1u`/`100n` with the scale letter, `4.7k` for `4k7`.",
    failing_example=netlist("R1 written in the letter-digit code `8k2`", *debounced_stage(r1="8k2")),
    passing_example=netlist("R1 written `8.2k`", *debounced_stage()),
    figure="value",
)

_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
# digits, one scale letter standing for the decimal point, digits, optional unit letters
_CODE = re.compile(r"(\d+)(meg|[rkmgtunpµμ])(\d+)[a-zΩ]*", re.IGNORECASE)


def classify_value_text(kind: str, text: str) -> str | None:
    """Which ambiguity `text` has for an element of `kind` ("R"/"C"), or None.

    "code" (letter-digit code), "milli" (M on a resistor), "femto" (F as a
    capacitor's scale letter).
    """
    match = _NUMBER.match(text)
    if match is None:
        return None
    rest = text[match.end():]
    if not rest:
        return None
    if _is_code(text):
        return "code"
    low = rest.lower()
    if kind == "R" and low.startswith("m") and not low.startswith(("meg", "mil")):
        return "milli"
    if kind == "C" and low.startswith("f"):
        return "femto"
    return None


def _is_code(text: str) -> bool:
    return _CODE.fullmatch(text) is not None


def check(board, ctx: RuleContext):
    reported: set = set()
    # A board writes a few dozen distinct values many thousand times: classify each once.
    seen: dict[tuple[str, str], str | None] = {}
    for element in board.netlist.elements:
        kind = element.kind
        if (kind != "R" and kind != "C") or element.value is None:
            continue
        text = element.value.text
        if text.isdigit() or not text:
            continue  # a bare number is never ambiguous: the common case stays cheap
        memo = (kind, text)
        if memo in seen:
            problem = seen[memo]
        else:
            problem = seen[memo] = classify_value_text(kind, text)
        if problem is None:
            continue
        # A subcircuit expanded many times repeats one written value: report the text once.
        if element.location in reported:
            continue
        reported.add(element.location)
        yield _finding(ctx, element, problem)


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="board")(check)


def _finding(ctx: RuleContext, element, problem: str):
    unit = "Ω" if element.kind == "R" else "F"
    value = element.value
    spice = value.spice_si
    spice_text = fq(spice, unit) if spice is not None else "no number"
    d, text = element.designator, value.text
    if problem == "code":
        message = (f"{d} value '{text}' is a letter-digit code: drc reads {part_value_text(value.si, unit)}, "
                   f"ngspice's default mode reads {spice_text}")
        fix = f"write {d} as {_plain(value.si, unit)}"
        severity = "note"
    elif problem == "milli":
        message = (f"{d} value '{text}' is {spice_text} in SPICE (M is milli); 1 MΩ is written '1Meg'")
        number = _NUMBER.match(text)
        mantissa = number.group(0) if number else text
        fix = f"write {d} as '{mantissa}Meg' if a megohm is meant, or {_plain(value.si, unit)} if not"
        severity = "warning"
    else:
        message = f"{d} value '{text}' is {spice_text} in SPICE (F is femto, not farad)"
        fix = f"write {d} with its scale letter (e.g. '1u', '100n'); a trailing F after the scale letter is fine"
        severity = "warning"
    return ctx.finding(parts=(d,), nets=tuple(element.nodes),
                       measured=part_figure(value.si, unit),  # the value drc reads and analyses
                       limit=None, message=message, fix=fix, severity=severity,
                       location=element.location, related=())


def _plain(value: float, unit: str) -> str:
    """'4.7k', '2.2', '1Meg': the SPICE spelling of a value that reads the same everywhere."""
    for scale, suffix in ((1e6, "Meg"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "u"),
                          (1e-9, "n"), (1e-12, "p")):
        if abs(value) >= scale * 0.9995:
            return f"'{value / scale:.4g}{suffix}'"
    return f"'{value:.4g}'"
