"""Classify a read netlist into a Board: rails, contacts, parts and receivers.

Roles come from three places, strongest first: the board's config (rails,
contact classes per designator glob, part numbers per designator, and
microcontroller pins), the library under rules/ (subcircuit names that are
contact types or generic logic part numbers, and their pinouts), and the
netlist itself (DC sources to ground make rails). Nothing is guessed: a net
named like a rail with no voltage, or a subcircuit nobody knows, becomes a
Diagnostic on the Board and is left out of the checks.

Naming: an X instance's leading `X` is dropped from the designator a person
sees when a letter follows it (`XU1` -> part `U1`, `XSW20` -> contact
`SW20`); config globs match either spelling. A multi-pole switch pack with
2N terminals gives N contacts `SW3.1` ... `SW3.N`; pole k joins terminal k and
terminal 2N+1-k, the numbering of a DIP package (pin 1 faces pin 2N). Net
names keep the spelling of their first appearance in the netlist.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, fields, replace
from fnmatch import fnmatchcase
from itertools import chain
from typing import TypeVar

from drc.board.board import (
    Board,
    Contact,
    ContactOrigin,
    InternalPull,
    Load,
    Part,
    PartPin,
    Rail,
    Receiver,
    UncheckablePart,
    UncheckedReason,
)
from drc.board.comparator import NotComputed, ResistorIndex, Section, input_thresholds
from drc.board.part_pins import PinPlan, plan_pins
from drc.config.settings import Config, ContactConfig, McuConfig, McuPinConfig, PartConfig, RailConfig
from drc.errors import ConfigError, SourceLocation
from drc.library.catalogue import Library
from drc.library.entries import (
    FORMS,
    ContactClass,
    ContactForm,
    ContactMatch,
    OtherKind,
    PartKind,
    PartType,
    PinRole,
    PinSpec,
    PullDirection,
    ResolvedPart,
)
from drc.netlist.elements import GROUND, Diagnostic, Element, Netlist, key

DEFAULT_CONTACT_CLASS = "tactile"

# Nets that people name after a supply: +5V, 5V, 3V3, +3.3V, 5V0, -12V,
# VCC, VDD, VCC_IO, VDDA, V+. VSS and VEE are left out: VSS is usually
# ground and VEE a negative rail given by a source anyway.
_RAIL_NAME = re.compile(
    r"^(?:[+-]?\d+(?:[.,]\d+)?V\d*|[+-]?\d+V\d+|\+?V(?:CC|DD)\w*|V\+|\+V\w*)$",
    re.IGNORECASE,
)

# Element letters that are never contacts, even when a config glob names them.
_NEVER_CONTACT = frozenset("RCLDVI")

# Elements that are not parts of a stage yet may sit on a contact's net: what
# their input nodes are (node indices) and why a contact reaching them cannot
# be checked. Transistors are discrete receivers; controlled sources, XSPICE
# and digital primitives are simulator constructs.
_DISCRETE = UncheckedReason.DISCRETE_INPUT
_SIMULATOR = UncheckedReason.UNKNOWN_RECEIVER
_OTHER_INPUTS: dict[str, tuple[slice, UncheckedReason, str]] = {
    "Q": (slice(1, 2), _DISCRETE, "the base of transistor {name}: discrete receivers are not modelled"),
    "M": (slice(1, 2), _DISCRETE, "the gate of MOSFET {name}: discrete receivers are not modelled"),
    "J": (slice(1, 2), _DISCRETE, "the gate of JFET {name}: discrete receivers are not modelled"),
    "E": (slice(2, None), _SIMULATOR, "the control input of controlled source {name} (a simulator construct)"),
    "G": (slice(2, None), _SIMULATOR, "the control input of controlled source {name} (a simulator construct)"),
    "A": (slice(0, None), _SIMULATOR, "XSPICE device {name} (a simulator model, not a described part)"),
    "U": (slice(0, None), _SIMULATOR, "digital primitive {name} (a simulator model, not a described part)"),
    "S": (slice(2, 4), _SIMULATOR, "the control input of simulated switch {name}"),
}


def looks_like_rail(net: str) -> bool:
    """True for net names people give to supplies (`+5V`, `3V3`, `VCC`...)."""
    return bool(_RAIL_NAME.match(net))


def display_designator(element: Element) -> str:
    """The designator a person sees: an X instance without its leading `X`."""
    name = element.designator
    if element.kind != "X":
        return name
    head, sep, last = name.rpartition("/")
    if len(last) > 1 and last[0] in "xX" and last[1].isalpha():
        last = last[1:]
    return f"{head}{sep}{last}"


def matches(pattern: str, element: Element) -> bool:
    """Case-insensitive glob match on the designator, with or without its X."""
    p = pattern.casefold()
    names = {element.designator.casefold(), display_designator(element).casefold()}
    return any(fnmatchcase(n, p) for n in names)


def classify(netlist: Netlist, library: Library, config: Config, *,
             default_bounce_s: float | None = None,
             debounces: Mapping[str, float] | None = None) -> Board:
    """Turn a flat netlist into a Board using the library and the config.

    default_bounce_s is the command line's bounce figure: it wins over the
    class default and the config's `default_bounce_s`, and loses to a
    per-contact bounce from config. debounces maps a receiver pin "PART:PIN"
    (case-folded) to a firmware debounce in seconds, from `*@drc debounce`
    annotations; it wins over the config's.
    """
    names = _net_spellings(netlist)
    diagnostics: list[Diagnostic] = []
    rails = _rails(netlist, config, names, diagnostics)
    _rail_name_diagnostics(netlist, names, rails, diagnostics)
    bounce_default = default_bounce_s if default_bounce_s is not None else config.default_bounce_s
    ctx = _Context(library, config, netlist, names, rails, bounce_default, debounces or {},
                   diagnostics=diagnostics)
    unknown: dict[str, SourceLocation] = {}
    never = _NEVER_CONTACT
    for element in netlist.elements:
        if element.kind not in never:  # most of a board: passives need no call
            _classify_element(ctx, element, unknown)
    for name, location in unknown.items():
        diagnostics.append(Diagnostic(
            f"subcircuit {name} is not a known logic part, load or contact type; its "
            f"instances are not checked (name it in rules/ or map it in the config)",
            location))
    return Board(path=netlist.path, netlist=netlist, rails=rails, contacts=ctx.contacts,
                 receivers=ctx.receivers, parts=ctx.parts, diagnostics=diagnostics,
                 config_path=config.path, uncheckable=ctx.uncheckable, loads=ctx.loads)


# ---------------------------------------------------------------- nets, rails

def _net_spellings(netlist: Netlist) -> dict[str, str]:
    """key(net) -> the net's spelling at its first appearance."""
    names: dict[str, str] = {key(GROUND): GROUND}
    # Every spelling once, in order of first appearance: dict.fromkeys over the
    # chained node tuples runs in C, so the Python loop below sees each net
    # spelling once instead of every pin of the board.
    spellings = dict.fromkeys(chain.from_iterable(
        [e.nodes for e in netlist.elements if e.kind != "K"]))
    for node in spellings:
        k = node.casefold()
        if k not in names:
            names[k] = node
    return names


