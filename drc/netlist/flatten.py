"""Flattening: subcircuit instances expanded into one flat list of elements.

X instances are expanded depth-first: designators and local nets of an
instance are joined with `/` (`XK1/R1`, `XK1/key`), ports map to the nets of
the instance line, ground (`0`, `gnd`) and `.global` nets stay global, and
every net keeps its first-seen spelling. Values and parameters are
evaluated in the scope of their instance (drc/netlist/parameters.py). X
instances of undefined subcircuits, or of names the `keep_as_part` callback
claims, stay as parts (kind "X"). Recursion, nesting past the limit and a
hierarchy that would flatten past the element limit are refused, the last
before anything is built.
"""

from __future__ import annotations

from collections.abc import Callable

from drc.errors import LimitError
from drc.netlist.element_lines import resolve_bjt
from drc.netlist.elements import NO_PARAMS, Element
from drc.netlist.expressions import Expression
from drc.netlist.lines import limit_hint
from drc.netlist.options import ReaderOptions
from drc.netlist.parameters import ParameterEvaluator, ParameterScope
from drc.netlist.specs import BodyRecord, ElementSpec, LoadedNetlist, PlainLine, SubcircuitDefinition
from drc.netlist.tokens import GROUND_NAMES, finite_number

# How a node of an element line maps to a flat net (see `node_plan`).
_GROUND, _GLOBAL, _LOCAL = 0, 1, 3

_ASCII_UPPER = str.maketrans("abcdefghijklmnopqrstuvwxyz", "ABCDEFGHIJKLMNOPQRSTUVWXYZ")


def designator_key(text: str) -> str:
    """The key the duplicate-designator check files `text` under: the case-folded
    text with its ASCII letters upper-cased (the same identity as `key()`,
    character by character), so the usual upper-case designator is its own
    key and a million of them need no second string."""
    if text.isascii():
        upper = text.upper()
        return text if upper == text else upper
    return text.casefold().translate(_ASCII_UPPER)


def _duplicate(spec: BodyRecord, designator: str, first: Element | ElementSpec) -> Exception:
    return spec.line.error(f"duplicate designator {designator} (first at {first.location})")


class Placement:
    """Where a definition's body is expanded: the top level or one X instance.

    `prefix` is prepended to designators and local nets (`XK1/`), `pkey` is
    its case-folded form for net keys, `path` the instances passed through,
    `ports` maps the definition's port keys to the instance's nets, `scope`
    the parameters visible inside.
    """

    __slots__ = ("prefix", "pkey", "path", "ports", "depth", "scope")

    def __init__(self, prefix: str, pkey: str, path: tuple[str, ...], ports: dict[str, str],
                 depth: int, scope: ParameterScope) -> None:
        self.prefix = prefix
        self.pkey = pkey
        self.path = path
        self.ports = ports
        self.depth = depth
        self.scope = scope


