"""From a switch's type name to its contact class and form.

Schematic libraries name switches freely (SW_PUSH, TACTILE_6MM, REED_NC,
TOGGLE_SPDT), so contacts.toml gives each class a list of globs and the
words that say a form. The most specific glob wins (the one with the most
literal characters); the form comes from a word in the name, else from the
terminal count, else from the class.
"""

from __future__ import annotations

import fnmatch
import re
from collections.abc import Iterable, Mapping

from drc.library.entries import ContactClass, ContactForm, ContactMatch

_NAME_WORDS = re.compile(r"[_\-./\s]+")


def _literal_length(pattern: str) -> int:
    """How specific a glob is: its count of non-wildcard characters."""
    return len(re.sub(r"\[[^\]]*\]|[*?]", "", pattern))


class ContactNames:
    """The contact-name rules of one library (its classes and form words)."""

    def __init__(self, classes: Iterable[ContactClass],
                 form_words: Mapping[str, frozenset[str]]) -> None:
        self._patterns = tuple(
            (_literal_length(p), re.compile(fnmatch.translate(p)), c)
            for c in classes for p in c.patterns)
        self._form_words = form_words

    def match(self, name: str, terminals: int | None) -> ContactMatch | None:
        """The class whose pattern matches `name` (most specific wins) and the form, or None."""
        text = name.strip().upper()
        best: tuple[int, ContactClass] | None = None
        for weight, regex, cls in self._patterns:
            if regex.match(text) and (best is None or weight > best[0]):
                best = (weight, cls)
        if best is None:
            return None
        form = self._form(text, terminals, best[1])
        return ContactMatch(best[1], form, 3 if form == ContactForm.SPDT else 2)

    def _form(self, text: str, terminals: int | None, cls: ContactClass) -> ContactForm:
        words = set(_NAME_WORDS.split(text))
        if words & self._form_words["spdt"]:
            return ContactForm.SPDT
        if words & self._form_words["spst_nc"]:
            return ContactForm.SPST_NC
        if words & self._form_words["spst_no"]:
            return ContactForm.SPST_NO
        if terminals == 3:
            return ContactForm.SPDT
        if terminals == 2 and cls.default_form == ContactForm.SPDT:
            return ContactForm.SPST_NO
        return cls.default_form
