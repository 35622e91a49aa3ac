"""Generate the hostile inputs that are too big, too special or too many to commit.

tests/hostile/corpus/ holds the small hand-written cases (with
corpus/manifest.toml). This module writes the rest into a scratch folder at
test time: deep and recursive subcircuits, an instance tree whose flattened
size explodes, parameter chains, expression nests, a 100 MB line, a million
continuation lines, include cycles and include bombs, paths that try to leave
the board's folder (`..`, absolute, symbolic links, drive letters), FIFOs,
devices and folders where a file is expected, thousands of contacts on one
net, encodings, and output paths that point at inputs; and, from
process_cases.py, the process around a check (outputs onto devices, FIFOs
and links, standard output closed or full, encodings without Ω, a deleted
working folder, values validated wherever they are given).

Each case is a `Case`: the command-line arguments (relative to the case's
folder), the expected exit status and a substring of the message, and
whether the message must carry a file:line:column location. Run
`python tests/hostile/make_corpus.py OUT` to write every case into OUT and
print the commands (handy for trying one by hand).
"""

from __future__ import annotations

import codecs
import os
import stat
import sys
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

HEADER = "hostile case\n"
# A minimal valid stage: a tactile contact pulling a 74HC14 input low through
# a pull-up; used where a case needs a board that checks cleanly otherwise.
GOOD_STAGE = (
    "V1 vcc 0 DC 5\n"
    "R1 vcc in 10k\n"
    "C1 in 0 100n\n"
    "SW1 in 0 TACTILE\n"
    "XU1 in out 0 0 0 0 0 0 0 0 0 0 0 vcc SN74HC14N\n"
)


@dataclass
class Case:
    """One hostile input: how to run it and what must come out."""

    name: str
    args: list[str]                      # after `drc`, paths relative to the case folder
    status: int | tuple[int, ...] = 2
    message: str = ""                    # substring of stderr+stdout (case-insensitive)
    located: str | None = None           # "line" (file:line), "column" (file:line:col), None
    located_file: str | None = None      # the file the location must name (default: any)
    inputs: list[str] = field(default_factory=list)   # files whose bytes must not change
    xfail: str | None = None             # reason, naming the file that must change
    build: Callable[[Path], None] | None = None       # extra set-up (FIFOs, links)
    timeout: float = 60.0
    env: dict[str, str] = field(default_factory=dict)  # extra environment variables
    stdout: str = "pipe"                 # pipe | full | broken | closed | fsize:N (runner.run)
    setup: tuple[str, ...] = ()          # launcher directives (tests/hostile/launch.py)
    prefix: Callable[[], tuple[str, ...]] | None = None  # a command to run drc under
    workdir: str = ""                    # run from this sub-folder (made empty) of the case's
    check: Callable[[Path, Any], list[str]] | None = None  # what else must hold afterwards
    skip: Callable[[], str | None] | None = None      # why the case cannot run here, if so


def _write(folder: Path, name: str, data: str | bytes) -> Path:
    path = folder / name
    path.parent.mkdir(parents=True, exist_ok=True)
    if isinstance(data, str):
        path.write_text(data, encoding="utf-8", newline="")
    else:
        path.write_bytes(data)
    return path


# ---------------------------------------------------------------- generators

def deep_subckt_definitions(depth: int = 200) -> str:
    """`.subckt` definitions nested inside each other, `depth` deep."""
    opens = "".join(f".subckt S{i} a b\n" for i in range(depth))
    closes = "".join(f".ends S{i}\n" for i in reversed(range(depth)))
    return HEADER + opens + "R1 a b 1k\n" + closes


def deep_instance_chain(depth: int = 200) -> str:
    """S0 instantiates S1 instantiates S2 ... (flat definitions, deep instances)."""
    body = [HEADER]
    for i in range(depth):
        body.append(f".subckt S{i} a b\nR1 a b 1k\nX1 a b S{i + 1}\n.ends\n")
    body.append(f".subckt S{depth} a b\nR1 a b 1k\n.ends\nX0 n1 0 S0\n")
    return "".join(body)