class SubcircuitFlattener:
    """Expands a `LoadedNetlist` into its flat elements."""

    def __init__(self, loaded: LoadedNetlist, options: ReaderOptions,
                 keep_as_part: Callable[[str], bool] | None) -> None:
        self.loaded = loaded
        self.options = options
        self.keep_as_part = keep_as_part
        self.parameters = ParameterEvaluator(options)
        self.elements: list[Element] = []
        self.seen: dict[str, Element | ElementSpec] = {}   # designator key -> first holder
        self.canon: dict[str, str] = {}      # net key -> flat net, first-seen spelling
        self.top_nets: dict[str, str] = {}   # top-level node as written -> flat net
        self.net_keys: dict[str, str] = {}   # node as written -> case-folded key
        self.globals = loaded.globals
        self.kept: dict[str, bool] = {}      # subcircuit key -> what keep_as_part said
        self.limit = options.max_elements

    def run(self) -> list[Element]:
        self.check_size()
        top = self.loaded.top
        scope = self.parameters.group(top.params, self.parameters.empty, {})
        self.expand(top, Placement("", "", (), {}, 0, scope), [])
        return self.elements

    # ------------------------------------------------------------ size

    def size(self, definition: SubcircuitDefinition, sizes: dict[tuple[str, ...], int],
             depth: int) -> int:
        """Elements `definition` flattens to (recursion and too-deep nesting count 0:
        expansion reports those with their own messages)."""
        known = sizes.get(definition.key)
        if known is not None:
            return known
        if depth > self.options.max_subckt_depth:
            return 0
        sizes[definition.key] = 0  # a recursive reference counts nothing
        total = 0
        for spec in definition.body:
            total += self.spec_size(definition, spec, sizes, depth)
        sizes[definition.key] = total
        return total

    def spec_size(self, parent: SubcircuitDefinition, spec: BodyRecord,
                  sizes: dict[tuple[str, ...], int], depth: int) -> int:
        child = self.expanded_definition(parent, spec)
        if child is None:
            return 1
        return 1 + self.size(child, sizes, depth + 1)

    def check_size(self) -> None:
        """Refuse, before building anything, a hierarchy that flattens past the limit
        (ten levels of ten instances is 10**10 elements: count, never build them)."""
        sizes: dict[tuple[str, ...], int] = {}   # definition key -> elements
        top = self.loaded.top
        total = 0
        for spec in top.body:
            total += self.spec_size(top, spec, sizes, 0)
            if total > self.limit:
                detail = (f" ({spec.designator} alone expands to "
                          f"{self.spec_size(top, spec, sizes, 0)})" if spec.kind == "X" else "")
                raise spec.line.error(f"more than {self.limit} elements after flattening, "
                                      f"counting subcircuit instances{detail} "
                                      + limit_hint("max_elements"), cls=LimitError)

    # ------------------------------------------------------------ expansion

    def expand(self, definition: SubcircuitDefinition, at: Placement,
               stack: list[SubcircuitDefinition]) -> None:
        """Expand `definition`'s body placed `at`; `stack` holds the definitions
        being expanded around it (for recursion)."""
        # The hot loop of the reader: plain lines (most of a board) are flattened
        # inline, net lookups and the duplicate check included (profiled: 2x faster).
        seen = self.seen
        append = self.elements.append
        top_nets = self.top_nets
        prefix, pkey, ports, path = at.prefix, at.pkey, at.ports, at.path
        body = definition.body
        # The top level is expanded once: its records are let go as they are
        # used, so the plain lines and the elements are not all held at once.
        consume = len(body) - 1 if definition.line is None else 0
        for position, spec in enumerate(body):
            if position < consume:
                body[position] = None   # type: ignore[call-overload]  # let the record go
            if not isinstance(spec, PlainLine):
                self.expand_spec(definition, spec, at, stack)
                continue
            designator, kind, (name_a, name_b), value, model, number, source = spec
            if prefix:
                designator = prefix + designator
                net_a = self.local_net(name_a, prefix, pkey, ports)
                net_b = self.local_net(name_b, prefix, pkey, ports)
            else:
                net_a = top_nets.get(name_a) or self.top_net(name_a)
                net_b = top_nets.get(name_b) or self.top_net(name_b)
            dkey = designator_key(designator)
            first = seen.get(dkey)
            if first is not None:
                raise _duplicate(spec, designator, first)
            element = Element(designator, kind, (net_a, net_b), value, model, number,
                              NO_PARAMS, None, path, source)
            seen[dkey] = element
            append(element)
        if len(self.elements) > self.limit:
            raise self.limit_error(definition)

    def expand_spec(self, definition: SubcircuitDefinition, spec: ElementSpec, at: Placement,
                    stack: list[SubcircuitDefinition]) -> None:
        if spec.kind == "X":
            self.instance(definition, spec, at, stack)
        else:
            self.flat_element(spec, at)

    def flat_element(self, spec: ElementSpec, at: Placement) -> None:
        """One element line (not X) of a definition, placed `at`."""
        designator = at.prefix + spec.designator
        key = designator_key(designator)
        first = self.seen.get(key)
        if first is not None:
            raise _duplicate(spec, designator, first)
        self.seen[key] = spec
        if spec.kind == "Q":
            resolve_bjt(spec, self.loaded)
        nodes = self.nets(spec, at.prefix, at.pkey, at.ports)
        value = spec.value
        if isinstance(value, Expression):
            value = self.parameters.element_value(spec, at.scope)
        params = self.parameters.element_params(spec, at.scope) if spec.params else NO_PARAMS
        if spec.extra is not None:
            params = dict(params)
            if spec.kind == "K":
                params["inductors"] = tuple(at.prefix + name for name in spec.extra)
            elif spec.kind in "FHW":
                params["control"] = at.prefix + spec.extra
        self.elements.append(Element(designator, spec.kind, nodes, value, spec.model,
                                     spec.location, params, spec.line.text, at.path))

    def limit_error(self, definition: SubcircuitDefinition) -> Exception:
        line = definition.line or definition.body[-1].line
        return line.error(f"more than {self.limit} elements after flattening "
                          + limit_hint("max_elements"), cls=LimitError)

    # ------------------------------------------------------------ instances

    def expanded_definition(self, parent: SubcircuitDefinition,
                            spec: BodyRecord) -> SubcircuitDefinition | None:
        """The definition X line `spec` expands to; None for other lines and for
        X instances that stay parts (undefined, or claimed by `keep_as_part`)."""
        model = spec.model
        if spec.kind != "X" or model is None:
            return None
        definition = parent.lookup(model.casefold())
        if definition is None or self.keep(model):
            return None
        return definition

    def keep(self, name: str) -> bool:
        """True when the `keep_as_part` callback claims subcircuit `name` as a part."""
        callback = self.keep_as_part
        if callback is None:
            return False
        key = name.casefold()
        kept = self.kept.get(key)
        if kept is None:
            kept = self.kept[key] = bool(callback(name))
        return kept

    def instance(self, parent: SubcircuitDefinition, spec: ElementSpec, at: Placement,
                 stack: list[SubcircuitDefinition]) -> None:
        """X line `spec` of `parent`, placed `at`: expanded, or kept as a part."""
        designator = at.prefix + spec.designator
        nets = self.nets(spec, at.prefix, at.pkey, at.ports) if spec.nodes else ()
        definition = self.expanded_definition(parent, spec)
        if definition is None:
            self.add_part(spec, designator, nets, at)
            return
        self.check_instance(definition, spec, designator, nets, at.depth, stack)
        child_ports = {}
        for port_key, net in zip(definition.port_keys, nets, strict=True):
            if port_key in GROUND_NAMES or port_key in self.globals:
                continue  # a `0` or global port stays global (ngspice behaviour)
            child_ports[port_key] = net
        if len(self.elements) > self.limit:
            raise spec.line.error(f"more than {self.limit} elements after flattening "
                                  + limit_hint("max_elements"), cls=LimitError)
        child_scope = self.child_scope(definition, spec, at.scope)
        self.seen_instance(spec, designator)
        stack.append(definition)
        self.expand(definition, Placement(designator + "/", at.pkey + spec.dkey + "/",
                                          at.path + (designator,), child_ports, at.depth + 1,
                                          child_scope), stack)
        stack.pop()

    def check_instance(self, definition: SubcircuitDefinition, spec: ElementSpec,
                       designator: str, nets: tuple[str, ...],
                       depth: int, stack: list[SubcircuitDefinition]) -> None:
        """Refuse recursion, nesting past the limit and a port count mismatch."""
        if definition in stack:
            chain = " -> ".join(d.name for d in stack[stack.index(definition):] + [definition])
            raise spec.line.error(f"subcircuit recursion: {chain}")
        limit = self.options.max_subckt_depth
        if depth >= limit:
            raise spec.line.error(f"subcircuit instances nest deeper than {limit} "
                                  + limit_hint("max_subckt_depth"), cls=LimitError)
        if len(nets) != len(definition.ports):
            raise spec.line.error(
                f"{designator} connects {len(nets)} node(s) but subcircuit {definition.name} "
                f"has {len(definition.ports)} port(s) (defined at {definition.where})",
                len(spec.designator))

    def child_scope(self, definition: SubcircuitDefinition, spec: ElementSpec,
                    scope: ParameterScope) -> ParameterScope:
        """The parameters inside an instance of `definition` placed in `scope`."""
        if not definition.defaults and not definition.params and not spec.params:
            return scope
        fixed, undeclared = self.parameters.overrides(definition, spec, scope)
        for written in undeclared:
            self.loaded.warn(f"{spec.designator}: parameter {written} is not declared by "
                             f"subcircuit {definition.name}; ignored", spec.line)
        return self.parameters.instance_scope(definition, scope, fixed)

    def add_part(self, spec: ElementSpec, designator: str, nets: tuple[str, ...],
                 at: Placement) -> None:
        """An X instance kept as a part: its parameters evaluated where numeric."""
        params = {} if spec.params else NO_PARAMS
        for key, (_, raw) in spec.params.items():
            params[key] = self.parameters.instance_value(spec, raw, at.scope)[0] \
                if (raw[:1] in "{'" or finite_number(raw) is not None) else raw
        element = Element(designator, "X", nets, None, spec.model, spec.location, params,
                          spec.line.text, at.path)
        key = designator_key(designator)
        first = self.seen.get(key)
        if first is not None:
            raise _duplicate(spec, designator, first)
        self.seen[key] = spec
        self.elements.append(element)
        if len(self.elements) > self.limit:
            raise spec.line.error(f"more than {self.limit} elements after flattening "
                                  + limit_hint("max_elements"), cls=LimitError)

    def seen_instance(self, spec: ElementSpec, designator: str) -> None:
        """Instance names share the designator space of elements (ngspice does too)."""
        key = designator_key(designator)
        first = self.seen.get(key)
        if first is not None:
            raise _duplicate(spec, designator, first)
        self.seen[key] = spec

    # ------------------------------------------------------------ nets

    def node_plan(self, spec: ElementSpec) -> tuple[tuple[int, str, str], ...]:
        """Per node: (_GROUND, "0", key), (_GLOBAL, name, key) or (_LOCAL, name, key)."""
        plan = []
        for name, key in zip(spec.nodes, spec.nkeys, strict=True):
            if key in GROUND_NAMES:
                plan.append((_GROUND, "0", key))
            elif key in self.globals:
                plan.append((_GLOBAL, name, key))
            else:
                plan.append((_LOCAL, name, key))
        return tuple(plan)

    def nets(self, spec: ElementSpec, prefix: str, pkey: str, ports: dict[str, str]) -> tuple[str, ...]:
        """The flat nets of `spec`'s nodes inside the instance at `prefix`."""
        plan = spec.plan
        if plan is None:
            plan = spec.plan = self.node_plan(spec)
        canon = self.canon
        out = []
        for how, name, key in plan:
            if how == _GROUND:
                out.append("0")
                continue
            if how == _LOCAL:
                mapped = ports.get(key)
                if mapped is not None:
                    out.append(mapped)
                    continue
                name = prefix + name
                key = pkey + key
            got = canon.get(key)
            if got is None:
                canon[key] = got = name
            out.append(got)
        return tuple(out)

    def top_net(self, name: str) -> str:
        """The flat net of top-level node `name`, remembered per spelling."""
        key = name.casefold()
        net = "0" if key in GROUND_NAMES else self.canon.setdefault(key, name)
        self.top_nets[name] = net
        return net

    def local_net(self, name: str, prefix: str, pkey: str, ports: dict[str, str]) -> str:
        """The flat net of node `name` of a plain line inside an instance."""
        key = self.net_keys.get(name)
        if key is None:
            key = self.net_keys[name] = name.casefold()
        if key in GROUND_NAMES:
            return "0"
        if key in self.globals:
            net = self.canon.get(key)
            if net is None:
                net = self.canon[key] = name
            return net
        port_net = ports.get(key)
        if port_net is not None:
            return port_net
        full_key = pkey + key
        local = self.canon.get(full_key)
        if local is None:
            local = self.canon[full_key] = prefix + name
        return local
