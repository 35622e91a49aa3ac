"""Property tests: structure-aware generated and mutated netlists, configs (with
waivers), baselines and annotations give a clean result or a located DrcError,
never another exception.

Netlists are built from statement generators (elements of every letter the
reader knows, subcircuit blocks, instances, parameters, expressions,
includes, annotations) and then mutated byte-wise, so most examples are
nearly valid and reach deep into the reader, the classifier and the rules.
The whole pipeline runs in-process (pipeline.check_board_in_memory). Example
counts are kept modest so the suite stays fast.
"""

from __future__ import annotations

import json

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from drc.config.annotations import parse_annotations
from drc.errors import DrcError
from drc.gate.baseline import load_baseline
from drc.gate.decision import apply_baseline
from drc.pipeline import CheckOptions, check_board_in_memory, load_config_file

SETTINGS = settings(max_examples=120, deadline=None, derandomize=True,
                    suppress_health_check=[HealthCheck.function_scoped_fixture,
                                           HealthCheck.too_slow, HealthCheck.data_too_large])
OPTIONS = CheckOptions(propose_fixes=False,
                       reader_limits=(("max_elements", 20_000), ("max_subckt_depth", 8)))

# ---------------------------------------------------------------- netlists

NODES = st.sampled_from(["0", "gnd", "vcc", "+5V", "in", "out", "a", "b", "Net-(SW1-Pad1)",
                         "n$1", "k"])
NUMBERS = st.sampled_from(["1k", "4k7", "10k", "1meg", "1M", "100n", "1u", "0", "-1", "1e3",
                           "2R2", "0.1µ", "1e400", "5", "3.3", "1f", "nan", "inf", "1k-2"])
EXPRS = st.sampled_from(["{p}", "{p*2}", "{q+1}", "{(p}", "{p/0}", "{sqrt(p)}", "{pow(2,p)}",
                         "{max(p,q,1)}", "{10**10**10}", "'p*3'", "{-p}", "{undefined}",
                         "{__import__('os')}", "{p^q}"])
VALUES = st.one_of(NUMBERS, EXPRS)
PARTS = st.sampled_from(["TACTILE", "TOGGLE", "SN74HC14N", "74HC14", "CD40106B", "KEY",
                         "SUB", "D1N4148", "SW", "REED"])


@st.composite
def element(draw) -> str:
    letter = draw(st.sampled_from("RCLSXVDQKBEIWMT"))
    name = f"{letter}{draw(st.integers(0, 30))}"
    nodes = " ".join(draw(st.lists(NODES, min_size=0, max_size=15)))
    tail = draw(st.one_of(VALUES, PARTS, st.just(""), st.just("DC 5"), st.just("r=1k"),
                          st.just("params: r=2k"), st.just("PULSE(0 5 1n)")))
    return f"{name} {nodes} {tail}".rstrip()


@st.composite
def statement(draw) -> str:
    kind = draw(st.integers(0, 9))
    if kind <= 4:
        return draw(element())
    if kind == 5:
        key = draw(st.sampled_from(["p", "q", "r"]))
        return f".param {key}={draw(VALUES)}"
    if kind == 6:
        body = "\n".join(draw(st.lists(element(), max_size=4)))
        ports = " ".join(draw(st.lists(NODES, min_size=1, max_size=4, unique=True)))
        return f".subckt {draw(PARTS)} {ports}\n{body}\n.ends"
    if kind == 7:
        return draw(st.sampled_from([".include missing.inc", ".include ../x.cir",
                                     ".include /etc/hostname", ".lib lib.inc fast", ".end",
                                     ".model D1N4148 D(IS=1n)", ".global vcc", ".control\nrun",
                                     ".endc", ".tran 1n 1u", "+ 1k", ".include self.cir"]))
    if kind == 8:
        return draw(st.sampled_from([
            "*@drc contact SW* class=toggle", "*@drc contact SW1 bounce=soon",
            "*@drc debounce XU1:1 20ms", "*@drc debounce XU1 20ms",
            "*@drc waive bounce-window SW1 : ok", "*@drc waive x", "*@drc", "*@drc contact"]))
    return draw(st.sampled_from(["* comment", "", "R1 a b 1k ; note", "V1 vcc 0 DC 5",
                                 "SW1 in 0 TACTILE", "R9 vcc in 10k", "C9 in 0 100n",
                                 "XU1 in out 0 0 0 0 0 0 0 0 0 0 0 vcc SN74HC14N"]))


