"""The line-level fast path returns exactly the grammar's record.

Property test (hypothesis): for generated element and directive lines, when
drc/netlist/fastpath.py accepts a line, grammars/spice.lark (via drc/netlist/grammar.py)
parses it to the identical record; lines the fast path declines are only
checked to be declined for a reason (they hold a character it leaves to the
grammar, or a parenthesised word that is not a whole name).
"""

from hypothesis import given, settings
from hypothesis import strategies as st

from drc.netlist.fastpath import FAST_DIRECTIVES, fast_directive, fast_element
from drc.netlist.grammar import parse_directive, parse_element
from drc.netlist.lines import LogicalLine, SourceFile

_SOURCE = SourceFile("<prop>", [])
_WORD_CHARS = "abcXYZ0123456789_$#+-./:;!?@%&|\\µ()<>[]~^"
_SPECIAL = "=,{}'\"*"

words = st.text(alphabet=_WORD_CHARS + _SPECIAL[:2], min_size=1, max_size=8)
names = st.text(alphabet=_WORD_CHARS, min_size=1, max_size=8).filter(lambda w: w[0] != "*")
blanks = st.sampled_from([" ", "  ", "\t", " \t ", "\x0b", "\xa0"])


@st.composite
def element_lines(draw):
    head = draw(st.sampled_from("RCLVIDSXrclvidsxKEGQMB"))
    tail = draw(st.text(alphabet="0123456789abc_", max_size=4))
    parts = [head + tail]
    for word in draw(st.lists(st.one_of(names, words), max_size=7)):
        parts.append(draw(blanks))
        parts.append(word)
    return "".join(parts)


def _line(text):
    return LogicalLine(text, 1, 1, None, _SOURCE)


@settings(max_examples=400, deadline=None)
@given(element_lines())
def test_fast_element_agrees_with_grammar(text):
    fast = fast_element(text)
    if fast is None:
        return
    assert fast == parse_element(_line(text))


@st.composite
def directive_lines(draw):
    keyword = draw(st.sampled_from(sorted(FAST_DIRECTIVES)))
    head = "." + keyword
    if draw(st.booleans()):
        head = head.upper()
    parts = [head]
    for word in draw(st.lists(names, min_size=2 if keyword == "subckt" else 0, max_size=6)):
        parts.append(draw(blanks))
        parts.append(word)
    return "".join(parts)


@settings(max_examples=300, deadline=None)
@given(directive_lines())
def test_fast_directive_agrees_with_grammar(text):
    keyword = text.split()[0][1:].lower()
    fast = fast_directive(text, keyword)
    if fast is None:
        return
    assert fast == parse_directive(_line(text), keyword)


def test_fast_path_takes_exported_names_and_declines_calls():
    assert fast_element("R1 Net-(SW1-Pad2) /a/b 4k7") == ("R1", ("Net-(SW1-Pad2)", "/a/b", "4k7"), ())
    assert fast_element("V1 a 0 PULSE(0 5 1n)") is None
    assert fast_element("R1 a b {x}") is None
    assert fast_element("X1 a b sub w=1") is None
    assert fast_element("B1 a 0 v") is None


# ---- the top file's fast loop (drc/netlist/loader.py fast_walk, drc/netlist/fastpath.py PLAIN_LINE) ----

from drc.netlist.fastpath import plain_words  # noqa: E402
from drc.netlist.lines import logical_lines, strip_comment  # noqa: E402


@settings(max_examples=400, deadline=None)
@given(element_lines(), st.sampled_from(["", " ", "\t", "  "]))
def test_plain_line_is_its_own_statement_and_the_grammars_record(text, trailing):
    """A physical line PLAIN_LINE accepts is unchanged by comment removal and
    reads, by the grammar, as exactly its words."""
    raw = text + trailing
    words = plain_words(raw)
    if words is None or raw[0] not in "RCLSXrclsx":   # the letters fast_walk reads itself
        return
    assert strip_comment(raw) == raw.rstrip()
    assert parse_element(_line(raw.rstrip())) == (words[0], tuple(words[1:]), ())


_STATEMENT_LINES = st.sampled_from([
    "R1 a b 4k7", "r2 A B 1k", "C1 a 0 100n", "L1 b gnd 1u", "S1 a b", "SW2 a B TACTILE",
    "R3 Net-(SW1-Pad2) /x/y 2R2", "X1 a b sub", "XU1 a b part", "V1 a 0 DC 5", "R4 a b 1k ; note",
    "R5 a b", "+ 10k", "  + c", "* comment", "", "   ", "; only a comment", "R6 a b {1k}",
    "  R7 a b 1k", "R8 a b 1k model", "C2 a", "+ 0 1n $ x", ".subckt sub p q", ".ends",
    ".global A", ".param x=1", "R1 c d 1", "K1 L1 L2 0.5", "R9 a b 1k\t", "R10 a b notanumber",
    ".end", "R11 x y 5",
])


def _generic_read(text):
    from drc.netlist import loader as module

    def walk_all(self, source, lines):
        self.walk(logical_lines(source, 1, self.options.max_line_length), None)

    fast = module.NetlistLoader.fast_walk
    module.NetlistLoader.fast_walk = walk_all
    try:
        return _outcome(text)
    finally:
        module.NetlistLoader.fast_walk = fast


def _outcome(text):
    from drc.errors import DrcError
    from drc.netlist.reader import read_netlist_text
    try:
        netlist = read_netlist_text(text, "<prop>")
    except DrcError as exc:
        return ("error", type(exc).__name__, exc.render())
    return ([(e.designator, e.kind, e.nodes, e.value, e.model, e.location, dict(e.params),
              e.text, e.instance_path, e.problem) for e in netlist.elements],
            list(netlist.diagnostics), netlist.title)


@settings(max_examples=300, deadline=None)
@given(st.lists(_STATEMENT_LINES, max_size=14), st.sampled_from(["\n", "\r\n"]))
def test_fast_loop_reads_like_the_general_walk(lines, newline):
    """The top file's fast loop (plain lines, bulk continuation zones, hand-over
    to `walk`) gives the same netlist, or the same error, as reading every
    statement through the general walk (drc/netlist/lines.py logical_lines)."""
    text = newline.join(["title"] + lines)
    assert _outcome(text) == _generic_read(text)
