"""`.if` / `.elseif` / `.else` / `.endif` blocks, evaluated with the parameters.

Simulators read a netlist's conditional blocks with its parameters
(ngspice manual, "Conditional netlist"): only the branch whose condition
holds is part of the circuit. Where the condition can be decided while
loading (at the top level, with the `.param`s read so far) only that branch
is read at all, so `.include`, `.lib`, `.model` and `.subckt` lines in the
other branches are never read, as a simulator would not read them. Where it
cannot (inside a `.subckt`, using the subcircuit's parameters, or using a
parameter defined further on) the block becomes a `Conditional` record
(drc/netlist/specs.py) whose branches hold their element lines and `.param`s;
flattening chooses a branch per instance (drc/netlist/parameters.py
`ParameterEvaluator.decide`). Directives that act while loading (`.model`,
`.include`, `.lib`, `.subckt`, `.global`, `.func`) inside such a block are
read whatever the condition, with one warning per block.

A block left open at `.ends` or at the end of the file, an `.elseif`, `.else`
or `.endif` without `.if`, and a condition that cannot be read are located
warnings; none stops reading.
"""

from __future__ import annotations

from enum import Enum
from itertools import count

from drc.errors import LimitError, NetlistError
from drc.netlist.expressions import Expression, ExpressionError, compile_expression, evaluate
from drc.netlist.lines import LogicalLine
from drc.netlist.options import ReaderOptions
from drc.netlist.parameters import ParameterEvaluator, compile_token, expression_error
from drc.netlist.specs import BodyRecord, Branch, Conditional, LoadedNetlist, SubcircuitDefinition
from drc.netlist.tokens import offset_of

# Directives that act while loading, read whatever a recorded block's condition.
LOAD_TIME_DIRECTIVES = frozenset({"model", "include", "inc", "lib", "subckt", "global", "func"})
BLOCK_DIRECTIVES = frozenset({"if", "elseif", "else", "endif"})
_NEVER = compile_expression("0")


class Mode(Enum):
    """How an open block is read."""

    DECIDED = "decided while loading"       # only the branch that holds is read
    RECORDED = "decided when flattening"    # every branch read into a Conditional
    SKIPPED = "inside a branch not read"    # a block nested in a branch that is not read


class Frame:
    """One open block: how it is read, in which definition it was opened, and
    (decided blocks) whether a branch was taken and the current one is read."""

    __slots__ = ("mode", "definition", "line", "taken", "reading", "block", "warned")

    def __init__(self, mode: Mode, definition: SubcircuitDefinition, line: LogicalLine,
                 reading: bool, block: Conditional | None = None) -> None:
        self.mode = mode
        self.definition = definition
        self.line = line
        self.taken = reading
        self.reading = reading
        self.block = block
        self.warned = False


def condition_text(line: LogicalLine) -> str:
    """The condition of an `.if`/`.elseif` line: the rest of the line."""
    parts = line.text.split(None, 1)
    return parts[1].strip() if len(parts) > 1 else ""


