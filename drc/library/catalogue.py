"""The engineering library: rules/*.toml loaded into typed records.

This module is the only reader of the shipped engineering data (logic
families, generic part types, contact classes, rule limits). It turns the
TOML files into frozen records, answers the questions the pipeline asks of
them (which part a subcircuit name is, which contact class a switch name is,
what a receiver pin's thresholds and leakage are at its VCC) and restates no
figure itself: every number comes from the files, each with its source. The
library is loaded once per rules folder and per process; lookups are cached.
"""

from __future__ import annotations

import difflib
import fnmatch
import re
import tomllib
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any, Union

from drc.datafiles import data_folder
from drc.analysis.receiver import ReceiverElectrical
from drc.errors import LibraryError, SourceLocation

# Float slack when comparing a VCC with a range edge (values come from
# arithmetic such as 5.0 * 1.05).
_EPS = 1e-9

ROLES = ("input", "output", "supply", "ground", "nc")
FORMS = ("SPST-NO", "SPST-NC", "SPDT")

# ------------------------------------------------------------------ errors


class UnknownFamily(KeyError):
    """A family name the library does not know; `matches` holds close names."""

    def __init__(self, name: str, matches: tuple[str, ...]) -> None:
        super().__init__(name)
        self.name = name
        self.matches = matches

    def __str__(self) -> str:
        hint = f"; did you mean {', '.join(self.matches)}?" if self.matches else ""
        return f"unknown logic family '{self.name}'{hint}"


class SupplyOutOfRange(ValueError):
    """A receiver's VCC lies outside its family's supply range."""

    def __init__(self, family: str, vcc: float, vcc_min: float, vcc_max: float) -> None:
        self.family = family
        self.vcc = vcc
        self.vcc_min = vcc_min
        self.vcc_max = vcc_max
        super().__init__(
            f"VCC {vcc:g} V is outside the {family} supply range "
            f"{vcc_min:g}-{vcc_max:g} V")


# ------------------------------------------------------------------ curves of a value against VCC


@dataclass(frozen=True, slots=True)
class Fixed:
    """A value independent of VCC."""

    value: float

    def at(self, vcc: float, demanding: str) -> float:
        return self.value


@dataclass(frozen=True, slots=True)
class Fraction:
    """A value proportional to VCC: fraction x VCC."""

    fraction: float

    def at(self, vcc: float, demanding: str) -> float:
        return self.fraction * vcc


@dataclass(frozen=True, slots=True)
class Table:
    """Tabulated against VCC: linear inside, proportional to VCC outside.

    CMOS levels track VCC, so beyond the table the end value is scaled by
    vcc / vcc_end rather than extending the end segment (which can cross zero).
    """

    vcc: tuple[float, ...]
    values: tuple[float, ...]

    def at(self, vcc: float, demanding: str) -> float:
        xs, ys = self.vcc, self.values
        if vcc <= xs[0]:
            return ys[0] * vcc / xs[0]
        if vcc >= xs[-1]:
            return ys[-1] * vcc / xs[-1]
        for i in range(1, len(xs)):
            if vcc <= xs[i]:
                t = (vcc - xs[i - 1]) / (xs[i] - xs[i - 1])
                return ys[i - 1] + t * (ys[i] - ys[i - 1])
        raise AssertionError("unreachable: vcc inside the table")


@dataclass(frozen=True, slots=True)
class Band:
    vcc_min: float
    vcc_max: float
    curve: Fixed | Fraction


@dataclass(frozen=True, slots=True)
class Bands:
    """Piecewise by VCC range.

    Where bands overlap (a shared edge) or leave a gap, the more demanding
    neighbour applies: `demanding` is "high" (take the larger: VIH) or "low"
    (take the smaller: VIL, a transition limit). Outside all bands the
    nearest band applies.
    """

    bands: tuple[Band, ...]

    def at(self, vcc: float, demanding: str) -> float:
        inside = [b for b in self.bands if b.vcc_min - _EPS <= vcc <= b.vcc_max + _EPS]
        if not inside:
            below = [b for b in self.bands if b.vcc_max < vcc]
            above = [b for b in self.bands if b.vcc_min > vcc]
            if below:
                inside.append(max(below, key=lambda b: b.vcc_max))
            if above:
                inside.append(min(above, key=lambda b: b.vcc_min))
        values = [b.curve.at(vcc, demanding) for b in inside]
        return max(values) if demanding == "high" else min(values)