def _first_uses(netlist: Netlist, wanted: set[str]) -> dict[str, Element]:
    """key(net) -> the first element on it, for the few nets in `wanted`."""
    found: dict[str, Element] = {}
    for element in netlist.elements:
        if element.kind == "K":
            continue
        for node in element.nodes:
            k = node.casefold()
            if k in wanted and k not in found:
                found[k] = element
        if len(found) == len(wanted):
            break
    return found


def _tolerance_param(element: Element) -> float | None:
    """A `tol=` instance parameter as a fraction: `1%`, `0.01`, or `1` (percent)."""
    for name in ("tol", "tolerance"):
        if name in element.params:
            return parse_tolerance(element.params[name])
    return None


def parse_tolerance(raw: float | str) -> float | None:
    """`5%` -> 0.05; 0.05 -> 0.05; 5 -> 0.05 (a bare number >= 1 is percent)."""
    if isinstance(raw, str):
        text = raw.strip()
        try:
            if text.endswith("%"):
                return float(text[:-1]) / 100.0
            raw = float(text)
        except ValueError:
            return None
    value = float(raw)
    if value < 0:
        return None
    return value / 100.0 if value >= 1 else value


def _rails(netlist: Netlist, config: Config, names: dict[str, str],
           diagnostics: list[Diagnostic]) -> dict[str, Rail]:
    """Rails from DC sources (chained through sources on rails) and config."""
    configured = {key(r.net): r for r in config.rails}
    rails = _source_rails(netlist, config, configured, names, diagnostics)
    for net, cfg in configured.items():
        # A config shared by several boards may name nets this board lacks.
        if net in rails or net == key(GROUND) or net not in names:
            continue
        rails[net] = Rail(names[net], cfg.voltage, cfg.tolerance, "config")
    return rails


def _source_rails(netlist: Netlist, config: Config, configured: Mapping[str, RailConfig],
                  names: dict[str, str], diagnostics: list[Diagnostic]) -> dict[str, Rail]:
    """Rails held by DC sources: a source from a held net to another holds that one too."""
    rails: dict[str, Rail] = {}
    fixed = {key(GROUND): 0.0}
    sources = [(e, e.value.si) for e in netlist.elements
               if e.kind == "V" and e.value is not None and len(e.nodes) == 2]
    # A source between a rail and another net makes that net a rail too; the
    # loop ends when a pass adds nothing (each pass adds at least one net).
    pending = sources
    while pending:
        left = []
        for source, volts in pending:
            held = _held_by(source, volts, fixed)
            if held is None:
                left.append((source, volts))
                continue
            net, voltage = held
            fixed[net] = voltage
            rails[net] = _source_rail(source, net, voltage, configured.get(net), config, names,
                                      diagnostics)
        if len(left) == len(pending):
            break
        pending = left
    return rails


