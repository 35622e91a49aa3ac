"""From a part number as a schematic writes it to a generic part type and a family.

A netlist names a logic part by its maker's full number (SN74HC14N,
74AHCT1G04DBVR, CD4093BE, MC14490P), which carries the generic function, the
logic family and package and grade letters the analysis does not need. The
rules here read a 74/54-series number as maker prefix + 74|54 + family
letters + function + suffix, and a 4000-series number as maker prefix +
function (Motorola MC14xxx renumbered) + grade + suffix. Family letters are
the families of families.toml that have a "74<name>" alias. Anything else,
and anything the data does not list, resolves to None: never a guess.
"""

from __future__ import annotations

import re
from collections.abc import Mapping

from drc.library.entries import Family, PartType, ResolvedPart

_SUFFIX = r"(?P<suffix>[A-Z_\-,./#+][A-Z0-9_\-,./#+]*)?$"


class PartNumbers:
    """The part-number rules of one library (its families and part types)."""

    def __init__(self, families: Mapping[str, Family], part_types: Mapping[str, PartType],
                 family_index: Mapping[str, str]) -> None:
        self._families = families
        self._family_index = family_index  # casefolded name or alias -> family name
        self._numbers_74: dict[str, PartType] = {}
        self._numbers_4000: dict[str, PartType] = {}
        for part in part_types.values():
            table = self._numbers_74 if part.series == "74" else self._numbers_4000
            for number in (part.name, *part.aliases):
                table[number.upper()] = part
        # 74-series family letters are the families with a "74<name>" alias;
        # longest first so AHCT wins over AHC and HCT over HC.
        letters = sorted((f.name for f in families.values()
                          if f"74{f.name}".casefold() in {a.casefold() for a in f.aliases}),
                         key=len, reverse=True)
        self._re_74 = re.compile(
            r"^(?P<maker>[A-Z]{0,4})(?:74|54)(?P<family>" + "|".join(map(re.escape, letters))
            + r")(?P<number>1G\d{2,3}|\d{2,4})" + _SUFFIX)
        self._re_4000 = re.compile(
            r"^(?P<maker>[A-Z]{0,4})(?P<number>14\d{3}|40\d{3}|4\d{3})(?P<grade>UB|B|A)?" + _SUFFIX)

    def resolve(self, name: str) -> ResolvedPart | None:
        """A generic part type and family from a part number, or None."""
        text = name.strip().upper()
        m = self._re_74.match(text)
        if m:
            return self._resolve_74(m, name)
        m = self._re_4000.match(text)
        if m:
            return self._resolve_4000(m, name)
        return None

    def _resolve_74(self, m: re.Match[str], name: str) -> ResolvedPart | None:
        part = self._numbers_74.get(m["number"])
        family = self._family_index.get(m["family"].casefold())
        if part is None or family is None:
            return None
        if part.families is not None and family not in part.families:
            return None
        return ResolvedPart(part, family, name)

    def _resolve_4000(self, m: re.Match[str], name: str) -> ResolvedPart | None:
        number = m["number"]
        if number.startswith("14"):  # Motorola numbering: MC14011, MC14106, MC14490
            n = int(number[2:])
            number = f"40{n:02d}" if n < 100 else (f"40{n}" if n < 200 else f"4{n}")
        part = self._numbers_4000.get(number)
        # The older 4000A grade has its own, weaker ratings: not resolved to B.
        if part is None or m["grade"] == "A":
            return None
        family = "4000UB" if m["grade"] == "UB" else "4000B"
        if family not in self._families:
            return None
        return ResolvedPart(part, family, name)