Curve = Union[Fixed, Fraction, Table, Bands]


# ------------------------------------------------------------------ records


@dataclass(frozen=True, slots=True)
class SchmittThresholds:
    """VT+ and VT- as (min, typ, max) at one VCC; `derived` names computed bounds."""

    vt_plus: tuple[float, float, float]
    vt_minus: tuple[float, float, float]
    vh_min: float | None
    derived: tuple[str, ...]


@dataclass(frozen=True, slots=True)
class SchmittData:
    """A family's Schmitt-input thresholds as curves against VCC."""

    curves: tuple[tuple[str, Curve], ...]  # quantity name -> curve
    source: str

    def at(self, vcc: float) -> SchmittThresholds:
        """VT+/VT- at vcc; VT+min = VT-min + VHmin and VT-max = VT+max - VHmin
        where only the outer limits are known (families.md); typ = midpoint."""
        got = {name: curve.at(vcc, "high") for name, curve in self.curves}
        derived: list[str] = []
        vh = got.get("vh_min")
        if "vt_plus_min" not in got:
            got["vt_plus_min"] = got["vt_minus_min"] + (vh or 0.0)
            derived.append("vt_plus_min = vt_minus_min + vh_min")
        if "vt_minus_max" not in got:
            got["vt_minus_max"] = got["vt_plus_max"] - (vh or 0.0)
            derived.append("vt_minus_max = vt_plus_max - vh_min")
        for side in ("vt_plus", "vt_minus"):
            if f"{side}_typ" not in got:
                got[f"{side}_typ"] = 0.5 * (got[f"{side}_min"] + got[f"{side}_max"])
                derived.append(f"{side}_typ = midpoint of min and max")
        return SchmittThresholds(
            vt_plus=(got["vt_plus_min"], got["vt_plus_typ"], got["vt_plus_max"]),
            vt_minus=(got["vt_minus_min"], got["vt_minus_typ"], got["vt_minus_max"]),
            vh_min=vh,
            derived=tuple(derived),
        )


@dataclass(frozen=True, slots=True)
class AbsMaxInput:
    """Absolute-maximum input voltage: fixed, or min(VCC + vcc_plus, cap)."""

    fixed: float | None
    vcc_plus: float | None
    cap: float | None

    def at(self, vcc: float) -> float:
        if self.fixed is not None:
            return self.fixed
        assert self.vcc_plus is not None
        value = vcc + self.vcc_plus
        return min(value, self.cap) if self.cap is not None else value


@dataclass(frozen=True, slots=True)
class TransitionLimit:
    """Input transition limit of plain inputs.

    kind "rise_time": curve of a 10-90 % time (s); the dt/dV limit at VCC is
    t / (0.8 x VCC) (families.md note 3). kind "slope": curve of dt/dV (s/V).
    """

    kind: str
    curve: Curve

    def seconds_per_volt(self, vcc: float) -> float:
        value = self.curve.at(vcc, "low")
        return value / (0.8 * vcc) if self.kind == "rise_time" else value