@st.composite
def netlist(draw) -> bytes:
    text = "title\n" + "\n".join(draw(st.lists(statement(), min_size=1, max_size=25))) + "\n"
    data = bytearray(text.encode("utf-8"))
    for _ in range(draw(st.integers(0, 3))):  # byte-wise mutation of a valid-looking deck
        where = draw(st.integers(0, len(data)))
        action = draw(st.integers(0, 3))
        if action == 0:
            data[where:where] = draw(st.sampled_from(
                [b"{", b"}", b"(", b"=", b"*", b"\n+ ", b"'", b"\x00", b"\xff", b"\r", b",",
                 b"\xfe\xff", b"\xef\xbb\xbf", b"\\", b"..", b" ; ", b"\t"]))
        elif action == 1:
            del data[where:where + draw(st.integers(1, 12))]
        elif action == 2:
            data[where:where + 1] = bytes([draw(st.integers(0, 255))])
        else:
            data[where:where] = data[max(0, where - 20):where]
    if draw(st.booleans()) and draw(st.booleans()):
        data = bytearray(b"\xff\xfe" + bytes(data).decode("utf-8", "replace").encode("utf-16-le"))
    return bytes(data)


def _located(exc: DrcError) -> None:
    assert exc.location is not None, exc.message
    assert exc.location.file, exc.message
    exc.render()


@SETTINGS
@given(data=netlist())
def test_netlists_check_cleanly_or_fail_located(tmp_path_factory, data):
    folder = tmp_path_factory.mktemp("net")
    (folder / "lib.inc").write_text(".lib fast\nR1 a b 1k\n.endl\n")
    board = folder / "self.cir"
    board.write_bytes(data)
    try:
        check_board_in_memory(board, OPTIONS)
    except DrcError as exc:
        _located(exc)
    assert board.read_bytes() == data  # input never modified


# ---------------------------------------------------------------- configs and waivers

SCALARS = st.one_of(st.sampled_from(["5 ms", "3.3 V", "10 kΩ", "5 %", "E24", "error", "SW*",
                                     "tactile", "HC", "up", "SPDT", "2026-01-01", "", "nan ms",
                                     "1e999 V", "-5 V", "__import__('os')", "{p}", "5"]),
                    st.integers(-3, 40), st.floats(allow_nan=True, allow_infinity=True),
                    st.booleans())
KEYS = st.sampled_from(["fail-level", "default-bounce", "eseries", "only-rules", "skip-rules", "include",
                        "net", "voltage", "tolerance", "designator", "class", "bounce", "form",
                        "part-number", "family", "supply", "supply-pins", "pin", "pull",
                        "pull-min", "pull-max", "debounce", "schmitt", "rule", "parts", "parts-any",
                        "parts-all", "reason",
                        "author", "expires", "board", "bounce-margin", "pullup-waste", "bogus"])
TABLES = st.sampled_from(["tolerances", "limits", "severity", "rails", "contacts", "parts",
                          "mcu", "mcu.pins", "waivers"])


def _toml_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return {float("inf"): "inf", float("-inf"): "-inf"}.get(value, "nan" if value != value
                                                             else repr(value))
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    return json.dumps(value, ensure_ascii=False)


@st.composite
def config_text(draw) -> bytes:
    lines = []
    for _ in range(draw(st.integers(0, 3))):
        lines.append(f"{draw(KEYS)} = {_toml_value(draw(st.one_of(SCALARS, st.lists(SCALARS, max_size=3))))}")
    for _ in range(draw(st.integers(0, 4))):
        table = draw(TABLES)
        array = table in ("rails", "contacts", "parts", "mcu", "mcu.pins", "waivers")
        lines.append(f"[[{table}]]" if array else f"[{table}]")
        for _ in range(draw(st.integers(0, 6))):
            value = draw(st.one_of(SCALARS, st.lists(SCALARS, max_size=3)))
            lines.append(f"{draw(KEYS)} = {_toml_value(value)}")
    data = bytearray("\n".join(lines).encode("utf-8") + b"\n")
    for _ in range(draw(st.integers(0, 2))):
        where = draw(st.integers(0, len(data)))
        data[where:where] = draw(st.sampled_from([b"[", b"]", b"=", b"\"", b"\n", b"\x00",
                                                  b"\xe9", b"{", b"#", b"'''"]))
    return bytes(data)


