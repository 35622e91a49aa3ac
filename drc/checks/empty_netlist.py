"""Rule empty-netlist: a board file that holds no element at all.

A gate must never pass what it did not check. An empty or comments-only file
is what a failed or cut-short schematic export leaves behind; reading it as a
clean board would let a CI job pass a board nobody checked. A board that
holds parts but no contacts stays clean: a power or logic sheet with no
switches is common.
"""

from __future__ import annotations

from drc.checks.context import RuleContext
from drc.checks.examples import debounced_stage, netlist
from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc
from drc.errors import SourceLocation

DOC = RuleDoc(
    id="empty-netlist",
    title="Board file holds no parts",
    severity="error",
    what=("Flags a board file that holds no element after reading: an empty file, one that holds "
          "only comments, or one whose statements all lie in blocks the checker skips (an unclosed "
          "`.control` block, sections never selected)."),
    why=("An export that failed or was cut short often leaves such a file. Reported as a clean "
         "board, it would let a gate pass a design nobody checked."),
    how="Counts the elements the reader kept, after includes and subcircuits are expanded.",
    fix=("export the netlist again and check that the file holds the board's parts; if the file is "
         "meant to be empty, leave it out of the checked paths or waive the finding with a reason."),
    failing_example="* LX-24 key matrix sheet: the export stopped before any part was written\n.end\n",
    passing_example=netlist("A debounced key into a 74HC14", *debounced_stage()),
)


def check(board, ctx: RuleContext):
    if board.netlist.elements:
        return
    location = SourceLocation(board.netlist.path, 1, 1) if board.netlist.path else None
    yield ctx.finding(parts=(), measured=None, limit=None, location=location,
                      message="the board file holds no parts (an empty or comments-only netlist): nothing was checked",
                      fix=DOC.fix)


# Registered by a call, not a decorator: mutation testing (mutmut) leaves decorated
# functions alone, and the rule body is what its tests must pin down.
rule(DOC, kind="board")(check)
