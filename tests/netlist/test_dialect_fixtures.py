"""Fixture boards of our own for each convention real decks use (issue 12, items 2, 3, 5).

Every deck in tests/netlist/dialects/boards is a small LX-24 board written
from scratch in one convention (library forms, quotes, expressions,
structural habits, devices, couplings, XSPICE, PSpice digital primitives,
simulator libraries, one bad line, many transistors); its comments work the
stage values out by hand (every checked key is the 10k / 47k / 680n stage,
which the demo boards' hand figures show clean against a tactile key on a
74HC14). The `.expected` file beside it lists what the check must give:

    stage KIND CONTACT -> RECEIVER PARTS...   one checked stage and its parts
    SEVERITY RULE CONTACT -> RECEIVER          one finding
    diagnostic LINE WORDS...                   one reader warning, at LINE,
                                               whose message holds WORDS
    diagnostic-note LINE WORDS...              one reader note (a line not read
                                               because the check does not need it)

Each list must match exactly (nothing missing, nothing more). The decks that
ngspice-39 reads (see NGSPICE_READS) are also read by ngspice, and both
readers must find the same elements and nodes: test_fixture_inventory_matches_ngspice.
"""

from __future__ import annotations

import json
import re
from collections import Counter
from pathlib import Path

import pytest

from drc.netlist.reader import read_netlist
from drc.pipeline import CheckOptions, check_board
from tests.netlist.conftest import ngspice_inventory, ngspice_name

FIXTURES = Path(__file__).resolve().parent / "dialects"
BOARDS = sorted((FIXTURES / "boards").glob("*.cir"))
_DIAGNOSTIC = re.compile(r"^.*?:(\d+):\d+: (.*)$", re.S)


def expected(board: Path) -> tuple[Counter, Counter, list[tuple[int, str]]]:
    stages: Counter = Counter()
    findings: Counter = Counter()
    diagnostics: list[tuple[int, str]] = []
    for raw in board.with_suffix(".expected").read_text(encoding="utf-8").splitlines():
        line = " ".join(raw.split("#", 1)[0].split())
        if not line:
            continue
        word, _, rest = line.partition(" ")
        if word == "stage":
            stages[rest] += 1
        elif word in ("diagnostic", "diagnostic-note"):
            number, _, words = rest.partition(" ")
            diagnostics.append((int(number), f"{word}: {words}"))
        else:
            findings[line] += 1
    return stages, findings, diagnostics


def produced(board: Path):
    outcome = check_board(board, CheckOptions(propose_fixes=False))
    report = outcome.report
    assert report.error is None, report.error
    stages = Counter(f"{r.stage.kind} {r.stage.contact.designator} -> {r.stage.receiver.ref} "
                     + " ".join(sorted(r.stage.parts)) for r in report.stages)
    findings = Counter(f"{f.severity} {f.rule} {f.contact} -> {f.receiver}"
                       for f in report.findings if f.suppression is None)
    diagnostics = []
    for word, texts in (("diagnostic", report.diagnostics), ("diagnostic-note", report.notes)):
        for text in texts:
            match = _DIAGNOSTIC.match(text)
            assert match, text
            diagnostics.append((int(match.group(1)), f"{word}: {match.group(2)}"))
    return stages, findings, diagnostics


def _difference(want: Counter, got: Counter) -> str:
    return ("missing:\n  " + "\n  ".join(sorted((want - got).elements())) +
            "\nunexpected:\n  " + "\n  ".join(sorted((got - want).elements())))


@pytest.mark.parametrize("board", BOARDS, ids=lambda p: p.stem)
def test_fixture_gives_its_expected_stages_findings_and_diagnostics(board: Path):
    want_stages, want_findings, want_diagnostics = expected(board)
    stages, findings, diagnostics = produced(board)
    assert stages == want_stages, _difference(want_stages, stages)
    assert findings == want_findings, _difference(want_findings, findings)
    assert len(diagnostics) == len(want_diagnostics), diagnostics
    for (line, words), (got_line, message) in zip(sorted(want_diagnostics), sorted(diagnostics), strict=True):
        kind, _, words = words.partition(": ")
        assert line == got_line and message.startswith(kind + ": ") and words in message, (
            line, kind, words, got_line, message)


