"""Stage analyses reused by value: a stage seen before is not solved again.

Identical stages are common: a keypad repeats one filter sixteen times under
other designators, and an archive holds copies of one board. The analysis of
a stage depends only on its circuit's values and its receiver's electrical
data (`analyse_stages` reads nothing else), so a stage whose circuit equals
one already analysed, once designators and internal net names are set aside,
gets that result again, re-bound to its own stage with the designators of its
own parts in the corner figures.

The key is the circuit with each part named by its position and each
internal net by its order of appearance (rails and ground keep their names,
since their voltages are values), the stage kind, and the receiver data. A
result whose notes name a part or an internal net of the stage it was
computed for is reused only for a stage with the very same names (the note
could not be renamed safely). The results live in one bounded `drc.caching`
memo for the process, so a run over an archive solves each design once.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import fields, replace

from drc.analysis.receiver import ReceiverElectrical
from drc.analysis.results import EdgeResult, StageResult
from drc.board.stage import Stage, StageCircuit
from drc.caching import Memo

GROUND = "0"

# (canonical circuit, kind, receiver) -> (result, names of the stage it was computed for)
_RESULTS: Memo[tuple, tuple[StageResult, tuple[str, ...]]] = Memo("stage-results", 50_000)


def _names(circuit: StageCircuit) -> tuple[str, ...]:
    """Designators of the parts, then internal (non-rail, non-ground) nets, in order,
    then the receiver inputs loading the nets (the stage's own first)."""
    rails = {r.net for r in circuit.rails}
    parts = tuple(p.designator for group in (circuit.resistors, circuit.capacitors, circuit.diodes)
                  for p in group)
    nets = tuple(n for n in circuit.nodes() if n not in rails and n != GROUND)
    return parts + nets + tuple(load.ref for load in circuit.loads)


# Fields that hold a part's own name or a net: replaced by codes in the key.
_NAME_FIELDS = frozenset(("designator", "ref"))
_NET_FIELDS = frozenset(("a", "b", "anode", "cathode", "net", "node"))


def _field_names(kind: type) -> tuple[str, ...]:
    names = _FIELDS.get(kind)
    if names is None:
        names = _FIELDS.put(kind, tuple(f.name for f in fields(kind)))
    return names


_FIELDS: Memo[type, tuple[str, ...]] = Memo("record-fields", 256)


def _coded(part: object, code: dict[str, str]) -> tuple:
    """Every field of a part record, names and nets replaced by their codes (a new
    field joins the key by itself)."""
    return (type(part),) + tuple(code.get(value, value) if name in _NAME_FIELDS or name in _NET_FIELDS else value
                                 for name in _field_names(type(part)) for value in (getattr(part, name),))


def canonical_key(stage: Stage, rx: ReceiverElectrical) -> tuple | None:
    """What the stage's analysis depends on, free of its names; None when its names
    are not distinct (a rename would be ambiguous)."""
    circuit = stage.circuit
    names = _names(circuit)
    if len(set(names)) != len(names):
        return None
    code = {name: f"#{i}" for i, name in enumerate(names)}
    parts = tuple(_coded(p, code) for group in (circuit.resistors, circuit.capacitors, circuit.diodes,
                                                 circuit.throws, circuit.loads) for p in group)
    counts = (len(circuit.resistors), len(circuit.capacitors), len(circuit.diodes), len(circuit.throws),
              len(circuit.loads))
    rest = tuple((name, value) for name in _field_names(StageCircuit)
                 if name not in ("resistors", "capacitors", "diodes", "throws", "loads", "receiver_node")
                 for value in (getattr(circuit, name),))
    return (parts, counts, rest, code.get(circuit.receiver_node, circuit.receiver_node), stage.kind, rx)


def _renamed(result: StageResult, source: tuple[str, ...], stage: Stage, names: tuple[str, ...]
             ) -> StageResult | None:
    """`result` (computed for a stage named `source`) for `stage`, whose names are `names`;
    None when a note names the source's parts or nets and the names differ."""
    if source == names:
        return replace(result, stage=stage)
    if any(name in note for note in result.notes for name in source):
        return None
    rename = dict(zip(source, names, strict=True))

    def renamed(k: str) -> str:
        # A parameter of a receiver input is named after it ("leakage:U2:3", "ttl-open:U2:3").
        kind, _, who = k.partition(":")
        return rename.get(k) or (f"{kind}:{rename[who]}" if who in rename else k)

    def corner(values: dict[str, float]) -> dict[str, float]:
        return {renamed(k): v for k, v in values.items()}

    edges: dict[str, EdgeResult] = {
        name: replace(edge, corner_fastest=corner(edge.corner_fastest), corner_slowest=corner(edge.corner_slowest))
        for name, edge in result.edges.items()}
    return replace(result, stage=stage, edges=edges)


def stage_names(stage: Stage) -> tuple[str, ...]:
    """The names a stage's key codes, in the key's order (what a reused figure is renamed from and to)."""
    return _names(stage.circuit)


def renamed_corner(values: dict[str, float], source: tuple[str, ...], names: tuple[str, ...]) -> dict[str, float]:
    """A corner (parameter name -> value) of a stage named `source`, for one named `names`."""
    if source == names:
        return values
    rename = dict(zip(source, names, strict=True))

    def renamed(k: str) -> str:
        kind, _, who = k.partition(":")
        return rename.get(k) or (f"{kind}:{rename[who]}" if who in rename else k)

    return {renamed(k): v for k, v in values.items()}


def analyse_stages_reusing(stages: Sequence[Stage], rx_for: Callable[[Stage], ReceiverElectrical],
                           analyse: Callable[[list[Stage], list[ReceiverElectrical]], list[StageResult]]
                           ) -> list[StageResult]:
    """`analyse(stages, rxs)` for the stages not seen before; the others from the memo.

    analyse: the batch analysis (`analysis.stage_analysis.analyse_stages`), passed
    in so that this module does not import numpy.
    """
    out: list[StageResult | None] = [None] * len(stages)
    todo: list[int] = []
    todo_keys: list[tuple | None] = []
    rxs: list[ReceiverElectrical] = []
    first_of: dict[tuple, int] = {}  # key -> index of the first stage with it in this call
    later: list[tuple[int, int]] = []  # (stage index, index of the stage that will be solved)
    for i, stage in enumerate(stages):
        rx = rx_for(stage)
        key = canonical_key(stage, rx)
        if key is not None:
            known = _RESULTS.get(key)
            if known is not None:
                again = _renamed(known[0], known[1], stage, _names(stage.circuit))
                if again is not None:
                    out[i] = again
                    continue
            elif key in first_of:
                later.append((i, first_of[key]))
                continue
            else:
                first_of[key] = i
        todo.append(i)
        todo_keys.append(key)
        rxs.append(rx)
    if todo:
        solved = analyse([stages[i] for i in todo], rxs)
        for i, key, result in zip(todo, todo_keys, solved, strict=True):
            out[i] = result
            if key is not None and key not in _RESULTS:
                _RESULTS.put(key, (result, _names(stages[i].circuit)))
    for i, source in later:
        first = out[source]
        assert first is not None
        again = _renamed(first, _names(stages[source].circuit), stages[i], _names(stages[i].circuit))
        if again is None:
            again = analyse([stages[i]], [rx_for(stages[i])])[0]
        out[i] = again
    done = [r for r in out if r is not None]
    assert len(done) == len(stages)
    return done