@dataclass(frozen=True, slots=True)
class Family:
    name: str
    title: str
    aliases: tuple[str, ...]
    supply_min: float
    supply_max: float
    vih: Curve
    vil: Curve
    leak_high_a: tuple[float, float]
    leak_low_a: tuple[float, float]
    abs_max_input: AbsMaxInput
    tolerant: bool
    transition: TransitionLimit | None
    schmitt: SchmittData | None
    clamp_current_a: float | None = None
    ttl_high_extra_supply_a: float | None = None
    internal_pull_ohms: tuple[float, float] | None = None
    transition_note: str | None = None
    sources: tuple[tuple[str, str], ...] = ()

    @property
    def supply_range(self) -> tuple[float, float]:
        return (self.supply_min, self.supply_max)

    def source(self, quantity: str) -> str | None:
        """The source text of one quantity (a key of families.toml, e.g. "vih_v")."""
        return dict(self.sources).get(quantity)

    def check_supply(self, vcc: float) -> None:
        if not (self.supply_min - _EPS <= vcc <= self.supply_max + _EPS):
            raise SupplyOutOfRange(self.name, vcc, self.supply_min, self.supply_max)

    def vih_at(self, vcc: float) -> float:
        return self.vih.at(vcc, "high")

    def vil_at(self, vcc: float) -> float:
        return self.vil.at(vcc, "low")

    def abs_max_input_at(self, vcc: float) -> float:
        return self.abs_max_input.at(vcc)

    def transition_limit_at(self, vcc: float) -> float | None:
        return self.transition.seconds_per_volt(vcc) if self.transition else None

    def schmitt_at(self, vcc: float) -> SchmittThresholds | None:
        return self.schmitt.at(vcc) if self.schmitt else None


@dataclass(frozen=True, slots=True)
class PinSpec:
    number: int
    name: str
    role: str  # input | output | supply | ground | nc
    schmitt: bool
    edge_sensitive: bool
    function: str
    gate: str | None
    active_low: bool = False
    internal_pull: str | None = None  # "up" / "down": the part pulls the input


@dataclass(frozen=True, slots=True)
class GateSpec:
    name: str
    inputs: tuple[int, ...]
    outputs: tuple[int, ...]


@dataclass(frozen=True, slots=True)
class PartType:
    name: str
    title: str
    series: str  # "74" or "4000"
    pin_count: int
    pins: dict[int, PinSpec]
    debounces: bool
    source: str
    aliases: tuple[str, ...] = ()
    families: tuple[str, ...] | None = None  # None: any family of the series

    def inputs(self) -> tuple[PinSpec, ...]:
        return tuple(p for p in self.pins.values() if p.role == "input")

    def gates(self) -> dict[str, GateSpec]:
        """Gate/section name -> its input and output pin numbers."""
        found: dict[str, tuple[list[int], list[int]]] = {}
        for pin in self.pins.values():
            if pin.gate is None:
                continue
            ins, outs = found.setdefault(pin.gate, ([], []))
            if pin.role == "input":
                ins.append(pin.number)
            elif pin.role == "output":
                outs.append(pin.number)
        return {g: GateSpec(g, tuple(i), tuple(o)) for g, (i, o) in found.items()}


@dataclass(frozen=True, slots=True)
class ResolvedPart:
    part_type: PartType
    family: str
    part_number: str


@dataclass(frozen=True, slots=True)
class ContactClass:
    name: str
    title: str
    bounce_s: float
    wetting_a: float | None
    rating_a: float | None
    default_form: str
    patterns: tuple[str, ...]
    bounce_source: str
    wetting_source: str | None
    rating_source: str | None
    static: bool = False  # read as configuration, not as events


@dataclass(frozen=True, slots=True)
class ContactMatch:
    contact_class: ContactClass
    form: str
    terminal_count: int


@dataclass(frozen=True, slots=True)
class Limit:
    key: str
    value: float
    unit: str
    description: str
    source: str


# ------------------------------------------------------------------ parsing helpers


class _Reader:
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
            bands = []
            for i, item in enumerate(table["bands"]):
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
        if "fraction" in table:
            return Fraction(self.number(table["fraction"], f"{where}.fraction"))
        if "value" not in table:
            raise self.error(where, "expected `value`, `fraction` or `bands`")
        if "vcc" in table:
            xs = self.numbers(table["vcc"], f"{where}.vcc")
            ys = self.numbers(table["value"], f"{where}.value")
            return self._table(xs, ys, where, scale)
        return Fixed(self.number(table["value"], f"{where}.value") * scale)

    def _table(self, xs: tuple[float, ...], ys: tuple[float, ...], where: str,
               scale: float) -> Table:
        if len(xs) != len(ys):
            raise self.error(where, "`vcc` and the values differ in length")
        if any(b <= a for a, b in zip(xs, xs[1:])) or xs[0] <= 0:
            raise self.error(where, "`vcc` must be positive and increasing")
        return Table(xs, tuple(y * scale for y in ys))