def mutual_recursion() -> str:
    return (HEADER + ".subckt A a b\nR1 a b 1k\nX1 a b B\n.ends\n"
            ".subckt B a b\nR1 a b 1k\nX1 a b A\n.ends\nX0 n1 0 A\n")


def instance_explosion(levels: int = 10, fan: int = 10) -> str:
    """Ten levels of ten instances: 10**10 resistors once flattened."""
    body = [HEADER, ".subckt L0 a b\nR1 a b 1k\n.ends\n"]
    for level in range(1, levels + 1):
        inner = "".join(f"X{k} a b L{level - 1}\n" for k in range(fan))
        body.append(f".subckt L{level} a b\n{inner}.ends\n")
    body.append(f"XTOP n1 0 L{levels}\n")
    return "".join(body)


def parameter_chain(length: int = 5000) -> str:
    """p0 = p1 + 1, p1 = p2 + 1, ... a long but finite chain (written backwards)."""
    lines = [HEADER]
    for i in range(length):
        lines.append(f".param p{i}={{p{i + 1}+1}}\n")
    lines.append(f".param p{length}=1\nR1 a 0 {{p0}}\n")
    return "".join(lines)


def parameter_cycle(length: int = 2000) -> str:
    lines = [HEADER] + [f".param p{i}={{p{(i + 1) % length}*2}}\n" for i in range(length)]
    return "".join(lines) + "R1 a 0 {p0}\n"


def parameter_doubling(length: int = 2000) -> str:
    """Each parameter squares the one before: overflows long before the end."""
    lines = [HEADER, ".param q0=10\n"]
    lines += [f".param q{i}={{q{i - 1}*q{i - 1}}}\n" for i in range(1, length)]
    return "".join(lines) + f"R1 a 0 {{q{length - 1}}}\n"


def expression_nest(depth: int = 100_000) -> str:
    return HEADER + "R1 a 0 {" + "(" * depth + "1" + ")" * depth + "}\n"


def unary_nest(depth: int = 100_000) -> str:
    return HEADER + "R1 a 0 {" + "-" * depth + "1}\n"


def power_tower(height: int = 50) -> str:
    return HEADER + "R1 a 0 {" + "^".join(["10"] * height) + "}\n"


def long_sum(terms: int = 200_000) -> str:
    return HEADER + "R1 a 0 {" + "+".join(["1"] * terms) + "}\n"


def continuation_lines(count: int = 1_000_000) -> str:
    return HEADER + "R1 a b\n" + "+ 1\n" * count


def blank_continuations(count: int = 1_000_000) -> str:
    """A million `+` lines with nothing on them: long to read, nothing to join."""
    return HEADER + "R9 a b 1k\n" + "+\n" * count + GOOD_STAGE


def many_contacts(count: int = 3000) -> str:
    """Thousands of contacts in parallel on one net, into one input."""
    lines = [HEADER, GOOD_STAGE]
    lines += [f"SW{k} in 0 TACTILE\n" for k in range(2, count + 2)]
    return "".join(lines)


def large_board(stages: int) -> str:
    """`stages` copies of a debounced key into hex Schmitt inverters."""
    lines = [HEADER, "V1 vcc 0 DC 5\n", ".subckt KEY key out vcc\nR1 vcc key 10k\n"
             "R2 key out 22k\nC1 out 0 1u\n.ends\n"]
    for u in range(0, stages, 6):
        pins = [f"n{u + k}" for k in range(6)]
        nodes = []
        for k in range(6):
            nodes += [pins[k], f"y{u + k}"]
        lines.append(f"XU{u} {nodes[0]} {nodes[1]} {nodes[2]} {nodes[3]} {nodes[4]} {nodes[5]} 0 "
                     f"{nodes[7]} {nodes[6]} {nodes[9]} {nodes[8]} {nodes[11]} {nodes[10]} vcc "
                     "SN74HC14N\n")
        for k in range(6):
            lines.append(f"SW{u + k} k{u + k} 0 TACTILE\nXK{u + k} k{u + k} {pins[k]} vcc KEY\n")
    return "".join(lines)