def _held_by(source: Element, volts: float, fixed: Mapping[str, float]) -> tuple[str, float] | None:
    """(net key, voltage) the source holds, given the nets already held; None if not yet."""
    plus, minus = (key(n) for n in source.nodes)
    if minus in fixed and plus not in fixed:
        return plus, fixed[minus] + volts
    if plus in fixed and minus not in fixed:
        return minus, fixed[plus] - volts
    return None


def _source_rail(source: Element, net: str, voltage: float, cfg: RailConfig | None, config: Config,
                 names: dict[str, str], diagnostics: list[Diagnostic]) -> Rail:
    """The rail a source holds; its tolerance from the source, the config's rail, or the default."""
    tol = _tolerance_param(source)
    if tol is None:
        tol = cfg.tolerance if cfg is not None else config.tolerances.rail
    if cfg is not None and abs(cfg.voltage - voltage) > 1e-9 * max(1.0, abs(voltage)):
        diagnostics.append(Diagnostic(
            f"config gives rail {cfg.net} {cfg.voltage:g} V but source "
            f"{source.designator} holds it at {voltage:g} V; the source wins",
            source.location))
    return Rail(names.get(net, source.nodes[0]), voltage, tol, source.designator)


def _rail_name_diagnostics(netlist: Netlist, names: dict[str, str], rails: dict[str, Rail],
                           diagnostics: list[Diagnostic]) -> None:
    ground = key(GROUND)
    # Every rail-like name has a V in it (see _RAIL_NAME): a cheap test first.
    loose = [k for k, net in names.items()
             if "v" in k and k not in rails and k != ground and looks_like_rail(net)]
    if not loose:
        return
    first_use = _first_uses(netlist, set(loose))
    for k in loose:
        diagnostics.append(Diagnostic(
            f"net {names[k]} is named like a supply rail but no source or "
            f"config gives its voltage; give it in the config's rails",
            first_use[k].location))


# ---------------------------------------------------------------- elements

@dataclass(slots=True)
class _Context:
    """What classification reads (library, config, netlist) and what it builds."""

    library: Library
    config: Config
    netlist: Netlist
    names: dict[str, str]
    rails: dict[str, Rail]
    bounce_default: float | None
    debounces: Mapping[str, float]  # "part:pin" (case-folded) -> firmware debounce, s
    contacts: list[Contact] = field(default_factory=list)
    receivers: list[Receiver] = field(default_factory=list)
    parts: dict[str, Part] = field(default_factory=dict)
    diagnostics: list[Diagnostic] = field(default_factory=list)
    defined: frozenset[str] | None = None
    notes: set[str] = field(default_factory=set)  # once-per-board diagnostics given
    uncheckable: list[UncheckablePart] = field(default_factory=list)
    loads: list[Load] = field(default_factory=list)
    resistor_index: ResistorIndex | None = None  # built when a comparator needs it
    pin_plans: dict[tuple, PinPlan] = field(default_factory=dict)  # instances of one model share one

    def pin_plan(self, part_type: PartType, nodes: int, model: str,
                 config_pins: tuple[str, ...] | None) -> PinPlan:
        plan_key = (part_type.name, nodes, key(model), config_pins)
        found = self.pin_plans.get(plan_key)
        if found is None:
            found = self.pin_plans[plan_key] = plan_pins(
                self.library, part_type, nodes, model, config_pins,
                self.netlist.subcircuits.get(key(model)) if model else None)
        return found

    def resistors(self) -> ResistorIndex:
        if self.resistor_index is None:
            default = self.config.tolerances.resistor

            def tolerance_of(element: Element) -> float:
                found = _tolerance_param(element)
                return default if found is None else found

            self.resistor_index = ResistorIndex(self.netlist.elements, tolerance_of)
        return self.resistor_index

    def block(self, element: Element, name: str, reason: UncheckedReason, detail: str,
              pins: Iterable[tuple[str, str]], beyond: Iterable[str] = ()) -> None:
        """Record a part whose inputs a contact may reach but that cannot be checked."""
        self.uncheckable.append(UncheckablePart(
            name, element.model or element.kind, reason, detail,
            tuple(dict.fromkeys((ref, self.net(net)) for ref, net in pins)), element.location,
            tuple(dict.fromkeys(self.net(n) for n in beyond))))

    def is_defined_subcircuit(self, name: str) -> bool:
        if self.defined is None:
            self.defined = frozenset(key(n) for n in self.netlist.subcircuit_names)
        return key(name) in self.defined

    def net(self, node: str) -> str:
        return self.names.get(key(node), node)

    def closed_resistance(self) -> float | None:
        """A closed contact's resistance: config limit, else rules/limits.toml."""
        name = "contact_closed_resistance"
        if name in self.config.limits:
            return self.config.limits[name]
        limit = self.library.limits.get(name)
        return limit.value if limit is not None else None

    def config_location(self) -> SourceLocation:
        return SourceLocation(self.config.path or "<config>")

    def firmware_debounce(self, part: str, pin: int, configured: float | None) -> float | None:
        """A pin's firmware debounce: an annotation's, else the config's."""
        if not self.debounces:
            return configured
        return self.debounces.get(f"{part}:{pin}".casefold(), configured)

    def note(self, message: str, location: SourceLocation) -> None:
        self.diagnostics.append(Diagnostic(message, location))