# ------------------------------------------------------------------ families


def _parse_family(r: _Reader, name: str, raw: Any) -> Family:
    where = f"families.{name}"
    t = r.table(raw, where)
    sources: list[tuple[str, str]] = []

    def quantity(key: str, required: bool = True) -> dict[str, Any] | None:
        if key not in t:
            if required:
                raise r.error(where, f"missing `{key}`")
            return None
        q = r.table(t[key], f"{where}.{key}")
        sources.append((key, r.source(q, f"{where}.{key}")))
        return q

    supply = quantity("supply_v")
    assert supply is not None
    lo = r.number(supply.get("min"), f"{where}.supply_v.min")
    hi = r.number(supply.get("max"), f"{where}.supply_v.max")
    vih = r.curve(quantity("vih_v") or {}, f"{where}.vih_v")
    vil = r.curve(quantity("vil_v") or {}, f"{where}.vil_v")
    leaks = []
    for key in ("leak_high_ua", "leak_low_ua"):
        q = quantity(key) or {}
        a = r.number(q.get("min"), f"{where}.{key}.min") * 1e-6
        b = r.number(q.get("max"), f"{where}.{key}.max") * 1e-6
        if a > b:
            raise r.error(f"{where}.{key}", "min above max")
        leaks.append((a, b))
    am = quantity("abs_max_input_v") or {}
    if "value" in am:
        abs_max = AbsMaxInput(r.number(am["value"], f"{where}.abs_max_input_v"), None, None)
    elif "vcc_plus" in am:
        cap = r.number(am["cap"], f"{where}.abs_max_input_v.cap") if "cap" in am else None
        abs_max = AbsMaxInput(None, r.number(am["vcc_plus"], f"{where}.abs_max_input_v"), cap)
    else:
        raise r.error(f"{where}.abs_max_input_v", "expected `value` or `vcc_plus`")
    tol = quantity("tolerant") or {}
    if not isinstance(tol.get("value"), bool):
        raise r.error(f"{where}.tolerant", "expected value = true or false")

    transition = None
    rise = quantity("input_rise_time_ns", required=False)
    slope = quantity("input_slope_ns_per_v", required=False)
    if rise is not None and slope is not None:
        raise r.error(where, "give input_rise_time_ns or input_slope_ns_per_v, not both")
    if rise is not None:
        transition = TransitionLimit("rise_time", r.curve(rise, f"{where}.input_rise_time_ns", 1e-9))
    elif slope is not None:
        transition = TransitionLimit("slope", r.curve(slope, f"{where}.input_slope_ns_per_v", 1e-9))

    def optional_scalar(key: str, scale: float) -> float | None:
        q = quantity(key, required=False)
        return None if q is None else r.number(q.get("value"), f"{where}.{key}") * scale

    pull = quantity("internal_pull_kohm", required=False)
    internal_pull = None if pull is None else (
        r.number(pull.get("min"), f"{where}.internal_pull_kohm.min") * 1e3,
        r.number(pull.get("max"), f"{where}.internal_pull_kohm.max") * 1e3)

    schmitt = None
    if "schmitt" in t:
        schmitt = _parse_schmitt(r, f"{where}.schmitt", r.table(t["schmitt"], f"{where}.schmitt"))
        sources.append(("schmitt", schmitt.source))

    aliases = t.get("aliases", [])
    if not isinstance(aliases, list) or not all(isinstance(a, str) for a in aliases):
        raise r.error(f"{where}.aliases", "expected a list of names")
    family = Family(
        name=name, title=str(t.get("title", name)), aliases=tuple(aliases),
        supply_min=lo, supply_max=hi, vih=vih, vil=vil,
        leak_high_a=leaks[0], leak_low_a=leaks[1], abs_max_input=abs_max,
        tolerant=tol["value"], transition=transition, schmitt=schmitt,
        clamp_current_a=optional_scalar("clamp_current_ma", 1e-3),
        ttl_high_extra_supply_a=optional_scalar("ttl_high_extra_supply_ma", 1e-3),
        internal_pull_ohms=internal_pull,
        transition_note=t.get("transition_note"),
        sources=tuple(sources),
    )
    _check_family(r, family)
    return family


