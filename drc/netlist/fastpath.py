"""Line-level fast path for plain element lines.

Most lines of a board export are plain: `R12 Net-3 +5V 4k7`, `SW3 a b
TACTILE`, `XU1 a b 0 vcc 74HC14`. For these, the grammar's tokens are exactly
the blank-separated words, so `str.split` gives the same record the lark
grammar would (tests/netlist/test_fastpath.py proves it with generated lines).
A line qualifies when it starts with one of the letters below, contains
none of the characters that make the grammar do more than split words
(`= , { } ' " *`), and every word holding a parenthesis is a whole name in
the grammar's sense (`Net-(SW1-Pad2)`: balanced, nothing but name characters
inside). Everything else goes to drc/netlist/grammar.py.
"""

from __future__ import annotations

import re

# Element letters the fast path takes (B needs its raw expression, K/E/G...
# are rare enough that the grammar path costs nothing measurable).
FAST_LETTERS = frozenset("RCLVIDSXrclvidsx")

_NEEDS_GRAMMAR = re.compile(r"[=,{}'\"*]")
# The grammar's NAME terminal (grammars/spice.lark), for words with parentheses.
_NAME = re.compile(r"[^\s=(),{}'\"*][^\s=(),{}'\"]*(?:\([^\s=(),{}'\"]*\)[^\s=(),{}'\"]*)*")


def fast_element(text: str) -> tuple | None:
    """The element record `(designator, items, ())` of a plain line, else None."""
    if text[0] not in FAST_LETTERS or _NEEDS_GRAMMAR.search(text) is not None:
        return None
    words = text.split()
    if "(" in text or ")" in text:
        fullmatch = _NAME.fullmatch
        for word in words:
            if ("(" in word or ")" in word) and fullmatch(word) is None:
                return None
    return (words[0], tuple(words[1:]), ())


# A whole physical line that is nothing but plain words: the grammar's NAME
# without `*` anywhere, separated by blanks, ending in optional blanks, and no
# word starting with an inline-comment marker (`;`, `$`, `//`). Such a line
# starting at column 1 is its own logical line (when no `+` line continues
# it) and `str.split` gives the grammar's record. One regular expression per
# line, in C, instead of a character scan and a check per word.
_PLAIN_WORD = r"(?![;$]|//)[^\s=(),{}'\"*]+(?:\([^\s=(),{}'\"*]*\)[^\s=(),{}'\"*]*)*"
PLAIN_LINE = re.compile(rf"{_PLAIN_WORD}(?:\s+{_PLAIN_WORD})*\s*")


def plain_words(raw: str) -> list[str] | None:
    """The words of physical line `raw` when it is a plain statement the grammar
    would read as just those words (see PLAIN_LINE), else None.

    `raw` must start with its first character (no indentation); the caller
    has made sure no `+` line continues it.
    """
    if PLAIN_LINE.fullmatch(raw) is None:
        return None
    return raw.split()


# Directives whose plain form is a list of words in the grammar (words_line,
# and subckt_line without parameters). `.include` and `.lib` are not: their
# argument is the rest of the line (path_line).
FAST_DIRECTIVES = frozenset({"endl", "global", "ends", "end", "subckt"})
_NEEDS_GRAMMAR_DIRECTIVE = re.compile(r"[=(),{}'\"*]")


def fast_directive(text: str, keyword: str) -> tuple | None:
    """The directive record `(keyword, args, ())` of a plain directive, else None."""
    if keyword not in FAST_DIRECTIVES or _NEEDS_GRAMMAR_DIRECTIVE.search(text) is not None:
        return None
    words = text.split()
    if keyword == "subckt" and len(words) < 3:
        return None
    return (keyword, tuple(words[1:]), ())