@SETTINGS
@given(data=config_text())
def test_configs_and_waivers_load_or_fail_located(tmp_path_factory, data):
    path = tmp_path_factory.mktemp("cfg") / "drc.toml"
    path.write_bytes(data)
    try:
        load_config_file(path)
    except DrcError as exc:
        _located(exc)
    assert path.read_bytes() == data


@SETTINGS
@given(data=config_text(), board=st.sampled_from([
    "title\nV1 vcc 0 DC 5\nR1 vcc in 10k\nC1 in 0 100n\nSW1 in 0 TACTILE\n"
    "XU1 in out 0 0 0 0 0 0 0 0 0 0 0 vcc SN74HC14N\n",
    "title\nV1 vcc 0 DC 5\nR1 vcc in 1meg\nSW1 in 0\nSW2 in vcc\n"
    "XU1 in out 0 0 0 0 0 0 0 0 0 0 0 vcc 74HC04\n"]))
def test_configs_drive_a_whole_check(tmp_path_factory, data, board):
    folder = tmp_path_factory.mktemp("cfgrun")
    (folder / "drc.toml").write_bytes(data)
    (folder / "b.cir").write_text(board)
    try:
        check_board_in_memory(folder / "b.cir", OPTIONS)
    except DrcError as exc:
        _located(exc)


# ---------------------------------------------------------------- baselines

JSONISH = st.recursive(
    st.one_of(st.none(), st.booleans(), st.integers(), st.floats(), st.text(max_size=8),
              st.sampled_from(["b.cir", "bounce-window", "SW1", "error", "drc-baseline/1"])),
    lambda children: st.one_of(st.lists(children, max_size=4),
                               st.dictionaries(st.sampled_from(
                                   ["format", "entries", "board", "rule", "contact", "receiver",
                                    "parts", "severity", "message", "x"]), children, max_size=6)),
    max_leaves=20)


@st.composite
def baseline_bytes(draw) -> bytes:
    entries = draw(st.lists(st.one_of(JSONISH, st.fixed_dictionaries(
        {"board": st.sampled_from(["b.cir", "../b.cir", "/b.cir", ""]),
         "rule": st.sampled_from(["bounce-window", "x"]),
         "parts": st.lists(st.sampled_from(["SW1", "R1", "*"]), max_size=3)},
        optional={"severity": JSONISH, "contact": JSONISH, "receiver": JSONISH,
                  "message": JSONISH})), max_size=4))
    document = draw(st.one_of(JSONISH, st.just({"format": "drc-baseline/1", "entries": entries})))
    data = bytearray(json.dumps(document).encode())
    if draw(st.booleans()):
        where = draw(st.integers(0, len(data)))
        data[where:where] = draw(st.sampled_from([b"{", b"]", b"\xff", b"\x00", b"\xef\xbb\xbf"]))
    return bytes(data)


@SETTINGS
@given(data=baseline_bytes())
def test_baselines_load_or_fail_located(tmp_path_factory, data):
    from tests.gate.builders import finding  # a plausible finding to match against
    path = tmp_path_factory.mktemp("base") / "base.json"
    path.write_bytes(data)
    try:
        baseline = load_baseline(path)
    except DrcError as exc:
        _located(exc)
        return
    apply_baseline([finding()], baseline, str(path.parent / "b.cir"))


# ---------------------------------------------------------------- annotations

@SETTINGS
@given(lines=st.lists(st.one_of(
    st.text(max_size=30).map(lambda t: "*@drc " + t),
    st.sampled_from(["*@drc contact SW* class=toggle bounce=5ms form=spdt",
                     "*@drc debounce U1:3 1e999 s", "*@drc waive r P : ", "*@drc waive r P :x",
                     "  *@drc debounce U1:3 nan ms", "*@drc contact SW1 =", "*@drc\u2028x"])),
    max_size=6))
def test_annotations_parse_or_fail_located(lines):
    text = "title\n" + "\n".join(lines) + "\n"
    try:
        parse_annotations(text, "b.cir")
    except DrcError as exc:
        _located(exc)
        assert exc.location.line >= 2