_SCHMITT_KEYS = ("vt_plus_min", "vt_plus_typ", "vt_plus_max",
                 "vt_minus_min", "vt_minus_typ", "vt_minus_max", "vh_min")


def _parse_schmitt(r: _Reader, where: str, t: dict[str, Any]) -> SchmittData:
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
            curve: Curve = r._table(vcc, r.numbers(raw, f"{where}.{key}"), f"{where}.{key}", 1.0)
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


def _check_family(r: _Reader, f: Family) -> None:
    """Shipped-data sanity over the supply range: ordered levels and thresholds."""
    where = f"families.{f.name}"
    if not 0 < f.supply_min <= f.supply_max:
        raise r.error(where, "supply range must be positive and ordered")
    steps = 12
    for i in range(steps + 1):
        vcc = f.supply_min + (f.supply_max - f.supply_min) * i / steps
        vil, vih = f.vil_at(vcc), f.vih_at(vcc)
        if not 0 < vil < vih < vcc + _EPS:
            raise r.error(where, f"at VCC {vcc:g} V: expected 0 < VIL {vil:g} < VIH {vih:g} <= VCC")
        s = f.schmitt_at(vcc)
        if s is None:
            continue
        (pmin, ptyp, pmax), (mmin, mtyp, mmax) = s.vt_plus, s.vt_minus
        if not (0 < pmin <= ptyp <= pmax <= vcc + _EPS and 0 < mmin <= mtyp <= mmax
                and mmin <= pmin and mmax <= pmax):
            raise r.error(where, f"at VCC {vcc:g} V: Schmitt thresholds out of order "
                                 f"(VT+ {s.vt_plus}, VT- {s.vt_minus})")


# ------------------------------------------------------------------ parts


def _parse_part(r: _Reader, name: str, raw: Any) -> PartType:
    where = f'parts."{name}"'
    t = r.table(raw, where)
    source = r.source(t, where)
    schmitt_default = t.get("schmitt_inputs", False)
    series = t.get("series")
    if series not in ("74", "4000"):
        raise r.error(where, "series must be \"74\" or \"4000\"")
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
        role = p.get("role")
        if role not in ROLES:
            raise r.error(where, f"pin {number}: role must be one of {ROLES}")
        pull = p.get("internal_pull")
        if pull not in (None, "up", "down"):
            raise r.error(where, f"pin {number}: internal_pull must be \"up\" or \"down\"")
        pins[number] = PinSpec(
            number=number, name=str(p.get("name", number)), role=role,
            schmitt=bool(p.get("schmitt", schmitt_default and role == "input")),
            edge_sensitive=bool(p.get("edge_sensitive", False)),
            function=str(p.get("function", role)),
            gate=None if p.get("gate") is None else str(p["gate"]),
            active_low=bool(p.get("active_low", False)),
            internal_pull=pull,
        )
    if not pins or sorted(pins) != list(range(1, len(pins) + 1)):
        raise r.error(where, "pins must be numbered 1..N with none missing")
    families = t.get("families")
    return PartType(
        name=name, title=str(t.get("title", name)), series=series,
        pin_count=len(pins), pins=dict(sorted(pins.items())),
        debounces=t["debounces"], source=source,
        aliases=tuple(t.get("aliases", ())),
        families=None if families is None else tuple(families),
    )


# ------------------------------------------------------------------ contacts