def _classify_element(ctx: _Context, element: Element,
                      unknown: dict[str, SourceLocation]) -> None:
    kind = element.kind
    if kind == "S":
        _classify_s(ctx, element)
    elif kind == "X":
        _classify_x(ctx, element, unknown)
    elif kind not in _NEVER_CONTACT and len(element.nodes) >= 2:
        settings = _contact_settings(ctx.config.contacts, element)
        if settings is not None:
            _add_contacts(ctx, element, element.nodes, None, settings, ContactOrigin.CONFIG)
        else:
            _other_element(ctx, element)


def _other_element(ctx: _Context, element: Element) -> None:
    """A transistor or simulator element: its input nodes are not a checkable receiver."""
    found = _OTHER_INPUTS.get(element.kind)
    if found is None:
        return
    inputs, reason, detail = found
    name = element.designator
    ctx.block(element, name, reason, detail.format(name=name),
              ((name, net) for net in element.nodes[inputs]))


_Entry = TypeVar("_Entry", ContactConfig, PartConfig)


def _merged_settings(entries: Iterable[_Entry], element: Element) -> _Entry | None:
    """The config entries matching a designator, merged: later entries win field by field."""
    merged = None
    for entry in entries:
        if not matches(entry.pattern, element):
            continue
        if merged is None:
            merged = entry
        else:
            changes = {f.name: getattr(entry, f.name) for f in fields(entry)
                       if f.name != "pattern" and getattr(entry, f.name) is not None}
            merged = replace(merged, pattern=entry.pattern, **changes)
    return merged


def _contact_settings(entries: Iterable[ContactConfig], element: Element) -> ContactConfig | None:
    return _merged_settings(entries, element)


def _classify_s(ctx: _Context, element: Element) -> None:
    settings = _contact_settings(ctx.config.contacts, element)
    if len(element.nodes) in (2, 3):
        # Our contact line: two terminals, or three for a changeover (common first).
        match = (ctx.library.contact_class_for(element.model, len(element.nodes))
                 if element.model else None)
        if element.model and match is None and (settings is None or not settings.contact_class):
            ctx.note(f"{element.designator}: contact type {element.model} is not in the "
                     f"library; taken as class {DEFAULT_CONTACT_CLASS}", element.location)
        _add_contacts(ctx, element, element.nodes, match, settings, ContactOrigin.ELEMENT)
    elif settings is not None:
        # A SPICE switch (nodes: switch+, switch-, control+, control-) the config
        # declares to be a real contact: its first two nodes are the contact.
        _add_contacts(ctx, element, element.nodes[:2], None, settings, ContactOrigin.CONFIG)
    else:
        # A 4-node switch is a simulated switch whatever its name: its control
        # input is a simulator construct, not a receiver.
        _other_element(ctx, element)


def _classify_x(ctx: _Context, element: Element, unknown: dict[str, SourceLocation]) -> None:
    config = ctx.config
    lib = ctx.library
    for mcu in config.mcus:
        if matches(mcu.part, element):
            _add_mcu(ctx, element, mcu)
            return
    part_cfg = _part_settings(config.parts, element)
    if part_cfg is not None and part_cfg.part_number:
        resolved = lib.resolve_part(part_cfg.part_number)
        if resolved is None:
            raise ConfigError(
                f"part {part_cfg.part_number} (given for {display_designator(element)}) "
                f"is not a part number the library knows", ctx.config_location())
        _add_part(ctx, element, resolved, part_cfg.family, part_cfg)
        return
    model = element.model or ""
    settings = _contact_settings(config.contacts, element)
    if settings is None and _simulated_switch(ctx, element, model):
        return
    match = lib.contact_class_for(model, len(element.nodes)) if model else None
    if match is not None:
        if ctx.is_defined_subcircuit(model):
            ctx.note(f"{display_designator(element)}: subcircuit {model} is defined in the "
                     f"netlist but its name matches contact class "
                     f"{match.contact_class.name}; taken as a contact, its contents unread",
                     element.location)
        _add_contacts(ctx, element, element.nodes, match, settings, ContactOrigin.SUBCIRCUIT)
        return
    resolved = lib.resolve_part(model) if model else None
    if resolved is not None:
        _add_part(ctx, element, resolved, part_cfg.family if part_cfg else None, part_cfg)
        return
    if settings is not None:
        _add_contacts(ctx, element, element.nodes, None, settings, ContactOrigin.CONFIG)
        return
    _not_logic(ctx, element, model, unknown)


def _simulated_switch(ctx: _Context, element: Element, model: str) -> bool:
    """True (recorded) when the netlist itself defines the model as a controlled
    switch: a simulated switch, not a mechanical contact, whatever its name says."""
    defined = ctx.netlist.subcircuits.get(key(model)) if model else None
    if defined is None or not defined.kinds & {"S", "W"}:
        return False
    name = display_designator(element)
    ctx.note(f"{name}: subcircuit {model} holds a controlled switch ({defined.location}): "
             f"a simulated switch, not a mechanical contact", element.location)
    ctx.block(element, name, UncheckedReason.UNKNOWN_RECEIVER,
              f"{name} is a simulated switch (subcircuit {model} holds an S/W element), "
              f"not a described part", ((name, n) for n in element.nodes))
    return True


