"""The line-level fast path returns exactly the grammar's record.

Property test (hypothesis): for generated element and directive lines, when
drc/fastpath.py accepts a line, grammars/spice.lark (via drc/grammar.py)
parses it to the identical record; lines the fast path declines are only
checked to be declined for a reason (they hold a character it leaves to the
grammar, or a parenthesised word that is not a whole name).
"""

from hypothesis import given, settings, strategies as st

from drc.fastpath import FAST_DIRECTIVES, fast_directive, fast_element
from drc.grammar import parse_directive, parse_element
from drc.lines import LogicalLine, SourceFile

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