def _parse_contact(r: _Reader, name: str, raw: Any) -> ContactClass:
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
    static = False
    if "static" in t:
        q = r.table(t["static"], f"{where}.static")
        if not isinstance(q.get("value"), bool):
            raise r.error(f"{where}.static", "expected `value = true` or `value = false`")
        r.source(q, f"{where}.static")
        static = q["value"]
    form = t.get("default_form")
    if form not in FORMS:
        raise r.error(where, f"default_form must be one of {FORMS}")
    patterns = t.get("patterns")
    if not isinstance(patterns, list) or not patterns:
        raise r.error(where, "expected a non-empty list of `patterns`")
    return ContactClass(
        name=name, title=str(t.get("title", name)), bounce_s=bounce,
        wetting_a=wetting, rating_a=rating, default_form=form,
        patterns=tuple(str(p).upper() for p in patterns),
        bounce_source=bounce_src, wetting_source=wetting_src, rating_source=rating_src,
        static=static,
    )


def _literal_length(pattern: str) -> int:
    """How specific a glob is: its count of non-wildcard characters."""
    return len(re.sub(r"\[[^\]]*\]|[*?]", "", pattern))


_NAME_WORDS = re.compile(r"[_\-./\s]+")


# ------------------------------------------------------------------ limits


def _parse_limit(r: _Reader, key: str, raw: Any) -> Limit:
    t = r.table(raw, key)
    for field_name in ("unit", "description"):
        if not isinstance(t.get(field_name), str):
            raise r.error(key, f"missing `{field_name}`")
    return Limit(key, r.number(t.get("value"), f"{key}.value"), t["unit"],
                 t["description"], r.source(t, key))


# ------------------------------------------------------------------ the library


