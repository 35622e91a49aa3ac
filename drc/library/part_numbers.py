"""From a part number as a schematic writes it to a generic part type and a family.

A netlist names a logic part by its maker's full number (SN74HC14N,
74AHCT1G04DBVR, CD4093BE, MC14490P), which carries the generic function, the
logic family and package and grade letters the analysis does not need. The
rules here read a 74/54-series number as maker prefix + 74|54 + family
letters + function + suffix, a 4000-series number as maker prefix +
function (Motorola MC14xxx renumbered) + grade + suffix, and a part with a
name of its own (a comparator, an optocoupler: LM393DR, PC817C) as that
name + suffix. Family letters are the "74<letters>" aliases of the families
in families.toml. Exports often put a library or tool name in front
(`74xx_74HC14`, `CMOS:CD4093`): when the whole name does not resolve, the
part after each `_` or `:` is tried in turn. Anything else, and anything the
data does not list, resolves to None: never a guess. Every answer says how
it was read (`ResolvedPart.how`), for `drc trace`.
"""

from __future__ import annotations

import re
from collections.abc import Mapping

from drc.library.entries import Family, PartType, ResolvedPart

_SUFFIX = r"(?P<suffix>[A-Z_\-,./#+][A-Z0-9_\-,./#+]*)?$"
# Maker prefixes of 4000-series numbers (from memory: RCA/TI CD, Philips/NXP HEF,
# ST HCF/HCC, Motorola/ON MC, Toshiba TC, Rohm BU, Sony CX, NTE, Solid State
# Scientific SCL). A 4000-series function is only read behind one of these, so
# that a linear part such as the LM4040 reference is not taken for a counter.
_MAKERS_4000 = ("CD", "HEF", "HCF", "HCC", "MC", "TC", "BU", "CX", "NTE", "SCL")
_PREFIX_CUT = re.compile(r"[_:]")


class PartNumbers:
    """The part-number rules of one library (its families and part types)."""

    def __init__(self, families: Mapping[str, Family], part_types: Mapping[str, PartType],
                 family_index: Mapping[str, str]) -> None:
        self._families = families
        self._numbers_74: dict[str, PartType] = {}
        self._numbers_4000: dict[str, PartType] = {}
        self._names: dict[str, PartType] = {}
        tables = {"74": self._numbers_74, "4000": self._numbers_4000, "name": self._names}
        for part in part_types.values():
            for series in part.numberings or (part.series,):
                for number in (part.name, *part.aliases):
                    tables[series][number.upper()] = part
        # 74-series family letters: the "74<letters>" (or "54<letters>") aliases of
        # the families; longest first so AHCT wins over AHC and HCT over HC.
        self._letters: dict[str, str] = {}
        for family in families.values():
            for alias in family.aliases:
                upper = alias.upper()
                if upper[:2] in ("74", "54") and upper[2:].isalpha():
                    self._letters.setdefault(upper[2:], family.name)
        letters = sorted(self._letters, key=len, reverse=True)
        self._re_74 = re.compile(
            r"^(?P<maker>[A-Z]{0,4})(?P<series>74|54)(?P<family>" + "|".join(map(re.escape, letters))
            + r")(?P<number>[123]G\d{2,3}|\d{2,4})" + _SUFFIX)
        self._re_4000 = re.compile(
            r"^(?P<maker>" + "|".join(_MAKERS_4000) + r")?(?P<number>14\d{3}|40\d{3}|4\d{3})"
            r"(?P<grade>UB|B|A)?" + _SUFFIX)
        names = sorted(self._names, key=len, reverse=True)
        self._re_name = re.compile(
            r"^(?P<name>" + "|".join(map(re.escape, names)) + r")"
            + r"(?P<suffix>[A-Z_\-,./#+][A-Z0-9_\-,./#+]*)?$") if names else None

    def families_of(self, part: PartType) -> tuple[str, ...]:
        """Every family a part number of this type resolves in, read from the data."""
        found: dict[str, None] = {}
        for series in part.numberings or (part.series,):
            if series == "74":
                for family in self._letters.values():
                    if part.families is None or family in part.families:
                        found.setdefault(family)
            elif series == "4000":
                for family in ("4000B", "4000UB"):
                    if family in self._families:
                        found.setdefault(family)
            elif part.family is not None:
                found.setdefault(part.family)
        return tuple(sorted(found))

    def resolve(self, name: str) -> ResolvedPart | None:
        """A generic part type and family from a part number, or None."""
        written = name.strip()
        found = self._resolve_whole(written, name)
        if found is not None:
            return found
        # A library or tool prefix: try what follows each `_` or `:`, left to right.
        for cut in _PREFIX_CUT.finditer(written):
            rest = written[cut.end():]
            found = self._resolve_whole(rest, name) if rest else None
            if found is not None:
                prefix = written[:cut.end()]
                return ResolvedPart(found.part_type, found.family, found.part_number,
                                    f"library or tool prefix '{prefix}' dropped; "
                                    + found.how.replace(f"'{name}'", f"'{rest}'", 1))
        return None

    def _resolve_whole(self, text: str, name: str) -> ResolvedPart | None:
        upper = text.upper()
        m = self._re_74.match(upper)
        if m:
            found = self._resolve_74(m, name)
            if found is not None:
                return found
        m = self._re_4000.match(upper)
        if m:
            found = self._resolve_4000(m, name)
            if found is not None:
                return found
        m = self._re_name.match(upper) if self._re_name is not None else None
        if m:
            return self._resolve_name(m, name)
        return None

    def _resolve_74(self, m: re.Match[str], name: str) -> ResolvedPart | None:
        part = self._numbers_74.get(m["number"])
        family = self._letters.get(m["family"])
        if part is None or family is None:
            return None
        if part.families is not None and family not in part.families:
            return None
        steps = [f"maker prefix {m['maker']}" if m["maker"] else None,
                 f"{m['series']}-series, family letters {m['family']} (family {family})",
                 f"function {m['number']} ({part.title})",
                 f"suffix {m['suffix']} (package, grade or reel; ignored)" if m["suffix"] else None]
        return ResolvedPart(part, family, name, _how(name, steps))

    def _resolve_4000(self, m: re.Match[str], name: str) -> ResolvedPart | None:
        number = written = m["number"]
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
        steps = [f"maker prefix {m['maker']}" if m["maker"] else None,
                 f"4000-series function {number} ({part.title})"
                 + (f", Motorola number {written}" if written != number else ""),
                 f"grade {m['grade']} (family {family})" if m["grade"]
                 else f"no grade letter (family {family})",
                 f"suffix {m['suffix']} (package or reel; ignored)" if m["suffix"] else None]
        return ResolvedPart(part, family, name, _how(name, steps))

    def _resolve_name(self, m: re.Match[str], name: str) -> ResolvedPart | None:
        part = self._names[m["name"]]
        if part.family is not None and part.family not in self._families:
            return None
        family = f", family {part.family}" if part.family else ""
        steps = [f"{part.kind} {m['name']} ({part.title}{family})",
                 f"suffix {m['suffix']} (package, grade or reel; ignored)" if m["suffix"] else None]
        return ResolvedPart(part, part.family or "", name, _how(name, steps))


def _how(name: str, steps: list[str | None]) -> str:
    return f"part number '{name}' read as " + ", ".join(s for s in steps if s)