# ---------------------------------------------------------------- special files

def _fifo(name: str) -> Callable[[Path], None]:
    def build(folder: Path) -> None:
        os.mkfifo(folder / name)
    return build


def _link(name: str, target: str) -> Callable[[Path], None]:
    def build(folder: Path) -> None:
        (folder / name).symlink_to(target)
    return build


def _outside_file(folder: Path) -> Path:
    outside = folder.parent / (folder.name + "-outside")
    outside.mkdir(exist_ok=True)
    return _write(outside, "secret.cir", "R99 x y 1k\n")


def _link_out(name: str) -> Callable[[Path], None]:
    def build(folder: Path) -> None:
        (folder / name).symlink_to(_outside_file(folder))
    return build


def _dir_link_out(name: str) -> Callable[[Path], None]:
    def build(folder: Path) -> None:
        (folder / name).symlink_to(_outside_file(folder).parent, target_is_directory=True)
    return build


def _loop(folder: Path) -> None:
    (folder / "boards" / "sub").mkdir(parents=True)
    _write(folder / "boards", "a.cir", HEADER + GOOD_STAGE)
    (folder / "boards" / "sub" / "up").symlink_to("..", target_is_directory=True)


# ---------------------------------------------------------------- the cases

def cases(big: bool = True) -> list[tuple[Case, dict[str, str | bytes]]]:
    """Every generated case with the files it needs. `big=False` skips the 100 MB ones."""
    out: list[tuple[Case, dict[str, str | bytes]]] = []

    def add(case: Case, files: dict[str, str | bytes]) -> None:
        if not case.inputs:
            case.inputs = [n for n in files]
        out.append((case, files))

    # -- subcircuits
    add(Case("deep_subckt_definitions", ["check", "b.cir"], 2, "max-subckt-depth", "column"),
        {"b.cir": deep_subckt_definitions()})
    add(Case("deep_instance_chain", ["check", "b.cir"], 2, "max-subckt-depth", "column"),
        {"b.cir": deep_instance_chain()})
    add(Case("mutual_recursion", ["check", "b.cir"], 2, "subcircuit recursion", "column"),
        {"b.cir": mutual_recursion()})
    add(Case("instance_explosion_10x10", ["check", "b.cir"], 2, "max-elements", "column",
             timeout=30), {"b.cir": instance_explosion()})
    add(Case("instance_explosion_raised_still_bounded",
             ["check", "b.cir", "--max-elements", "50000"], 2, "max-elements", "column",
             timeout=30), {"b.cir": instance_explosion(levels=6)})
    # -- parameters and expressions
    add(Case("parameter_chain_5000", ["check", "b.cir"], 0, "0 contacts", None),
        {"b.cir": parameter_chain()})
    # A parameter that cannot be evaluated is a located warning (issue 12: one
    # bad line never sinks the board); the element using it is not evaluated.
    add(Case("parameter_cycle", ["check", "b.cir"], (0, 1), "parameter cycle", "column"),
        {"b.cir": parameter_cycle()})
    add(Case("parameter_doubling_overflow", ["check", "b.cir"], (0, 1), "overflow", "column"),
        {"b.cir": parameter_doubling()})
    add(Case("expression_nest_100k", ["check", "b.cir"], 2, "max-line-length", "column"),
        {"b.cir": expression_nest()})
    add(Case("expression_nest_3k", ["check", "b.cir"], 2, "max-expression-depth", "column"),
        {"b.cir": expression_nest(3_000)})
    add(Case("expression_nest_raised_past_the_stack",
             ["check", "b.cir", "--max-expression-depth", "1000000",
              "--max-expression-work", "1000000"], 2, "max-expression-depth",
             "column"), {"b.cir": expression_nest(40_000)})
    add(Case("unary_nest_5k", ["check", "b.cir"], 2, "max-expression-depth", "column"),
        {"b.cir": unary_nest(5_000)})
    add(Case("power_tower", ["check", "b.cir"], (0, 1), "overflow", "column"),
        {"b.cir": power_tower()})
    add(Case("long_sum_200k_terms", ["check", "b.cir", "--max-line-length", "1000000"], 2,
             "max-expression-work", "column"), {"b.cir": long_sum()})
    # -- size
    if big:
        add(Case("line_100MB", ["check", "b.cir"], 2, "max-line-length", "column", timeout=60),
            {"b.cir": HEADER + "R1 a b " + "9" * 100_000_000 + "\n"})
        add(Case("line_100MB_of_comment_markers", ["check", "b.cir"], 2, "max-line-length",
                 "column", timeout=60),
            {"b.cir": HEADER + "R1 a b 1k " + "a$" * 50_000_000 + "\n"})
        add(Case("file_above_max_file_bytes", ["check", "b.cir", "--max-file-bytes", "1000000"],
                 2, "max-file-bytes", None), {"b.cir": HEADER + "* x\n" * 400_000})
    add(Case("million_continuation_lines", ["check", "b.cir"], 2, "max-line-length", "column",
             timeout=60), {"b.cir": continuation_lines()})
    add(Case("million_continuation_lines_raised",
             ["check", "b.cir", "--max-line-length", "10000000"], (0, 1), "unexpected", "column",
             timeout=60), {"b.cir": continuation_lines()})
    add(Case("million_blank_continuations", ["check", "b.cir"], (0, 1), "1 contact", None,
             timeout=60), {"b.cir": blank_continuations()})
    # -- includes
    add(Case("includes_itself", ["check", "b.cir"], 2, "include cycle", "column"),
        {"b.cir": HEADER + ".include b.cir\n"})
    add(Case("includes_mutually", ["check", "b.cir"], 2, "include cycle", "column"),
        {"b.cir": HEADER + ".include c.inc\n", "c.inc": "* c\n.include d.inc\n",
         "d.inc": "* d\n.include c.inc\n"})
    # Read once per definition (a reader warning; reports do not show reader
    # warnings yet, see tests/hostile/test_reader_guards.py for the warning).
    # Only model cards: the board holds no parts, an empty-netlist error.
    add(Case("include_same_file_1000_times", ["check", "b.cir"], 1, "holds no parts", None,
             timeout=60),
        {"b.cir": HEADER + ".include l1.inc\n" * 1000,
         "l1.inc": ".include l2.inc\n" * 1000,
         "l2.inc": ".model D1 D\n" * 1000})
    add(Case("include_bomb_through_subckts", ["check", "b.cir"], 2, "max-elements", "column",
             timeout=60),
        {"b.cir": HEADER + ".include l1.inc\n",
         "l1.inc": "".join(f".subckt A{k} a\n.include l2.inc\n.ends\n" for k in range(1000)),
         "l2.inc": "".join(f".subckt B{k} a\n.include l3.inc\n.ends\n" for k in range(1000)),
         "l3.inc": ".model D1 D\n" * 1000})
    add(Case("empty_instance_tree", ["check", "b.cir"], 2, "max-elements", "column"),
        {"b.cir": HEADER + ".subckt E0 a\n.ends\n" + "".join(
            f".subckt E{k} a\n" + "".join(f"X{j} a E{k - 1}\n" for j in range(10)) + ".ends\n"
            for k in range(1, 11)) + "XT n E10\n"})
    add(Case("include_depth", ["check", "b.cir"], 2, "max-include-depth", "column"),
        dict([("b.cir", HEADER + ".include i0.inc\n")]
             + [(f"i{k}.inc", f".include i{k + 1}.inc\n") for k in range(40)]
             + [("i40.inc", "R1 a b 1k\n")]))
    add(Case("include_dotdot", ["check", "b.cir"], 2, "leaves the project", "column"),
        {"b.cir": HEADER + ".include ../../../../../../etc/passwd\n"})
    # Absolute, drive-letter and network paths outside the project are library
    # lines into a simulator's installation (issue 12): not read, one note.
    add(Case("include_absolute", ["check", "b.cir"], (0, 1), "outside the project", "column"),
        {"b.cir": HEADER + ".include /etc/passwd\n"})
    add(Case("include_drive_letter", ["check", "b.cir"], (0, 1), "outside the project", "column"),
        {"b.cir": HEADER + ".include C:\\boards\\x.cir\n"})
    add(Case("include_unc_path", ["check", "b.cir"], (0, 1), "outside the project", "column"),
        {"b.cir": HEADER + ".include \\\\server\\share\\x.cir\n"})
    add(Case("lib_dotdot", ["check", "b.cir"], 2, "leaves the project", "column"),
        {"b.cir": HEADER + ".lib ../x.lib fast\n"})
    add(Case("include_symlink_out", ["check", "b.cir"], 2, "symlink", "column",
             build=_link_out("evil.inc")), {"b.cir": HEADER + ".include evil.inc\n"})
    add(Case("include_through_dir_symlink", ["check", "b.cir"], 2, "symlink", "column",
             build=_dir_link_out("lib")), {"b.cir": HEADER + ".include lib/secret.cir\n"})
    add(Case("include_fifo", ["check", "b.cir"], 2, "not a regular file", "column",
             build=_fifo("pipe.inc"), timeout=20), {"b.cir": HEADER + ".include pipe.inc\n"})
    add(Case("include_folder", ["check", "b.cir"], 2, "not a regular file", "column",
             build=lambda f: (f / "sub").mkdir()), {"b.cir": HEADER + ".include sub\n"})
    add(Case("include_device_via_link", ["check", "b.cir"], 2, "symlink", "column",
             build=_link("zero.inc", "/dev/zero"), timeout=20),
        {"b.cir": HEADER + ".include zero.inc\n"})
    add(Case("include_folder_option_allows", ["check", "b.cir", "--include-folder", "../lib"],
             (0, 1), "contact", None,
             build=lambda f: _write(f.parent / "lib", "models.inc", ".model DX D\n")),
        {"b.cir": HEADER + GOOD_STAGE + ".include ../lib/models.inc\n"})
    # -- special files as the board itself
    add(Case("board_is_fifo", ["check", "pipe.cir"], 2, "not a regular file", None,
             build=_fifo("pipe.cir"), timeout=20), {})
    add(Case("board_is_dev_zero", ["check", "/dev/zero"], 2, "not a regular file", None,
             timeout=20), {})
    add(Case("folder_with_symlink_loop", ["check", "boards"], (0, 1), "1 board", None,
             build=_loop, timeout=30), {})
    add(Case("baseline_is_fifo", ["check", "b.cir", "--baseline", "base.json"], 2,
             "not a regular file", None, build=_fifo("base.json"), timeout=20),
        {"b.cir": HEADER + GOOD_STAGE})
    add(Case("config_is_fifo", ["check", "b.cir", "--config", "drc.toml"], 2, "drc.toml", None,
             build=_fifo("drc.toml"), timeout=20), {"b.cir": HEADER + GOOD_STAGE})
    add(Case("discovered_config_is_fifo", ["check", "b.cir"], (0, 1), "contact", None,
             build=_fifo("drc.toml"), timeout=20), {"b.cir": HEADER + GOOD_STAGE})
    # -- electrical extremes
    add(Case("hundreds_of_contacts_on_one_net", ["check", "b.cir", "--no-fixes", "-q"], (0, 1),
             "contacts", None, timeout=60), {"b.cir": many_contacts(400)})
    add(Case("thousands_of_contacts_on_one_net", ["check", "b.cir", "--no-fixes", "-q"], (0, 1),
             "contacts", None, timeout=240),
        {"b.cir": many_contacts(3000)})
    add(Case("rail_shorted_by_contact", ["check", "b.cir"], (0, 1, 2), "", None),
        {"b.cir": HEADER + "V1 vcc 0 DC 5\nSW1 vcc 0 TACTILE\nR1 vcc in 10k\nSW2 in 0 TACTILE\n"
                  "XU1 in out 0 0 0 0 0 0 0 0 0 0 0 vcc SN74HC14N\n"})
    add(Case("rail_shorted_directly_to_input", ["check", "b.cir"], (0, 1, 2), "", None),
        {"b.cir": HEADER + "V1 vcc 0 DC 5\nSW1 vcc in TACTILE\nR1 in 0 0\n"
                  "XU1 in out 0 0 0 0 0 0 0 0 0 0 0 vcc SN74HC14N\n"})
    # -- encodings
    add(Case("utf16_le_bom", ["check", "b.cir"], (0, 1), "1 contact", None),
        {"b.cir": codecs.BOM_UTF16_LE + (HEADER + GOOD_STAGE).encode("utf-16-le")})
    add(Case("utf16_be_bom", ["check", "b.cir"], (0, 1), "1 contact", None),
        {"b.cir": codecs.BOM_UTF16_BE + (HEADER + GOOD_STAGE).encode("utf-16-be")})
    add(Case("utf16_without_bom", ["check", "b.cir"], 2, "NUL", "column"),
        {"b.cir": (HEADER + GOOD_STAGE).encode("utf-16-le")})
    add(Case("utf16_bom_odd_length", ["check", "b.cir"], 2, "UTF-16", None),
        {"b.cir": codecs.BOM_UTF16_LE + (HEADER + GOOD_STAGE).encode("utf-16-le") + b"\x00"})
    add(Case("baseline_deep_nesting", ["check", "b.cir", "--baseline", "base.json"], 2,
             "nest too deeply", None),
        {"b.cir": HEADER + GOOD_STAGE, "base.json": "[" * 100_000 + "]" * 100_000})
    add(Case("config_deep_nesting", ["check", "b.cir"], 2, "nest too deeply", None),
        {"b.cir": HEADER + GOOD_STAGE, "drc.toml": "x = " + "[" * 100_000 + "]" * 100_000})
    add(Case("pyproject_deep_nesting", ["check", "b.cir"], 2, "nest too deeply", None),
        {"b.cir": HEADER + GOOD_STAGE,
         "pyproject.toml": "[tool.drc]\nx = " + "[" * 100_000 + "]" * 100_000})
    # -- outputs
    add(Case("output_over_board", ["check", "b.cir", "-o", "json:b.cir"], 2, "input file", None),
        {"b.cir": HEADER + GOOD_STAGE})
    add(Case("output_over_discovered_config", ["check", "b.cir", "-o", "json:drc.toml"], 2,
             "input", None),
        {"b.cir": HEADER + GOOD_STAGE, "drc.toml": "fail-level = \"error\"\n"})
    add(Case("output_over_included_file", ["check", "b.cir", "-o", "json:parts.txt"], 2,
             "input", None),
        {"b.cir": HEADER + GOOD_STAGE + ".include parts.txt\n", "parts.txt": ".model DX D\n"})
    add(Case("write_baseline_over_board", ["check", "b.cir", "--write-baseline", "b.cir"], 2,
             "input file", None), {"b.cir": HEADER + GOOD_STAGE})
    # -- the process around a check: special outputs, streams, values (process_cases.py)
    from tests.hostile import process_cases
    for case, files in (*process_cases.output_cases(), *process_cases.stream_cases(),
                        *process_cases.value_cases()):
        add(case, files)
    return out


def materialise(case: Case, files: dict[str, str | bytes], folder: Path) -> Path:
    """Write `case` into its own folder under `folder`; returns that folder."""
    where = folder / case.name
    where.mkdir(parents=True, exist_ok=True)
    for name, data in files.items():
        _write(where, name, data)
    if case.build is not None:
        case.build(where)
    if case.workdir:
        (where / case.workdir).mkdir(exist_ok=True)
    return where


def is_special(path: Path) -> bool:
    try:
        return not stat.S_ISREG(os.stat(path).st_mode)
    except OSError:
        return True


def main(argv: list[str]) -> int:
    if len(argv) != 1:
        print("usage: python tests/hostile/make_corpus.py OUT_FOLDER", file=sys.stderr)
        return 2
    out = Path(argv[0])
    for case, files in cases():
        where = materialise(case, files, out)
        print(f"(cd {where} && drc {' '.join(case.args)})  # expect {case.status}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