class ConditionalBlocks:
    """The open blocks of one read, and where the statements inside them go."""

    def __init__(self, loaded: LoadedNetlist, options: ReaderOptions) -> None:
        self.loaded = loaded
        self.options = options
        self.frames: list[Frame] = []
        self.serials = count(1)
        self.unread = 0          # open frames whose current branch is not read
        self.sink: list[BodyRecord] = []   # where the lines of branches not read go

    @property
    def skipping(self) -> bool:
        """True inside a branch that is not read."""
        return self.unread > 0

    def recorded_frame(self, definition: SubcircuitDefinition) -> Frame | None:
        """The innermost recorded block open in `definition`, if any."""
        for frame in reversed(self.frames):
            if frame.definition is not definition:
                return None
            if frame.mode is Mode.RECORDED:
                return frame
        return None

    def branch(self, definition: SubcircuitDefinition) -> Branch | None:
        """The recorded branch statements of `definition` go into now, or None."""
        frame = self.recorded_frame(definition)
        if frame is None or frame.block is None:
            return None
        return frame.block.branches[-1]

    def body(self, definition: SubcircuitDefinition) -> list[BodyRecord]:
        """Where an element line of `definition` goes now."""
        if self.unread:
            self.sink.clear()
            return self.sink
        branch = self.branch(definition)
        return branch.body if branch is not None else definition.body

    def add_param(self, definition: SubcircuitDefinition, entry: tuple) -> None:
        branch = self.branch(definition)
        (branch.params if branch is not None else definition.params).append(entry)

    def load_time(self, definition: SubcircuitDefinition, line: LogicalLine) -> None:
        """A load-time directive inside a recorded block: read, warned once per block."""
        frame = self.recorded_frame(definition)
        if frame is None or frame.warned:
            return
        frame.warned = True
        self.loaded.warn(f"{line.text.split()[0]} inside the {frame.line.text.split()[0]} block "
                         f"at line {frame.line.line}, whose condition is decided per instance: "
                         "read whatever the condition", line)

    # ------------------------------------------------------------ the directives

    def on_if(self, line: LogicalLine, definition: SubcircuitDefinition) -> None:
        if self.unread:
            self.push(Frame(Mode.SKIPPED, definition, line, False))
            return
        expression = self.condition(line)
        decided = self.decide_now(expression, definition, line, False) \
            if expression is not None else False
        if decided is not None:
            self.push(Frame(Mode.DECIDED, definition, line, decided))
            return
        block = Conditional(line, next(self.serials))
        block.branches.append(Branch(expression or _NEVER, line))
        branch = self.branch(definition)
        (branch.body if branch is not None else definition.body).append(block)
        (branch.conditionals if branch is not None else definition.conditionals).append(block)
        self.push(Frame(Mode.RECORDED, definition, line, True, block))

    def on_else(self, line: LogicalLine, definition: SubcircuitDefinition, keyword: str) -> None:
        """`.elseif COND` or `.else` (`keyword` without the dot)."""
        frame = self.open_frame(line, definition, keyword)
        if frame is None or frame.mode is Mode.SKIPPED:
            return
        expression = self.condition(line) if keyword == "elseif" else None
        if frame.mode is Mode.RECORDED and frame.block is not None:
            condition = expression if keyword == "else" or expression is not None else _NEVER
            frame.block.branches.append(Branch(condition, line))
            return
        reading = False
        if not frame.taken:
            reading = True if keyword == "else" else bool(
                expression is not None and self.decide_now(expression, definition, line, True))
        self.set_reading(frame, reading)
        frame.taken = frame.taken or reading

    def on_endif(self, line: LogicalLine, definition: SubcircuitDefinition) -> None:
        if self.open_frame(line, definition, "endif") is not None:
            self.pop()

    def close(self, definition: SubcircuitDefinition, line: LogicalLine | None) -> None:
        """Close the blocks left open in `definition` (at its `.ends`, or at the end
        of the file when `line` is None), with a warning each."""
        while self.frames and self.frames[-1].definition is definition:
            frame = self.frames[-1]
            where = "before this .ends" if line is not None else "at the end of the file"
            self.loaded.warn(f"{frame.line.text.split()[0]} block has no .endif {where}; "
                             "closed here", frame.line)
            self.pop()

    # ------------------------------------------------------------ helpers

    def push(self, frame: Frame) -> None:
        self.frames.append(frame)
        if not frame.reading:
            self.unread += 1

    def pop(self) -> None:
        frame = self.frames.pop()
        if not frame.reading:
            self.unread -= 1

    def set_reading(self, frame: Frame, reading: bool) -> None:
        if frame.reading != reading:
            self.unread += -1 if reading else 1
            frame.reading = reading

    def open_frame(self, line: LogicalLine, definition: SubcircuitDefinition,
                   keyword: str) -> Frame | None:
        """The block `line` continues or closes, or None (warned) when none is open."""
        if self.frames and self.frames[-1].definition is definition:
            return self.frames[-1]
        self.loaded.warn(f".{keyword} without .if; ignored", line)
        return None

    def condition(self, line: LogicalLine) -> Expression | None:
        """The compiled condition of an `.if`/`.elseif` line, or None (warned)."""
        text = condition_text(line)
        if not text:
            self.loaded.warn(f"{line.text.split()[0]} has no condition; its branch is not read",
                             line)
            return None
        try:
            return compile_token(line, text, self.options)
        except LimitError:
            raise
        except NetlistError as exc:
            self.loaded.warn(f"{line.text.split()[0]} condition not read ({exc.message}); its "
                             "branch is not read", exc.location or line.location())
            return None

    def decide_now(self, expression: Expression, definition: SubcircuitDefinition,
                   line: LogicalLine, elseif: bool) -> bool | None:
        """The condition's truth with the top level's `.param`s read so far, or
        None when it cannot be decided while loading (inside a `.subckt`, or it
        uses something not known yet). For an `.elseif` of a decided block an
        undecidable condition is warned about and read as false."""
        if definition.parent is None:
            evaluator = ParameterEvaluator(self.options, lambda message, where: None,
                                           self.loaded.functions)
            scope = evaluator.group(definition.params, evaluator.empty, {})
            try:
                return bool(evaluate(expression, scope.values, self.loaded.functions)[0])
            except ExpressionError as exc:
                if exc.limit:
                    raise expression_error(line, exc, offset_of(line, expression.text)) from None
        if elseif:
            self.loaded.warn(f"{line.text.split()[0]} condition cannot be decided while "
                             "loading (it uses a parameter not known yet); its branch is not "
                             "read", line)
            return False
        return None