def test_every_fixture_is_a_board_that_is_checked():
    # Each convention is shown on a board where at least one key is checked.
    for board in BOARDS:
        assert expected(board)[0], f"{board.name} expects no checked stage"


def test_expression_fixture_values_are_the_hand_figures():
    # expressions.cir's comments: each value worked by hand at nominal, 27 C.
    values = {e.designator: e.value.si for e in read_netlist(FIXTURES / "boards" / "expressions.cir").elements
              if e.kind in "RC"}
    hand = {"R1": 10e3, "R2": 1e3 + 2 * 23e3, "C1": 680e-9, "R4": 10e3, "R3": 2 * 23.5e3,
            "C2": 680e-9 * (1 + 0.0002 * (27 - 27)), "R6": 1e3 + 1e3 + 0, "R7": 1e3}
    assert values == pytest.approx(hand)


def test_library_lines_not_read_are_notes_in_every_format():
    # simulator_libs.cir: three library lines, three paths of different looks,
    # one note each with the same message; the unknown receiver is a warning.
    from tests.cli.helpers import drc_script
    board = FIXTURES / "boards" / "simulator_libs.cir"
    proc = drc_script("check", str(board), "--no-fixes", "--no-cache", "--format", "json")
    assert proc.returncode == 1, proc.stderr   # the PRESET key: unchecked-input
    record = json.loads(proc.stdout)["boards"][0]
    messages = {_DIAGNOSTIC.match(n).group(2).split("`: ", 1)[1] for n in record["notes"]}
    assert len(record["notes"]) == 3 and len(messages) == 1, record["notes"]
    assert [d for d in record["diagnostics"] if "not read" in d] == []
    text = drc_script("check", str(board), "--no-fixes", "--no-cache").stdout
    assert text.count("  note: ") == 3 and text.count("  warning: ") == 1, text
    sarif = json.loads(drc_script("check", str(board), "--no-fixes", "--no-cache",
                                  "--format", "sarif").stdout)
    levels = Counter(n["level"] for n in sarif["runs"][0]["invocations"][0]
                     ["toolExecutionNotifications"])
    assert levels["note"] == 3, levels


def test_the_lib_section_chosen_is_the_one_read(tmp_path):
    # wing_corners.lib: section `fast` (10k / 10k / 100n) gives a release edge
    # of about 3 ms (tau = 20k * 100n = 2 ms, to VT+ of a 74HC14 at 5 V),
    # under the 10 ms bounce of a tactile key: the same board fails with it.
    project = tmp_path / "project"
    import shutil
    shutil.copytree(FIXTURES, project)
    deck = project / "boards" / "lib_forms.cir"
    deck.write_text(deck.read_text(encoding="utf-8").replace("wing_corners.lib typ",
                                                             "wing_corners.lib fast"))
    _, findings, _ = produced(deck)
    assert findings["error bounce-window SW1 -> U1:1"] == 2   # press and release


def test_the_include_sandbox_is_the_project_root(tmp_path):
    # Without the drc.toml the project is the boards folder: ../lib leaves it.
    import shutil
    shutil.copytree(FIXTURES / "boards", tmp_path / "boards")
    shutil.copytree(FIXTURES / "lib", tmp_path / "lib")
    outcome = check_board(tmp_path / "boards" / "lib_forms.cir",
                          CheckOptions(propose_fixes=False))
    assert outcome.report.error is not None and "leaves the project" in outcome.report.error
    (tmp_path / "pyproject.toml").write_text("[tool.drc]\n")
    assert produced(tmp_path / "boards" / "lib_forms.cir")[0]


# ---------------------------------------------------------------- ngspice agreement

