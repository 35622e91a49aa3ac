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

An element whose value or parameters cannot be evaluated in its scope (an
undefined parameter, a division by zero), and an X instance that cannot be
expanded (its port count differs from its subcircuit's, a parameter of its
line cannot be evaluated), is kept unevaluated with its `problem` and a
located warning per flattened element (alike warnings are grouped by the
reader).
"""

from __future__ import annotations

from collections.abc import Callable

from drc.errors import LimitError, NetlistError, SourceLocation
from drc.netlist.element_lines import problem_text, relay_hint, resolve_nodes
from drc.netlist.elements import NO_PARAMS, Element, Value
from drc.netlist.expressions import Expression
from drc.netlist.lines import limit_hint
from drc.netlist.options import ReaderOptions
from drc.netlist.parameters import ParameterEvaluator, ParameterScope
from drc.netlist.specs import (
    BodyRecord,
    Conditional,
    ElementSpec,
    LoadedNetlist,
    PlainLine,
    SubcircuitDefinition,
)
from drc.netlist.tokens import GROUND_NAMES, finite_number, strip_quotes

# Element letters whose model names a `.model` card (warned about when missing;
# a 2-node S line's part name is no card, and a 4-node S is a simulated switch).
MODEL_KINDS = frozenset("DQMJZWAUOYPN")

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


def needs_model_card(kind: str, nodes: tuple[str, ...]) -> bool:
    """True when an element of `kind` names a `.model` card (a 4-node S line too)."""
    return kind in MODEL_KINDS or (kind == "S" and len(nodes) == 4)


def inductor_keys(body: list[BodyRecord]) -> set[str]:
    """The case-folded designators of the inductors in `body` (every `.if` branch)."""
    out: set[str] = set()
    for record in body:
        if isinstance(record, Conditional):
            for branch in record.branches:
                out |= inductor_keys(branch.body)
        elif record is not None and record.kind == "L":
            out.add(record.designator.casefold())
    return out


def _as_spec(plain: PlainLine) -> ElementSpec:
    """The general record of a plain line (for the rare places that need one)."""
    designator, kind, nodes, value, model, _number, _source = plain
    return ElementSpec(designator, kind, nodes, value, model, {}, plain.line)


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
        self.parameters = ParameterEvaluator(options, loaded.warn, loaded.functions)
        self.elements: list[Element] = []
        self.seen: dict[str, Element | ElementSpec] = {}   # designator key -> first holder
        self.canon: dict[str, str] = {}      # net key -> flat net, first-seen spelling
        self.top_nets: dict[str, str] = {}   # top-level node as written -> flat net
        self.net_keys: dict[str, str] = {}   # node as written -> case-folded key
        self.globals = loaded.globals
        self.kept: dict[str, bool] = {}      # subcircuit key -> what keep_as_part said
        self.inductors: dict[tuple[str, ...], set[str]] = {}   # definition -> L designators
        self.limit = options.max_elements

    def run(self) -> list[Element]:
        self.check_size()
        top = self.loaded.top
        if self.loaded.couplings:   # the top body is let go while expanded: look first
            self.inductors[top.key] = inductor_keys(top.body)
        scope = self.parameters.group(top.params, self.parameters.empty, {}, top.conditionals)
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
        if isinstance(spec, Conditional):   # its largest branch
            return max((sum(self.spec_size(parent, record, sizes, depth) for record in b.body)
                        for b in spec.branches), default=0)
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
                          f"{self.spec_size(top, spec, sizes, 0)})"
                          if not isinstance(spec, Conditional) and spec.kind == "X" else "")
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

    def expand_spec(self, definition: SubcircuitDefinition, spec: ElementSpec | Conditional,
                    at: Placement, stack: list[SubcircuitDefinition]) -> None:
        if isinstance(spec, Conditional):
            self.expand_conditional(definition, spec, at, stack)
        elif spec.kind == "X":
            self.instance(definition, spec, at, stack)
        else:
            self.flat_element(spec, at, definition)

    def expand_conditional(self, definition: SubcircuitDefinition, block: Conditional,
                           at: Placement, stack: list[SubcircuitDefinition]) -> None:
        """The records of the branch of `block` that its scope chose."""
        index = at.scope.choices.get(block.serial)
        if index is None:
            index = self.parameters.choose(block, at.scope.values)
        if index < 0:
            return
        for record in block.branches[index].body:
            if isinstance(record, PlainLine):
                self.expand_spec(definition, _as_spec(record), at, stack)
            else:
                self.expand_spec(definition, record, at, stack)

    def flat_element(self, spec: ElementSpec, at: Placement,
                     definition: SubcircuitDefinition) -> None:
        """One element line (not X) of `definition`, placed `at`."""
        designator = at.prefix + spec.designator
        key = designator_key(designator)
        first = self.seen.get(key)
        if first is not None:
            raise _duplicate(spec, designator, first)
        self.seen[key] = spec
        if spec.kind in "QM" and not spec.nodes and spec.problem is None:
            self.split_nodes(spec)
        problem, where = spec.problem, spec.problem_at
        if spec.kind == "K" and problem is None:
            problem = self.coupling_problem(definition, spec)
        nodes = self.nets(spec, at.prefix, at.pkey, at.ports)
        if spec.kind == "K" and problem is not None and spec.extra \
                and any(name[:1] not in "lL" for name in spec.extra):
            # not a coupling after all (a relay written as K?): keep the nets it names
            named = ElementSpec(spec.designator, "K", tuple(spec.extra), None, None, {},
                                spec.line)
            nodes = self.nets(named, at.prefix, at.pkey, at.ports)
        value: Value | None = None
        params = NO_PARAMS
        if problem is None:
            try:
                value, params = self.evaluated(spec, at)
            except LimitError:
                raise
            except NetlistError as exc:
                problem, where = exc.message, exc.location
        element = Element(designator, spec.kind, nodes, value, spec.model, spec.location, params,
                          spec.line.text, at.path, problem=problem)
        self.elements.append(element)
        if problem is not None:
            self.unevaluated(element, problem, where)
        elif spec.model is not None and needs_model_card(spec.kind, nodes) \
                and spec.model.casefold() not in self.loaded.models:
            self.loaded.warn(f"{designator}: model {spec.model} is not defined in the netlist "
                             "or the files it reads (a library not read?)", spec.location,
                             group="model-not-defined")

    def split_nodes(self, spec: ElementSpec) -> None:
        """A Q or M line's nodes and model (drc/netlist/element_lines.py
        resolve_nodes); a line that does not split keeps its first nodes and a
        problem."""
        try:
            resolve_nodes(spec, self.loaded)
        except NetlistError as exc:
            spec.problem = problem_text(exc.message, spec.designator)
            spec.problem_at = exc.location
            if spec.model is None:
                spec.nodes = tuple(n for n in spec.extra[:3] if isinstance(n, str))
            spec.nkeys = tuple(n.casefold() for n in spec.nodes)

    def evaluated(self, spec: ElementSpec, at: Placement) -> tuple[Value | None, dict]:
        """The element's value and parameters evaluated in its scope (NetlistError
        when they cannot be), with what its letter names beyond its nodes."""
        written = spec.value
        value = self.parameters.element_value(spec, at.scope) \
            if isinstance(written, Expression) else written
        params = self.parameters.element_params(spec, at.scope) if spec.params else NO_PARAMS
        if spec.extra is not None and spec.kind in "KFHW":
            params = dict(params)
            if spec.kind == "K":
                params["inductors"] = tuple(at.prefix + name for name in spec.extra)
            else:
                params["control"] = at.prefix + spec.extra
        return value, params

    def coupling_problem(self, definition: SubcircuitDefinition, spec: ElementSpec) -> str | None:
        """Why K line `spec` is no coupling (a name that is no inductor of its
        definition), or None."""
        inductors = self.inductors.get(definition.key)
        if inductors is None:
            inductors = self.inductors[definition.key] = inductor_keys(definition.body)
        missing = [name for name in spec.extra if name.casefold() not in inductors]
        if not missing:
            return None
        hint = relay_hint(spec.designator) \
            if any(name[:1] not in "lL" for name in spec.extra) else ""
        what = "is not an inductor" if len(missing) == 1 else "are not inductors"
        return (f"{', '.join(missing)} {what} of this netlist; a K line couples inductors "
                f"(`K name L1 L2 coupling`){hint}")

    def unevaluated(self, element: Element, problem: str, where: SourceLocation | None) -> None:
        """The located warning of an element kept unevaluated."""
        self.loaded.warn(f"{element.designator}: {problem}; the element is kept but not "
                         "evaluated", where or element.location, group=f"problem:{problem}")

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
        if definition is None or spec.problem is not None:
            self.add_part(spec, designator, nets, at)
            return
        self.check_instance(definition, spec, designator, nets, at.depth, stack)
        if len(nets) != len(definition.ports):
            self.add_part(spec, designator, nets, at, (
                f"connects {len(nets)} node(s) but subcircuit {definition.name} has "
                f"{len(definition.ports)} port(s) (defined at {definition.where})"))
            return
        try:
            child_scope = self.child_scope(definition, spec, at.scope)
        except LimitError:
            raise
        except NetlistError as exc:
            self.add_part(spec, designator, nets, at, exc.message, exc.location)
            return
        child_ports = {}
        for port_key, net in zip(definition.port_keys, nets, strict=True):
            if port_key in GROUND_NAMES or port_key in self.globals:
                continue  # a `0` or global port stays global (ngspice behaviour)
            child_ports[port_key] = net
        if len(self.elements) > self.limit:
            raise spec.line.error(f"more than {self.limit} elements after flattening "
                                  + limit_hint("max_elements"), cls=LimitError)
        self.seen_instance(spec, designator)
        stack.append(definition)
        self.expand(definition, Placement(designator + "/", at.pkey + spec.dkey + "/",
                                          at.path + (designator,), child_ports, at.depth + 1,
                                          child_scope), stack)
        stack.pop()

    def check_instance(self, definition: SubcircuitDefinition, spec: ElementSpec,
                       designator: str, nets: tuple[str, ...],
                       depth: int, stack: list[SubcircuitDefinition]) -> None:
        """Refuse recursion and nesting past the limit."""
        if definition in stack:
            chain = " -> ".join(d.name for d in stack[stack.index(definition):] + [definition])
            raise spec.line.error(f"subcircuit recursion: {chain}")
        limit = self.options.max_subckt_depth
        if depth >= limit:
            raise spec.line.error(f"subcircuit instances nest deeper than {limit} "
                                  + limit_hint("max_subckt_depth"), cls=LimitError)

    def child_scope(self, definition: SubcircuitDefinition, spec: ElementSpec,
                    scope: ParameterScope) -> ParameterScope:
        """The parameters inside an instance of `definition` placed in `scope`."""
        if not definition.defaults and not definition.params and not spec.params \
                and not definition.conditionals:
            return scope
        fixed, undeclared = self.parameters.overrides(definition, spec, scope)
        for written in undeclared:
            self.loaded.warn(f"{spec.designator}: parameter {written} is not declared by "
                             f"subcircuit {definition.name}; ignored", spec.line)
        return self.parameters.instance_scope(definition, scope, fixed)

    def add_part(self, spec: ElementSpec, designator: str, nets: tuple[str, ...],
                 at: Placement, problem: str | None = None,
                 where: SourceLocation | None = None) -> None:
        """An X instance kept as a part: its parameters evaluated where numeric.
        With a `problem` (or one of its line), it is kept unexpanded and unevaluated."""
        params: dict = {} if spec.params and spec.problem is None else NO_PARAMS
        problem = problem or spec.problem
        where = where or spec.problem_at
        if problem is None:
            try:
                for key, (_, raw) in spec.params.items():
                    params[key] = self.parameters.instance_value(spec, raw, at.scope)[0] \
                        if (raw[:1] in "{'" or finite_number(raw) is not None) \
                        else strip_quotes(raw)
            except LimitError:
                raise
            except NetlistError as exc:
                problem, where, params = exc.message, exc.location, NO_PARAMS
        element = Element(designator, "X", nets, None, spec.model, spec.location, params,
                          spec.line.text, at.path, problem=problem)
        key = designator_key(designator)
        first = self.seen.get(key)
        if first is not None:
            raise _duplicate(spec, designator, first)
        self.seen[key] = spec
        self.elements.append(element)
        if problem is not None:
            self.unevaluated(element, problem, where)
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