def _not_logic(ctx: _Context, element: Element, model: str, unknown: dict[str, SourceLocation]) -> None:
    """An X instance that is no logic part or contact: a load, a connection, or unknown."""
    name = display_designator(element)
    other = ctx.library.other_part_for(name, model)
    if other is not None:
        if other.kind == OtherKind.LOAD:
            ctx.loads.append(Load(name, model, other.title, tuple(ctx.net(n) for n in element.nodes),
                                  element.location))
        return  # a connection: the net passes through it
    unknown.setdefault(model or element.designator, element.location)
    ctx.block(element, name, UncheckedReason.UNKNOWN_RECEIVER,
              f"{name} ({model or 'no model'}) is not a logic part, load or contact the library "
              f"knows; name it in the config ([[parts]] part-number, pins) or in rules/",
              ((name, n) for n in element.nodes))


def _part_settings(entries: Iterable[PartConfig], element: Element) -> PartConfig | None:
    return _merged_settings(entries, element)


# ---------------------------------------------------------------- contacts

def _contact_class(ctx: _Context, name: str, element: Element) -> ContactClass:
    classes = ctx.library.contact_classes
    found = classes.get(name) or classes.get(name.casefold())
    if found is None:
        for cname, cls in classes.items():
            if cname.casefold() == name.casefold():
                return cls
        raise ConfigError(
            f"contact class {name!r} (for {element.designator}) is unknown; known "
            f"classes: {', '.join(sorted(classes))}", ctx.config_location())
    return found


def _normal_form(text: str | None) -> str | None:
    if text is None:
        return None
    form = text.strip().upper().replace("_", "-")
    return {"NO": "SPST-NO", "NC": "SPST-NC", "SPST": "SPST-NO"}.get(form, form)


def _configured_form(ctx: _Context, settings: ContactConfig | None, element: Element) -> ContactForm | None:
    """The form the config gives the element, if any (a ConfigError if it is no form)."""
    if settings is None or settings.form is None:
        return None
    form = _normal_form(settings.form)
    if form not in FORMS:
        raise ConfigError(f"contact form {settings.form!r} for {element.designator} is not "
                          f"one of {', '.join(FORMS)}", ctx.config_location())
    return ContactForm(form)


def _add_contacts(ctx: _Context, element: Element, nodes: tuple[str, ...], match: ContactMatch | None,
                  settings: ContactConfig | None, origin: ContactOrigin) -> None:
    """Add one contact per pole of the element, named after its designator."""
    if settings is not None and settings.contact_class:
        cls = _contact_class(ctx, settings.contact_class, element)
    elif match is not None:
        cls = match.contact_class
    else:
        cls = _contact_class(ctx, DEFAULT_CONTACT_CLASS, element)
    config_form = _configured_form(ctx, settings, element)
    wanted = config_form or ContactForm(_normal_form(match.form if match else None)
                                        or _normal_form(cls.default_form) or "SPST-NO")
    poles = _poles(nodes, wanted, config_form is not None)
    if poles is None:
        ctx.note(f"{element.designator}: a contact with {len(nodes)} terminals cannot be "
                 f"split into poles; not checked", element.location)
        return
    if config_form == ContactForm.SPDT and len(nodes) == 2:
        ctx.note(f"{element.designator}: configured SPDT but has two terminals; taken as SPST-NO",
                 element.location)
    bounce = _bounce(settings, ctx.bounce_default, cls)
    name = display_designator(element)
    closed = ctx.closed_resistance()
    for index, (form, terminals) in enumerate(poles, start=1):
        designator = name if len(poles) == 1 else f"{name}.{index}"
        extra = {"closed_resistance": closed} if closed is not None else {}
        ctx.contacts.append(Contact(
            designator=designator, contact_class=cls.name, form=form,
            terminals=tuple(ctx.net(n) for n in terminals), bounce_s=bounce,
            wetting_a=cls.wetting_a, rating_a=cls.rating_a,
            location=element.location, origin=origin, static=cls.static, **extra))