# The decks ngspice-39 reads as they are, once every subcircuit they use but do
# not define (the contact classes and logic parts our library knows) is given a
# stand-in definition. The others hold constructs ngspice-39 does not take, each
# named in the deck's comments: `.lib FILE` with one argument and a `.lib NAME
# ... .endl` section in the deck (lib_forms), quotes in instance parameters
# (quoted), K lines that name no inductors (couplings_refused), PSpice digital
# primitives (pspice_digital), library files that are not there (simulator_libs),
# an unknown function (one_bad_line), transistor models not defined
# (transistor_driver).
NGSPICE_READS = ["couplings_xspice", "devices", "expressions", "structure"]


def _stand_ins(netlist) -> tuple[list[str], dict[str, set[str]]]:
    """Stand-in definitions for the subcircuits used but not defined (one
    resistor from each port to ground, so every port node stays a node), and
    for each such instance of ours the names ngspice gives its resistors."""
    undefined: dict[str, int] = {}
    names: dict[str, set[str]] = {}
    for element in netlist.elements:
        if element.kind == "X":
            undefined[element.model] = len(element.nodes)
            name = ngspice_name(element.designator, "X")
            names[name] = {f"r.{name}.rstand{k}" for k in range(1, len(element.nodes) + 1)}
    lines = []
    for model, ports in undefined.items():
        pins = " ".join(f"p{k}" for k in range(1, ports + 1))
        lines.append(f".subckt {model} {pins}")
        lines += [f"Rstand{k} p{k} 0 1g" for k in range(1, ports + 1)]
        lines.append(f".ends {model}")
    return lines, names


_INTERNAL = re.compile(r"\b([a-z0-9_]+_int\d+)\b")


def _normalise_ngspice(names: set[str], listing: str, ours: set[str]) -> tuple[set[str], int]:
    """ngspice-39's rewrites undone (observed with `listing expand`): an R or C
    whose value reads TEMPER or a circuit quantity becomes a B source (`br3`),
    or a G, L and B trio (`gc2 lc2 bc2`) on an internal node (`c2_int1`);
    `POLY(n)` becomes an XSPICE `a$poly$e1`; a TABLE or VALUE source keeps its
    name and adds helpers (`bg1`, `ag1`, `be2`) on internal nodes. A name
    that is not ours but is one of ours behind one letter (or `a$poly$`) is
    that element; returns the names and the number of internal nodes."""
    out = set()
    for name in names:
        if name not in ours:
            for stem in (name.removeprefix("a$poly$"), name[1:]):
                if stem in ours:
                    name = stem
                    break
        out.add(name)
    return out, len(set(_INTERNAL.findall(listing)))


@pytest.mark.ngspice
@pytest.mark.parametrize("stem", NGSPICE_READS)
def test_fixture_inventory_matches_ngspice(stem, tmp_path):
    board = FIXTURES / "boards" / f"{stem}.cir"
    netlist = read_netlist(board)
    extra, stand_in_names = _stand_ins(netlist)
    deck = tmp_path / board.name
    text = board.read_text(encoding="utf-8").rstrip()
    assert text.endswith(".end")
    deck.write_text(text[:-len(".end")] + "\n".join(extra) + "\n.end\n", encoding="utf-8")
    (theirs, equations), listing = ngspice_inventory(deck, with_listing=True)
    ours = set()
    for element in netlist.elements:
        name = ngspice_name(element.designator, element.kind)
        ours |= stand_in_names.get(name, {name})
    theirs, internal = _normalise_ngspice(theirs, listing, ours)
    assert ours == theirs
    # Nodes: ngspice counts analog nodes (ground included) plus the internal
    # nodes of its rewrites; a node only XSPICE digital ports use is an event
    # node, not a circuit equation (ngspice manual, mixed-mode simulation).
    analog = set()
    for element in netlist.elements:
        if element.kind != "A":
            analog.update(element.nodes)
    digital_only = {n for e in netlist.elements if e.kind == "A" for n in e.nodes} - analog
    our_nodes = netlist.nets() | {"0"}
    assert len(our_nodes) - len(digital_only) + internal == equations