class Library:
    """The loaded rules folder, with cached lookups. Build it with load_library()."""

    def __init__(self, families: dict[str, Family], part_types: dict[str, PartType],
                 contact_classes: dict[str, ContactClass], limits: dict[str, Limit],
                 form_words: dict[str, frozenset[str]]) -> None:
        self.families = families
        self.part_types = part_types
        self.contact_classes = contact_classes
        self.limits = limits
        self._form_words = form_words
        self._family_index: dict[str, str] = {}
        for family in families.values():
            for label in (family.name, *family.aliases):
                self._family_index[label.casefold()] = family.name
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
        suffix = r"(?P<suffix>[A-Z_\-,./#+][A-Z0-9_\-,./#+]*)?$"
        self._re_74 = re.compile(
            r"^(?P<maker>[A-Z]{0,4})(?:74|54)(?P<family>" + "|".join(map(re.escape, letters))
            + r")(?P<number>1G\d{2,3}|\d{2,4})" + suffix)
        self._re_4000 = re.compile(
            r"^(?P<maker>[A-Z]{0,4})(?P<number>14\d{3}|40\d{3}|4\d{3})(?P<grade>UB|B|A)?" + suffix)
        self._contact_patterns = tuple(
            (_literal_length(p), re.compile(fnmatch.translate(p)), c)
            for c in contact_classes.values() for p in c.patterns)
        self._part_cache: dict[str, ResolvedPart | None] = {}
        self._contact_cache: dict[tuple[str, int | None], ContactMatch | None] = {}
        self._receiver_cache: dict[tuple[str, float, bool], ReceiverElectrical] = {}

    # -- families

    def family(self, name: str) -> Family:
        """A family by name or alias, case-insensitive; UnknownFamily with close names."""
        canonical = self._family_index.get(name.strip().casefold())
        if canonical is None:
            labels = {label: self._family_index[label] for label in self._family_index}
            close = difflib.get_close_matches(name.strip().casefold(), list(labels), n=3, cutoff=0.5)
            raise UnknownFamily(name, tuple(dict.fromkeys(labels[c] for c in close)))
        return self.families[canonical]

    def receiver_electrical(self, family: str, vcc: float, schmitt: bool) -> ReceiverElectrical:
        """Thresholds, leakage and limits of one input pin at `vcc`.

        Schmitt input: rising = VT+ and falling = VT- (min, typ, max). Plain
        input, or a Schmitt input of a family with no Schmitt data recorded:
        both = (VIL max, midpoint, VIH min) - for the latter no hysteresis is
        credited, which is conservative for both bounce rejection (the
        thresholds nearest the start) and latency (the farthest); see
        receiver_notes(). Raises UnknownFamily or SupplyOutOfRange.
        """
        fam = self.family(family)
        cache_key = (fam.name, float(vcc), bool(schmitt))
        cached = self._receiver_cache.get(cache_key)
        if cached is not None:
            return cached
        fam.check_supply(vcc)
        vih, vil = fam.vih_at(vcc), fam.vil_at(vcc)
        band = (vil, 0.5 * (vil + vih), vih)
        rising = falling = band
        if schmitt and fam.schmitt is not None:
            thresholds = fam.schmitt.at(vcc)
            rising, falling = thresholds.vt_plus, thresholds.vt_minus
        result = ReceiverElectrical(
            family=fam.name, vcc=float(vcc), schmitt=bool(schmitt),
            rising_threshold=rising, falling_threshold=falling,
            vih_min=vih, vil_max=vil,
            leak_high_a=fam.leak_high_a, leak_low_a=fam.leak_low_a,
            abs_max_input_v=fam.abs_max_input_at(vcc), tolerant=fam.tolerant,
            # A Schmitt input switches cleanly on a slow edge: no limit applies.
            transition_limit_s_per_v=None if schmitt else fam.transition_limit_at(vcc),
        )
        self._receiver_cache[cache_key] = result
        return result

    def schmitt_data_known(self, family: str) -> bool:
        return self.family(family).schmitt is not None

    def receiver_notes(self, family: str, vcc: float, schmitt: bool) -> tuple[str, ...]:
        """Caveats on receiver_electrical()'s figures, for reports and `drc trace`."""
        fam = self.family(family)
        notes: list[str] = []
        if schmitt and fam.schmitt is None:
            notes.append(f"no Schmitt threshold data for family {fam.name}: thresholds taken "
                         f"as the VIL/VIH band, no hysteresis credited; use the part's own data")
        elif schmitt and fam.schmitt is not None:
            # A midpoint typ is routine; derived min/max bounds are worth saying.
            derived = [d for d in fam.schmitt.at(vcc).derived if "_typ" not in d]
            if derived:
                notes.append("Schmitt thresholds derived: " + "; ".join(derived))
        if not schmitt and fam.transition is None:
            notes.append(f"no input transition limit known for family {fam.name}"
                         + (f" ({fam.transition_note})" if fam.transition_note else ""))
        return tuple(notes)

    # -- parts

    def resolve_part(self, name: str) -> ResolvedPart | None:
        """A generic part type and family from a part number, or None (never a guess).

        74/54 + family letters + function (SN74HC14N, 74AHCT1G04DBVR, 54LS00J),
        or a 4000-series number (CD4093BE, HEF4013BP, 40106B, CD4011UBE ->
        4000UB; Motorola MC14xxx numbers map to 40xx, 401xx or 4xxx). The
        older 4000A grade, families not in families.toml and single-gate
        types in families they are not made in resolve to None.
        """
        cached = self._part_cache.get(name, False)
        if cached is not False:
            return cached  # type: ignore[return-value]
        result = self._resolve(name)
        self._part_cache[name] = result
        return result

    def _resolve(self, name: str) -> ResolvedPart | None:
        text = name.strip().upper()
        m = self._re_74.match(text)
        if m:
            part = self._numbers_74.get(m["number"])
            family = self._family_index.get(m["family"].casefold())
            if part is None or family is None:
                return None
            if part.families is not None and family not in part.families:
                return None
            return ResolvedPart(part, family, name)
        m = self._re_4000.match(text)
        if m:
            number = m["number"]
            if number.startswith("14"):  # Motorola numbering: MC14011, MC14106, MC14490
                n = int(number[2:])
                number = f"40{n:02d}" if n < 100 else (f"40{n}" if n < 200 else f"4{n}")
            part = self._numbers_4000.get(number)
            # The older 4000A grade has its own, weaker ratings: not resolved to B.
            if part is None or m["grade"] == "A":
                return None
            family = "4000UB" if m["grade"] == "UB" else "4000B"
            if family not in self.families:
                return None
            return ResolvedPart(part, family, name)
        return None

    # -- contacts

    def contact_class_for(self, name: str, terminals: int | None = None) -> ContactMatch | None:
        """The contact class whose pattern matches `name` (most specific wins), or None.

        The form comes from words in the name (SPDT/CO -> SPDT with three
        terminals, common first; NC -> SPST-NC; NO -> SPST-NO), else from the
        terminal count when given (3 -> SPDT, 2 -> SPST), else the class default.
        """
        cache_key = (name, terminals)
        if cache_key in self._contact_cache:
            return self._contact_cache[cache_key]
        result = self._match_contact(name, terminals)
        self._contact_cache[cache_key] = result
        return result

    def _match_contact(self, name: str, terminals: int | None) -> ContactMatch | None:
        text = name.strip().upper()
        best: tuple[int, ContactClass] | None = None
        for weight, regex, cls in self._contact_patterns:
            if regex.match(text) and (best is None or weight > best[0]):
                best = (weight, cls)
        if best is None:
            return None
        cls = best[1]
        words = set(_NAME_WORDS.split(text))
        if words & self._form_words["spdt"]:
            form = "SPDT"
        elif words & self._form_words["spst_nc"]:
            form = "SPST-NC"
        elif words & self._form_words["spst_no"]:
            form = "SPST-NO"
        elif terminals == 3:
            form = "SPDT"
        elif terminals == 2 and cls.default_form == "SPDT":
            form = "SPST-NO"
        else:
            form = cls.default_form
        return ContactMatch(cls, form, 3 if form == "SPDT" else 2)

    def is_known_subcircuit(self, name: str) -> bool:
        """True for a part number or a contact name: the reader keeps such X instances."""
        return self.resolve_part(name) is not None or self.contact_class_for(name) is not None

    # -- limits

    def limit(self, key: str) -> float:
        """A limit's value in SI units (KeyError naming the key if unknown)."""
        try:
            return self.limits[key].value
        except KeyError:
            raise KeyError(f"unknown limit '{key}'") from None