def _poles(nodes: tuple[str, ...], form: ContactForm,
           form_configured: bool) -> list[tuple[ContactForm, tuple[str, ...]]] | None:
    """Split terminals into (form, terminals) poles; None when no split fits.

    2 terminals: one SPST pole (an SPDT form falls back to SPST-NO).
    3 terminals: one SPDT pole, common first (an SPST form on three
    terminals cannot say which two it joins, so SPDT wins).
    2N terminals (N > 1): N SPST poles, pole k across terminals k and 2N+1-k;
    3N terminals with form SPDT: N changeover poles (common, NC, NO) in order.
    """
    n = len(nodes)
    spst = form if form != ContactForm.SPDT else ContactForm.SPST_NO
    if n == 2:
        return [(spst, nodes)]
    if n == 3:
        return [(ContactForm.SPDT, nodes)]
    if form == ContactForm.SPDT and n % 3 == 0:
        return [(ContactForm.SPDT, nodes[i:i + 3]) for i in range(0, n, 3)]
    if n % 2 == 0:
        return [(spst, (nodes[k], nodes[n - 1 - k])) for k in range(n // 2)]
    return None


def _bounce(settings: ContactConfig | None, default: float | None, cls: ContactClass) -> float:
    if settings is not None and settings.bounce_s is not None:
        return settings.bounce_s
    if default is not None:
        return default
    return cls.bounce_s


# ---------------------------------------------------------------- parts

def _family_name(ctx: _Context, name: str, what: str) -> str:
    """Validate a family name the config gives; return the library's spelling."""
    try:
        family = ctx.library.family(name)
    except KeyError:
        raise ConfigError(f"logic family {name!r} (for {what}) is not in the library",
                          ctx.config_location()) from None
    return family.name


def _add_part(ctx: _Context, element: Element, resolved: ResolvedPart, family_override: str | None,
              part_cfg: PartConfig | None = None) -> None:
    """A part the library resolved: its pins by the pin plan, then its receivers."""
    part_type = resolved.part_type
    name = display_designator(element)
    family = _family_name(ctx, family_override, name) if family_override else resolved.family
    model = element.model or ""
    plan = ctx.pin_plan(part_type, len(element.nodes), model,
                        part_cfg.pins if part_cfg is not None else None)
    if plan.config_unknown:
        raise ConfigError(f"{name}: {plan.how}", ctx.config_location())
    if plan.pins is None:
        ctx.note(f"{name}: {model}: {plan.how}; not checked", element.location)
        ctx.block(element, name, UncheckedReason.UNKNOWN_PIN_ORDER, f"{name} ({model}): {plan.how}",
                  ((name, n) for n in element.nodes))
        return
    specs = plan.pins
    pins = tuple(PartPin(spec.number, ctx.net(element.nodes[spec.number - 1]), spec.role, spec.name)
                 for spec in specs)
    resolution = f"{resolved.how}; {plan.how}" if resolved.how else plan.how
    ctx.parts[key(name)] = Part(name, part_type.name, resolved.part_number or model,
                                family, pins, element.location, resolution, part_type.latch)
    if part_type.kind == PartKind.OPTOCOUPLER:
        ctx.block(element, name, UncheckedReason.ISOLATED_INPUT,
                  f"{name} ({model}) is an optocoupler: the contact drives its LED, and the logic "
                  f"input sits behind the isolation barrier; isolated inputs are not checked yet",
                  ((name, p.net) for p in pins if p.role == PinRole.ISOLATED),
                  beyond=(p.net for p in pins if p.role == PinRole.OUTPUT))
        return
    supply = _checkable_supply(ctx, element, name, family, part_type.name, specs, pins)
    if supply is not None:
        _add_receivers(ctx, element, name, part_type, family, specs, pins, supply)


def _checkable_supply(ctx: _Context, element: Element, name: str, family: str, part_type: str,
                      specs: tuple[PinSpec, ...], pins: tuple[PartPin, ...]) -> Rail | None:
    """The part's supply rail when its inputs can be judged; else None, with each
    reason recorded (analog channels, no known supply, a supply out of range)."""
    model = element.model or ""
    inputs = [spec for spec in specs if spec.role == PinRole.INPUT]
    analog = [spec for spec in specs if spec.role == PinRole.ANALOG]
    if analog:
        ctx.block(element, name, UncheckedReason.ANALOG_INPUT,
                  f"{name} ({model}): an analog switch channel passes the level on and has no "
                  f"threshold of its own; what reads its common pin is not traced",
                  ((f"{name}:{spec.number}", element.nodes[spec.number - 1]) for spec in analog))
    supply = _supply_rail(ctx, pins)
    if supply is None:
        why = ("its supply pin is not on a rail with a known voltage; give the rail's voltage in "
               "the config's [[rails]]" if any(p.role == PinRole.SUPPLY for p in pins) else
               "its pins name no supply pin (a model with implicit power); name the pins, VCC "
               "included, in the .subckt line or the config's [[parts]] pins")
        ctx.note(f"{name}: {why}; its inputs are not checked", element.location)
        ctx.block(element, name, UncheckedReason.UNKNOWN_SUPPLY, f"{name} ({model}): {why}",
                  ((f"{name}:{spec.number}", element.nodes[spec.number - 1]) for spec in inputs))
        return None
    if _supply_out_of_range(ctx, element, name, family, supply.voltage, inputs, part_type):
        return None
    return supply


def _add_receivers(ctx: _Context, element: Element, name: str, part_type: PartType, family: str,
                   specs: tuple[PinSpec, ...], pins: tuple[PartPin, ...], supply: Rail) -> None:
    """One Receiver per logic input pin (a comparator's with its computed thresholds)."""
    comparator = part_type.kind == PartKind.COMPARATOR
    sections = _comparator_sections(name, part_type, specs, pins, supply) if comparator else {}
    for spec in specs:
        if spec.role != PinRole.INPUT:
            continue
        number = spec.number
        thresholds = _comparator_input(ctx, element, name, number, sections.get(number)) \
            if comparator else None
        if comparator and thresholds is None:
            continue
        ctx.receivers.append(Receiver(
            part=name, pin=number, net=ctx.net(element.nodes[number - 1]),
            part_type=part_type.name, family=family,
            schmitt=bool(spec.schmitt) if thresholds is None else thresholds.hysteresis,
            edge_sensitive=bool(spec.edge_sensitive), function=spec.function or "data",
            supply_v=supply.voltage, supply_tolerance=supply.tolerance,
            location=element.location, internal_pull=_part_pin_pull(ctx, name, element, spec, family),
            firmware_debounce_s=ctx.firmware_debounce(name, number, None),
            dedicated_debounce=bool(part_type.debounces), gate=spec.gate,
            thresholds=None if thresholds is None else (thresholds.rising, thresholds.falling),
            threshold_note=None if thresholds is None else thresholds.note))


def _supply_out_of_range(ctx: _Context, element: Element, name: str, family: str, vcc: float,
                         inputs: Iterable[PinSpec], part_type: str | None = None) -> bool:
    """True (and the inputs recorded as unchecked) when VCC is outside the range of the
    family (or of the part's own variant: single-gate parts, families.toml part_variants)."""
    fam = ctx.library.family(family)
    low, high = fam.supply_range_for(part_type)
    if low - 1e-9 <= vcc <= high + 1e-9:
        return False
    ctx.block(element, name, UncheckedReason.SUPPLY_OUT_OF_RANGE,
              f"{name}: VCC {vcc:g} V is outside the {fam.name} supply range {low:g}-{high:g} V; "
              f"its thresholds are not defined there",
              ((f"{name}:{spec.number}", element.nodes[spec.number - 1]) for spec in inputs))
    return True


def _comparator_sections(name: str, part_type: PartType, specs: tuple[PinSpec, ...],
                         pins: tuple[PartPin, ...], supply: Rail) -> dict[int, Section | str]:
    """Input pin number -> its comparator section, or why the section is incomplete."""
    data = part_type.comparator
    by_gate: dict[str | None, dict[str, PartPin]] = {}
    for spec, pin in zip(specs, pins, strict=True):
        if spec.role in (PinRole.INPUT, PinRole.OUTPUT):
            role = spec.function if spec.role == PinRole.INPUT else "output"
            by_gate.setdefault(spec.gate, {})[role] = pin
    out: dict[int, Section | str] = {}
    for gate in by_gate.values():
        plus, minus, output = gate.get("noninverting"), gate.get("inverting"), gate.get("output")
        pairs: tuple[tuple[PartPin | None, PartPin | None, bool], ...] = (
            (minus, plus, True), (plus, minus, False))
        for here, other, inverting in pairs:
            if here is None:
                continue
            if other is None or output is None or data is None:
                out[here.number] = (f"{name}: the section of pin {here.number} has no other input "
                                    f"or no output in the pin plan")
            else:
                out[here.number] = Section(name, here.net, other.net, inverting, output.net,
                                           supply, data)
    return out


def _comparator_input(ctx: _Context, element: Element, name: str, number: int,
                      section: Section | str | None):
    """The computed thresholds of one comparator input, or None (recorded as unchecked)."""
    if isinstance(section, Section):
        found = input_thresholds(section, ctx.resistors(), ctx.rails)
        if not isinstance(found, NotComputed):
            return found
        reason, detail = found.reason, found.detail
    else:
        reason = UncheckedReason.UNKNOWN_THRESHOLD
        detail = section or f"{name}: pin {number} belongs to no comparator section"
    ctx.block(element, name, reason, detail, ((f"{name}:{number}", element.nodes[number - 1]),))
    return None


def _family_pull_range(ctx: _Context, family: str) -> tuple[float, float] | None:
    try:
        return ctx.library.family(family).internal_pull_ohms
    except KeyError:
        return None


def _part_pin_pull(ctx: _Context, name: str, element: Element, spec: PinSpec,
                   family: str) -> InternalPull | None:
    """A pin the part data says is pulled inside, with the family's resistor range."""
    direction = spec.internal_pull
    if not direction:
        return None
    found = _family_pull_range(ctx, family)
    if found is None:
        # The part data says the pin is pulled but gives no value: assume the usual
        # on-chip range from rules/limits.toml, and say so once per part.
        found = (ctx.library.limit("unknown_internal_pull_min"),
                 ctx.library.limit("unknown_internal_pull_max"))
        note = (f"{name}: its inputs have internal pull resistors of unknown value (family "
                f"{family} gives no range); assumed {found[0] / 1e3:g}-{found[1] / 1e3:g} kΩ, "
                f"verify against the part's data")
        # A set of the notes given: a board has hundreds of such parts.
        if note not in ctx.notes:
            ctx.notes.add(note)
            ctx.note(note, element.location)
    return InternalPull(direction, found[0], found[1])


def _supply_rail(ctx: _Context, pins: Iterable[PartPin]) -> Rail | None:
    for pin in pins:
        if pin.role == PinRole.SUPPLY:
            rail = ctx.rails.get(key(pin.net))
            if rail is not None and rail.voltage > 0:
                return rail
    return None


def _add_mcu(ctx: _Context, element: Element, mcu: McuConfig) -> None:
    """A microcontroller: only the pins the config describes are known."""
    name = display_designator(element)
    nodes = element.nodes

    def net_of(pin: int) -> str:
        if not 1 <= pin <= len(nodes):
            raise ConfigError(f"{name} has pins 1..{len(nodes)}; the config names pin {pin}",
                              ctx.config_location())
        return ctx.net(nodes[pin - 1])

    supply_rail = next((ctx.rails[key(net_of(p))] for p in mcu.supply_pins
                        if key(net_of(p)) in ctx.rails), None)
    pins = [PartPin(p, net_of(p), PinRole.SUPPLY, "VDD") for p in mcu.supply_pins]
    pins += [PartPin(p, net_of(p), PinRole.GROUND, "VSS") for p in mcu.ground_pins]
    family_default = _family_name(ctx, mcu.family, name) if mcu.family else None
    for pin in mcu.pins:
        net = net_of(pin.pin)
        pins.append(PartPin(pin.pin, net, PinRole.INPUT, f"P{pin.pin}"))
        receiver = _mcu_receiver(ctx, element, name, mcu, pin, net, family_default, supply_rail)
        if receiver is not None:
            ctx.receivers.append(receiver)
    described = {p.number for p in pins}
    others = [(f"{name}:{number}", node) for number, node in enumerate(nodes, start=1)
              if number not in described]
    if others:
        ctx.block(element, name, UncheckedReason.UNKNOWN_RECEIVER,
                  f"{name}: a pin the config's [[mcu.pins]] does not describe (family, Schmitt, "
                  f"pull, debounce)", others)
    ctx.parts[key(name)] = Part(name, "mcu", element.model or "", family_default or "",
                                tuple(sorted(pins, key=lambda p: p.number)),
                                element.location, "a microcontroller described by the config's [[mcu]]")


def _mcu_receiver(ctx: _Context, element: Element, name: str, mcu: McuConfig, pin: McuPinConfig,
                  net: str, family_default: str | None, supply_rail: Rail | None) -> Receiver | None:
    """The receiver of one configured MCU pin; None (with a diagnostic) when it lacks data."""
    family = _family_name(ctx, pin.family, f"{name} pin {pin.pin}") if pin.family \
        else family_default
    supply_v = pin.supply_v or mcu.supply_v or (supply_rail.voltage if supply_rail else None)
    if family is None or supply_v is None:
        ctx.note(f"{name} pin {pin.pin}: the config gives no "
                 f"{'family' if family is None else 'supply voltage'}; not checked",
                 element.location)
        ctx.block(element, name, UncheckedReason.UNKNOWN_SUPPLY if family is not None
                  else UncheckedReason.UNKNOWN_RECEIVER,
                  f"{name} pin {pin.pin}: the config gives no "
                  f"{'family' if family is None else 'supply voltage'}", ((f"{name}:{pin.pin}", net),))
        return None
    spec = PinSpec(pin.pin, f"P{pin.pin}", PinRole.INPUT, pin.schmitt, pin.edge_sensitive, "gpio", None)
    if _supply_out_of_range(ctx, element, name, family, supply_v, (spec,)):
        return None
    tolerance = supply_rail.tolerance if supply_rail else ctx.config.tolerances.rail
    return Receiver(
        part=name, pin=pin.pin, net=net, part_type="mcu", family=family,
        schmitt=pin.schmitt, edge_sensitive=pin.edge_sensitive, function="gpio",
        supply_v=supply_v, supply_tolerance=tolerance, location=element.location,
        internal_pull=_internal_pull(ctx, name, pin, family),
        firmware_debounce_s=ctx.firmware_debounce(name, pin.pin, pin.debounce_s))


def _internal_pull(ctx: _Context, name: str, pin: McuPinConfig, family: str) -> InternalPull | None:
    if not pin.pull:
        return None
    direction = pin.pull.strip().lower()
    if direction not in ("up", "down"):
        raise ConfigError(f"{name} pin {pin.pin}: pull must be \"up\" or \"down\", "
                          f"not {pin.pull!r}", ctx.config_location())
    low, high = _pull_range(ctx, name, pin, family, direction)
    if not 0 < low <= high:
        raise ConfigError(f"{name} pin {pin.pin}: internal pull range {low:g}..{high:g} "
                          f"ohm is not a positive range", ctx.config_location())
    return InternalPull(PullDirection(direction), low, high)


def _pull_range(ctx: _Context, name: str, pin: McuPinConfig, family: str,
                direction: str) -> tuple[float, float]:
    """The configured pull range (one bound given: both), else the family's typical range."""
    low, high = pin.pull_min_ohms, pin.pull_max_ohms
    if low is not None:
        return (low, high if high is not None else low)
    if high is not None:
        return (high, high)
    # No range in the config: the family's typical range, if rules/ has one.
    found = _family_pull_range(ctx, family)
    if found is None:
        raise ConfigError(f"{name} pin {pin.pin}: pull = {direction} needs pull-min "
                          f"and pull-max (family {family} gives no range)",
                          ctx.config_location())
    return found
