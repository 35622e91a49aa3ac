"""Reading rules/*.toml into the library's records, refusing anything malformed.

The rules files are shipped data, but a user may point drc at an edited
copy, so every value is checked on the way in: types, units, ordering, and a
`source` on every figure. A problem is a LibraryError naming the file, the
dotted key and, found by a light scan since tomllib gives no positions, the
line. `RulesFile` reads one file and turns its values into numbers and
curves; the `parse_*` functions build one record each.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, cast

from drc.errors import LibraryError, SourceLocation
from drc.library.curves import EPS, Band, Bands, Curve, Fixed, Fraction, Table
from drc.library.entries import (
    FORMS,
    ROLES,
    SERIES,
    AbsMaxInput,
    ComparatorData,
    ComparatorOutput,
    ContactClass,
    ContactForm,
    Family,
    Limit,
    OtherKind,
    OtherPart,
    PartKind,
    PartType,
    PartVariant,
    PinNames,
    PinRole,
    PinSpec,
    PullDirection,
    SchmittData,
    Series,
    TransitionLimit,
    TtlInput,
)
from drc.units import Range


class RulesFile:
    """Reads one TOML file and raises LibraryError naming it (and a line where found)."""

    def __init__(self, path: Path) -> None:
        self.path = path
        try:
            self.text = path.read_text(encoding="utf-8")
        except OSError as exc:
            raise LibraryError(f"cannot read rules file: {exc.strerror}",
                               SourceLocation(str(path))) from exc
        try:
            self.data = tomllib.loads(self.text)
        except tomllib.TOMLDecodeError as exc:
            found = re.search(r"line (\d+), column (\d+)", str(exc))
            line, col = (int(found.group(1)), int(found.group(2))) if found else (0, 0)
            raise LibraryError(f"malformed TOML: {exc}",
                               SourceLocation(str(path), line, col)) from exc

    def error(self, where: str, message: str) -> LibraryError:
        """An error at `where` (a dotted key); located at the first line naming its last part."""
        last = where.rsplit(".", 1)[-1].strip('"')
        line = 0
        for number, text in enumerate(self.text.splitlines(), 1):
            if re.search(rf'(^|[\s\[."]){re.escape(last)}([\s\]."=]|$)', text):
                line = number
                break
        return LibraryError(f"{where}: {message}", SourceLocation(str(self.path), line))

    def table(self, value: Any, where: str) -> dict[str, Any]:
        if not isinstance(value, dict):
            raise self.error(where, "expected a table")
        return value

    def number(self, value: Any, where: str) -> float:
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise self.error(where, f"expected a number, got {value!r}")
        return float(value)

    def numbers(self, value: Any, where: str) -> tuple[float, ...]:
        if not isinstance(value, list) or not value:
            raise self.error(where, "expected a non-empty list of numbers")
        return tuple(self.number(v, where) for v in value)

    def source(self, table: dict[str, Any], where: str) -> str:
        text = table.get("source")
        if not isinstance(text, str) or not text.strip():
            raise self.error(where, "every value needs a non-empty `source`")
        return text

    def curve(self, table: dict[str, Any], where: str, scale: float = 1.0) -> Curve:
        """A curve from {value}, {fraction}, {vcc, value} or {bands}; values x scale."""
        if "bands" in table:
            return self._bands(table["bands"], where, scale)
        if "fraction" in table:
            return Fraction(self.number(table["fraction"], f"{where}.fraction"))
        if "value" not in table:
            raise self.error(where, "expected `value`, `fraction` or `bands`")
        if "vcc" in table:
            xs = self.numbers(table["vcc"], f"{where}.vcc")
            ys = self.numbers(table["value"], f"{where}.value")
            return self.tabulated(xs, ys, where, scale)
        return Fixed(self.number(table["value"], f"{where}.value") * scale)

    def _bands(self, items: Any, where: str, scale: float) -> Bands:
        bands = []
        for i, item in enumerate(items):
            item = self.table(item, f"{where}.bands[{i}]")
            inner = self.curve(item, f"{where}.bands[{i}]", scale)
            if not isinstance(inner, (Fixed, Fraction)):
                raise self.error(where, "a band holds a fixed value or a fraction")
            lo = self.number(item.get("vcc_min"), f"{where}.bands[{i}].vcc_min")
            hi = self.number(item.get("vcc_max"), f"{where}.bands[{i}].vcc_max")
            if lo > hi:
                raise self.error(where, f"band {i}: vcc_min above vcc_max")
            bands.append(Band(lo, hi, inner))
        return Bands(tuple(bands))

    def tabulated(self, xs: tuple[float, ...], ys: tuple[float, ...], where: str,
                  scale: float) -> Table:
        """A table against VCC: as many values as VCC points, VCC positive and increasing."""
        if len(xs) != len(ys):
            raise self.error(where, "`vcc` and the values differ in length")
        if any(b <= a for a, b in zip(xs, xs[1:], strict=False)) or xs[0] <= 0:
            raise self.error(where, "`vcc` must be positive and increasing")
        return Table(xs, tuple(y * scale for y in ys))


# ------------------------------------------------------------------ families


@dataclass(slots=True)
class _FamilyTable:
    """One [families.NAME] table being read: its quantities, each with its source."""

    file: RulesFile
    where: str
    table: dict[str, Any]
    sources: list[tuple[str, str]] = field(default_factory=list)

    def quantity(self, key: str) -> dict[str, Any]:
        """A required quantity table; its source is recorded."""
        found = self.optional(key)
        if found is None:
            raise self.file.error(self.where, f"missing `{key}`")
        return found

    def optional(self, key: str) -> dict[str, Any] | None:
        if key not in self.table:
            return None
        q = self.file.table(self.table[key], f"{self.where}.{key}")
        self.sources.append((key, self.file.source(q, f"{self.where}.{key}")))
        return q

    def number(self, q: dict[str, Any], name: str, path: str) -> float:
        return self.file.number(q.get(name), f"{self.where}.{path}")

    def scalar(self, key: str, scale: float) -> float | None:
        """An optional {value} quantity, x scale."""
        q = self.optional(key)
        return None if q is None else self.number(q, "value", key) * scale

    def range(self, q: dict[str, Any], key: str, scale: float) -> tuple[float, float]:
        """{min, max} x scale."""
        return (self.number(q, "min", f"{key}.min") * scale,
                self.number(q, "max", f"{key}.max") * scale)


def parse_family(r: RulesFile, name: str, raw: Any) -> Family:
    where = f"families.{name}"
    ft = _FamilyTable(r, where, r.table(raw, where))
    lo, hi = ft.range(ft.quantity("supply_v"), "supply_v", 1.0)
    vih = r.curve(ft.quantity("vih_v"), f"{where}.vih_v")
    vil = r.curve(ft.quantity("vil_v"), f"{where}.vil_v")
    leak_high = _leakage(ft, "leak_high_ua")
    leak_low = _leakage(ft, "leak_low_ua")
    abs_max = _abs_max_input(ft)
    tolerant = _tolerant(ft)
    transition = _transition(ft)
    pull = ft.optional("internal_pull_kohm")
    internal_pull = None if pull is None else ft.range(pull, "internal_pull_kohm", 1e3)
    schmitt = None
    if "schmitt" in ft.table:
        schmitt = parse_schmitt(r, f"{where}.schmitt", r.table(ft.table["schmitt"], f"{where}.schmitt"))
        ft.sources.append(("schmitt", schmitt.source))
    aliases = ft.table.get("aliases", [])
    if not isinstance(aliases, list) or not all(isinstance(a, str) for a in aliases):
        raise r.error(f"{where}.aliases", "expected a list of names")
    variants = _part_variants(r, where, ft.table.get("part_variants", []))
    family = Family(
        name=name, title=str(ft.table.get("title", name)), aliases=tuple(aliases),
        supply_min=lo, supply_max=hi, vih=vih, vil=vil,
        leak_high_a=leak_high, leak_low_a=leak_low, abs_max_input=abs_max,
        tolerant=tolerant, transition=transition, schmitt=schmitt,
        clamp_current_a=ft.scalar("clamp_current_ma", 1e-3),
        ttl_high_extra_supply_a=ft.scalar("ttl_high_extra_supply_ma", 1e-3),
        internal_pull_ohms=internal_pull,
        transition_note=ft.table.get("transition_note"),
        sources=tuple(ft.sources), part_variants=variants, ttl_input=_ttl_input(ft),
    )
    check_family(r, family)
    return family


def _part_variants(r: RulesFile, where: str, raw: Any) -> tuple[PartVariant, ...]:
    """[[families.NAME.part_variants]]: part types with a supply range and thresholds of their own."""
    if not isinstance(raw, list):
        raise r.error(f"{where}.part_variants", "expected [[...part_variants]] tables")
    out = []
    for i, item in enumerate(raw):
        here = f"{where}.part_variants[{i}]"
        t = r.table(item, here)
        types = t.get("part_types")
        if not isinstance(types, list) or not types or not all(isinstance(x, str) for x in types):
            raise r.error(f"{here}.part_types", "expected a non-empty list of generic part types")
        supply = r.table(t.get("supply_v"), f"{here}.supply_v")
        source = r.source(supply, f"{here}.supply_v")
        lo = r.number(supply.get("min"), f"{here}.supply_v.min")
        hi = r.number(supply.get("max"), f"{here}.supply_v.max")
        if not 0 < lo <= hi:
            raise r.error(f"{here}.supply_v", "supply range must be positive and ordered")
        schmitt = (parse_schmitt(r, f"{here}.schmitt", r.table(t["schmitt"], f"{here}.schmitt"))
                   if "schmitt" in t else None)
        unknown = set(t) - {"title", "part_types", "supply_v", "schmitt"}
        if unknown:
            raise r.error(here, f"unknown keys {sorted(unknown)}")
        out.append(PartVariant(str(t.get("title", ", ".join(types))), tuple(types), lo, hi, schmitt, source))
    return tuple(out)


def _ttl_input(ft: _FamilyTable) -> TtlInput | None:
    """families.NAME.ttl_input: the TTL input stage (resistor from VCC, input diode, open level)."""
    q = ft.optional("ttl_input")
    if q is None:
        return None
    unknown = set(q) - {"resistor_kohm_min", "resistor_kohm_max", "diode_v", "open_v_min", "open_v_max", "source"}
    if unknown:
        raise ft.file.error(f"{ft.where}.ttl_input", f"unknown keys {sorted(unknown)}")
    r = (ft.number(q, "resistor_kohm_min", "ttl_input.resistor_kohm_min") * 1e3,
         ft.number(q, "resistor_kohm_max", "ttl_input.resistor_kohm_max") * 1e3)
    o = (ft.number(q, "open_v_min", "ttl_input.open_v_min"), ft.number(q, "open_v_max", "ttl_input.open_v_max"))
    d = ft.number(q, "diode_v", "ttl_input.diode_v")
    if not (0 < r[0] <= r[1] and 0 < o[0] <= o[1] and 0 <= d):
        raise ft.file.error(f"{ft.where}.ttl_input", "expected positive, ordered ranges")
    return TtlInput(r, d, o)


def _leakage(ft: _FamilyTable, key: str) -> tuple[float, float]:
    low, high = ft.range(ft.quantity(key), key, 1e-6)
    if low > high:
        raise ft.file.error(f"{ft.where}.{key}", "min above max")
    return (low, high)


def _abs_max_input(ft: _FamilyTable) -> AbsMaxInput:
    am = ft.quantity("abs_max_input_v")
    where = f"{ft.where}.abs_max_input_v"
    if "value" in am:
        return AbsMaxInput(ft.file.number(am["value"], where), None, None)
    if "vcc_plus" in am:
        cap = ft.file.number(am["cap"], f"{where}.cap") if "cap" in am else None
        return AbsMaxInput(None, ft.file.number(am["vcc_plus"], where), cap)
    raise ft.file.error(where, "expected `value` or `vcc_plus`")


def _tolerant(ft: _FamilyTable) -> bool:
    value = ft.quantity("tolerant").get("value")
    if not isinstance(value, bool):
        raise ft.file.error(f"{ft.where}.tolerant", "expected value = true or false")
    return value


def _transition(ft: _FamilyTable) -> TransitionLimit | None:
    rise = ft.optional("input_rise_time_ns")
    slope = ft.optional("input_slope_ns_per_v")
    if rise is not None and slope is not None:
        raise ft.file.error(ft.where, "give input_rise_time_ns or input_slope_ns_per_v, not both")
    if rise is not None:
        return TransitionLimit("rise_time", ft.file.curve(rise, f"{ft.where}.input_rise_time_ns", 1e-9))
    if slope is not None:
        return TransitionLimit("slope", ft.file.curve(slope, f"{ft.where}.input_slope_ns_per_v", 1e-9))
    return None


_SCHMITT_KEYS = ("vt_plus_min", "vt_plus_typ", "vt_plus_max",
                 "vt_minus_min", "vt_minus_typ", "vt_minus_max", "vh_min")


def parse_schmitt(r: RulesFile, where: str, t: dict[str, Any]) -> SchmittData:
    source = r.source(t, where)
    fraction = t.get("scale") == "fraction"
    vcc = r.numbers(t["vcc"], f"{where}.vcc") if "vcc" in t else None
    curves: list[tuple[str, Curve]] = []
    for key in _SCHMITT_KEYS:
        if key not in t:
            continue
        raw = t[key]
        if isinstance(raw, list):
            if vcc is None:
                raise r.error(f"{where}.{key}", "a list needs `vcc` in the schmitt table")
            curve: Curve = r.tabulated(vcc, r.numbers(raw, f"{where}.{key}"), f"{where}.{key}", 1.0)
        else:
            number = r.number(raw, f"{where}.{key}")
            curve = Fraction(number) if fraction else Fixed(number)
        curves.append((key, curve))
    have = {k for k, _ in curves}
    for needed in ("vt_plus_max", "vt_minus_min"):
        if needed not in have:
            raise r.error(where, f"missing `{needed}`")
    if not {"vt_plus_min", "vt_minus_max"} <= have and "vh_min" not in have:
        raise r.error(where, "without vt_plus_min and vt_minus_max, `vh_min` is needed to derive them")
    unknown = set(t) - set(_SCHMITT_KEYS) - {"source", "vcc", "scale"}
    if unknown:
        raise r.error(where, f"unknown keys {sorted(unknown)}")
    return SchmittData(tuple(curves), source)


def check_family(r: RulesFile, f: Family) -> None:
    """Shipped-data sanity over the supply range: ordered levels and thresholds
    (the family's own, and each part variant's over its range)."""
    where = f"families.{f.name}"
    if not 0 < f.supply_min <= f.supply_max:
        raise r.error(where, "supply range must be positive and ordered")
    _check_levels(r, where, f, f.supply_min, f.supply_max, f.schmitt)
    for v in f.part_variants:
        _check_levels(r, f"{where}.part_variants ({v.title})", f, v.supply_min, v.supply_max,
                      v.schmitt or f.schmitt)


def _check_levels(r: RulesFile, where: str, f: Family, lo: float, hi: float,
                  schmitt: SchmittData | None) -> None:
    steps = 12
    for i in range(steps + 1):
        vcc = lo + (hi - lo) * i / steps
        vil, vih = f.vil_at(vcc), f.vih_at(vcc)
        if not 0 < vil < vih < vcc + EPS:
            raise r.error(where, f"at VCC {vcc:g} V: expected 0 < VIL {vil:g} < VIH {vih:g} <= VCC")
        if schmitt is None:
            continue
        s = schmitt.at(vcc)
        (pmin, ptyp, pmax), (mmin, mtyp, mmax) = s.vt_plus, s.vt_minus
        if not (0 < pmin <= ptyp <= pmax <= vcc + EPS and 0 < mmin <= mtyp <= mmax
                and mmin <= pmin and mmax <= pmax):
            raise r.error(where, f"at VCC {vcc:g} V: Schmitt thresholds out of order "
                                 f"(VT+ {s.vt_plus}, VT- {s.vt_minus})")


# ------------------------------------------------------------------ parts


def parse_part(r: RulesFile, name: str, raw: Any) -> PartType:
    where = f'parts."{name}"'
    t = r.table(raw, where)
    source = r.source(t, where)
    schmitt_default = t.get("schmitt_inputs", False)
    numberings = _numberings(r, where, t.get("series"))
    if not isinstance(t.get("debounces"), bool) or not isinstance(schmitt_default, bool):
        raise r.error(where, "`debounces` and `schmitt_inputs` must be true or false")
    pins: dict[int, PinSpec] = {}
    for i, item in enumerate(t.get("pins", [])):
        p = r.table(item, f"{where}.pins[{i}]")
        number = p.get("n")
        if not isinstance(number, int) or number < 1:
            raise r.error(where, f"pin {i}: `n` must be a positive integer")
        if number in pins:
            raise r.error(where, f"pin {number} listed twice")
        pins[number] = _parse_pin(r, where, number, p, schmitt_default)
    if not pins or sorted(pins) != list(range(1, len(pins) + 1)):
        raise r.error(where, "pins must be numbered 1..N with none missing")
    families = t.get("families")
    kind = t.get("kind", PartKind.LOGIC.value)
    if kind not in tuple(PartKind):
        raise r.error(where, f"kind must be one of {tuple(k.value for k in PartKind)}")
    latch = t.get("latch", False)
    if not isinstance(latch, bool):
        raise r.error(where, "`latch` must be true or false")
    own_family = t.get("family")
    if (own_family is None) == (kind == PartKind.COMPARATOR):
        raise r.error(where, "a comparator names its `family`; other parts take it from the part number")
    return PartType(
        name=name, title=str(t.get("title", name)), series=numberings[0],
        pin_count=len(pins), pins=dict(sorted(pins.items())),
        debounces=t["debounces"], source=source,
        aliases=tuple(t.get("aliases", ())),
        families=None if families is None else tuple(families),
        numberings=numberings, kind=PartKind(kind), latch=latch,
        family=None if own_family is None else str(own_family),
        comparator=_comparator(r, where, t) if kind == PartKind.COMPARATOR else None,
    )


def _numberings(r: RulesFile, where: str, raw: Any) -> tuple[Series, ...]:
    """`series = "74"`, or a list when a function is numbered in several series."""
    items = raw if isinstance(raw, list) else [raw]
    if not items or any(item not in SERIES for item in items):
        raise r.error(where, f"series must be one of {SERIES} (or a list of them)")
    return tuple(cast("Series", item) for item in items)


def _comparator(r: RulesFile, where: str, t: dict[str, Any]) -> ComparatorData:
    """The [parts.NAME.comparator] table: output type, offset and output low level."""
    at = f"{where}.comparator"
    c = r.table(t.get("comparator"), at)
    output = c.get("output")
    if output not in tuple(ComparatorOutput):
        raise r.error(at, f"output must be one of {tuple(o.value for o in ComparatorOutput)}")
    offset = r.table(c.get("offset_mv"), f"{at}.offset_mv")
    low = r.table(c.get("output_low_v"), f"{at}.output_low_v")
    sources = (f"offset: {r.source(offset, f'{at}.offset_mv')}; "
               f"output low: {r.source(low, f'{at}.output_low_v')}")
    return ComparatorData(ComparatorOutput(output), r.number(offset.get("max"), f"{at}.offset_mv") * 1e-3,
                          r.number(low.get("max"), f"{at}.output_low_v"), sources)


def _parse_pin(r: RulesFile, where: str, number: int, p: dict[str, Any],
               schmitt_default: bool) -> PinSpec:
    role = p.get("role")
    if role not in ROLES:
        raise r.error(where, f"pin {number}: role must be one of {ROLES}")
    pull = p.get("internal_pull")
    if pull not in (None, "up", "down"):
        raise r.error(where, f"pin {number}: internal_pull must be \"up\" or \"down\"")
    return PinSpec(
        number=number, name=str(p.get("name", number)), role=PinRole(role),
        schmitt=bool(p.get("schmitt", schmitt_default and role == "input")),
        edge_sensitive=bool(p.get("edge_sensitive", False)),
        function=str(p.get("function", role)),
        gate=None if p.get("gate") is None else str(p["gate"]),
        active_low=bool(p.get("active_low", False)),
        internal_pull=None if pull is None else PullDirection(pull),
    )


def parse_other_parts(r: RulesFile) -> dict[str, OtherPart]:
    """The [loads.NAME] and [connections.NAME] tables of parts.toml."""
    out: dict[str, OtherPart] = {}
    for section, kind in (("loads", OtherKind.LOAD), ("connections", OtherKind.CONNECTION)):
        for name, raw in r.table(r.data.get(section, {}), section).items():
            where = f"{section}.{name}"
            t = r.table(raw, where)
            models = t.get("models", [])
            letters = t.get("designators", [])
            for key, value in (("models", models), ("designators", letters)):
                if not isinstance(value, list) or not all(isinstance(v, str) and v for v in value):
                    raise r.error(f"{where}.{key}", "expected a list of names")
            if not models and not letters:
                raise r.error(where, "give `models` or `designators`")
            if name in out:
                raise r.error(where, f"{name} is both a load and a connection")
            out[name] = OtherPart(name, str(t.get("title", name)), kind,
                                  tuple(m.upper() for m in models),
                                  tuple(d.upper() for d in letters), r.source(t, where))
    return out


def parse_pin_names(r: RulesFile) -> PinNames:
    """The [pin_names] table of parts.toml: port names and the roles they name."""
    t = r.table(r.data.get("pin_names", {}), "pin_names")
    source = r.source(t, "pin_names")

    def words(key: str) -> frozenset[str]:
        value = t.get(key, [])
        if not isinstance(value, list) or not all(isinstance(v, str) and v for v in value):
            raise r.error(f"pin_names.{key}", "expected a list of names")
        return frozenset(v.upper() for v in value)

    groups = t.get("synonyms", [])
    if not isinstance(groups, list) or not all(
            isinstance(g, list) and all(isinstance(v, str) and v for v in g) for g in groups):
        raise r.error("pin_names.synonyms", "expected a list of lists of names")
    return PinNames(words("supply"), words("ground"), words("inputs"), words("outputs"),
                    tuple(frozenset(v.upper() for v in g) for g in groups), source)


# ------------------------------------------------------------------ contacts


def parse_contact(r: RulesFile, name: str, raw: Any) -> ContactClass:
    where = f"classes.{name}"
    t = r.table(raw, where)

    def amount(key: str, scale: float) -> tuple[float | None, str | None]:
        if key not in t:
            return None, None
        q = r.table(t[key], f"{where}.{key}")
        return r.number(q.get("value"), f"{where}.{key}") * scale, r.source(q, f"{where}.{key}")

    bounce, bounce_src = amount("bounce_ms", 1e-3)
    if bounce is None or bounce_src is None:
        raise r.error(where, "missing `bounce_ms`")
    wetting, wetting_src = amount("wetting_ma", 1e-3)
    rating, rating_src = amount("rating_ma", 1e-3)
    static = _static(r, where, t)
    form = t.get("default_form")
    if form not in FORMS:
        raise r.error(where, f"default_form must be one of {FORMS}")
    patterns = t.get("patterns")
    if not isinstance(patterns, list) or not patterns:
        raise r.error(where, "expected a non-empty list of `patterns`")
    return ContactClass(
        name=name, title=str(t.get("title", name)), bounce_s=bounce,
        wetting_a=wetting, rating_a=rating, default_form=ContactForm(form),
        patterns=tuple(str(p).upper() for p in patterns),
        bounce_source=bounce_src, wetting_source=wetting_src, rating_source=rating_src,
        static=static,
    )


def _static(r: RulesFile, where: str, t: dict[str, Any]) -> bool:
    if "static" not in t:
        return False
    q = r.table(t["static"], f"{where}.static")
    if not isinstance(q.get("value"), bool):
        raise r.error(f"{where}.static", "expected `value = true` or `value = false`")
    r.source(q, f"{where}.static")
    return q["value"]


def parse_form_words(r: RulesFile) -> dict[str, frozenset[str]]:
    """The [forms] table: the words in a contact's name that say its form."""
    forms = r.table(r.data.get("forms"), "forms")
    r.source(forms, "forms")
    return {key: frozenset(str(w).upper() for w in forms.get(key, ()))
            for key in ("spdt", "spst_nc", "spst_no")}


# ------------------------------------------------------------------ limits


def parse_limit(r: RulesFile, key: str, raw: Any) -> Limit:
    t = r.table(raw, key)
    for field_name in ("unit", "description"):
        if not isinstance(t.get(field_name), str):
            raise r.error(key, f"missing `{field_name}`")
    allowed = t.get("range", Range.POSITIVE.value)
    if allowed not in tuple(Range):
        raise r.error(f"{key}.range", f"expected one of {', '.join(Range)}, got {allowed!r}")
    value = r.number(t.get("value"), f"{key}.value")
    if not Range(allowed).admits(value):
        raise r.error(f"{key}.value", f"{value} is outside its range ({allowed})")
    return Limit(key, value, t["unit"], t["description"], r.source(t, key), str(allowed))