# ------------------------------------------------------------------ loading


def _load_folder(folder: Path) -> Library:
    fam_r = _Reader(folder / "families.toml")
    families = {name: _parse_family(fam_r, name, raw)
                for name, raw in fam_r.table(fam_r.data.get("families"), "families").items()}

    parts_r = _Reader(folder / "parts.toml")
    part_types = {name: _parse_part(parts_r, name, raw)
                  for name, raw in parts_r.table(parts_r.data.get("parts"), "parts").items()}
    for part in part_types.values():
        for fam in part.families or ():
            if fam not in families:
                raise parts_r.error(f'parts."{part.name}".families', f"unknown family {fam}")

    con_r = _Reader(folder / "contacts.toml")
    classes = {name: _parse_contact(con_r, name, raw)
               for name, raw in con_r.table(con_r.data.get("classes"), "classes").items()}
    forms = con_r.table(con_r.data.get("forms"), "forms")
    con_r.source(forms, "forms")
    form_words = {key: frozenset(str(w).upper() for w in forms.get(key, ()))
                  for key in ("spdt", "spst_nc", "spst_no")}
    seen: dict[str, str] = {}
    for cls in classes.values():
        for pattern in cls.patterns:
            if pattern in seen:
                raise con_r.error(f"classes.{cls.name}.patterns",
                                  f"pattern {pattern} also in class {seen[pattern]}")
            seen[pattern] = cls.name

    lim_r = _Reader(folder / "limits.toml")
    limits = {key: _parse_limit(lim_r, key, raw) for key, raw in lim_r.data.items()}
    return Library(families, part_types, classes, limits, form_words)


@lru_cache(maxsize=None)
def _load_cached(folder: Path) -> Library:
    return _load_folder(folder)


def load_library(rules_dir: Path | None = None) -> Library:
    """The library of a rules folder (default: the shipped rules/), loaded once per folder."""
    folder = Path(rules_dir) if rules_dir is not None else data_folder("rules")
    return _load_cached(folder.resolve())
