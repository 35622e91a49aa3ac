"""Generated hostile cases about the process around a check, not the netlist in it.

Outputs that land on special files (devices, FIFOs, symbolic links, folders,
sockets, names at and over the system's limit, names that are not UTF-8),
standard output in trouble (closed, full, a reader gone, a file-size
limit), output encodings without Ω or µ, a deleted working folder, odd
terminal settings, folder scans with boards that cannot be read, and values
that must be validated the same way wherever they are given. Each is a
`make_corpus.Case` whose `check` looks at what the run left behind (the
device still a device, the link still a link, the old report intact).

Device nodes are made with mknod, which needs root (this machine and CI run
as root); elsewhere those cases are skipped with a message.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import socket
import stat
import threading
import time
from collections.abc import Callable
from pathlib import Path

from tests.hostile.make_corpus import GOOD_STAGE, HEADER, Case

Files = dict[str, str | bytes]
BOARD = {"b.cir": HEADER + GOOD_STAGE}  # checks with findings: exit status 1
OLD = '{"previous": "report"}\n'
FINDINGS = (0, 1)


# ---------------------------------------------------------------- conditions

def _needs_root() -> str | None:
    if hasattr(os, "geteuid") and os.geteuid() == 0:
        return None
    return "device nodes are made with mknod, which needs root: case skipped"


def _needs_dev_full() -> str | None:
    return None if os.path.exists("/dev/full") else "no /dev/full on this system: case skipped"


def _drop_read_permission() -> tuple[str, ...]:
    """As root, a command prefix that takes away the right to read any file
    (root reads files whose mode forbids it); nothing for other users."""
    if hasattr(os, "geteuid") and os.geteuid() == 0:
        return ("setpriv", "--bounding-set=-dac_override,-dac_read_search",
                "--inh-caps=-dac_override,-dac_read_search")
    return ()


def _needs_setpriv_as_root() -> str | None:
    if hasattr(os, "geteuid") and os.geteuid() == 0 and shutil.which("setpriv") is None:
        return "running as root without setpriv: cannot make a file unreadable; case skipped"
    return None


# ---------------------------------------------------------------- set-up

def _mknod(name: str, kind: int, major: int, minor: int) -> Callable[[Path], None]:
    def build(folder: Path) -> None:
        try:
            os.mknod(folder / name, kind | 0o666, os.makedev(major, minor))
        except PermissionError:
            pass  # not root: the case is skipped
    return build


def _reader(fifo: str, out: str) -> Callable[[Path], None]:
    """A FIFO and a thread that reads it (once a writer opens it) into `out`."""
    def build(folder: Path) -> None:
        os.mkfifo(folder / fifo)

        def read() -> None:
            with open(folder / fifo, "rb") as pipe:
                data = pipe.read()
            (folder / out).write_bytes(data)
        threading.Thread(target=read, daemon=True).start()
    return build


def _old_report(name: str, mode: int) -> Callable[[Path], None]:
    def build(folder: Path) -> None:
        (folder / name).write_text(OLD)
        os.chmod(folder / name, mode)
    return build


def _links(*pairs: tuple[str, str]) -> Callable[[Path], None]:
    def build(folder: Path) -> None:
        for name, target in pairs:
            (folder / name).symlink_to(target)
    return build


def _both(*builds: Callable[[Path], None]) -> Callable[[Path], None]:
    def build(folder: Path) -> None:
        for one in builds:
            one(folder)
    return build


def _socket(name: str) -> Callable[[Path], None]:
    def build(folder: Path) -> None:
        server = socket.socket(socket.AF_UNIX)
        try:
            server.bind(str(folder / name))
        finally:
            server.close()
    return build


def _scan_folder(folder: Path) -> None:
    """A folder of boards: one good, a dangling link, a FIFO and an unreadable file."""
    boards = folder / "boards"
    boards.mkdir()
    (boards / "good.cir").write_text(HEADER + GOOD_STAGE)
    (boards / "dangling.cir").symlink_to("nowhere.cir")
    os.mkfifo(boards / "x.cir")
    (boards / "locked.cir").write_text(HEADER + GOOD_STAGE)
    os.chmod(boards / "locked.cir", 0)


# ---------------------------------------------------------------- checks

def _kind(name: str, test: Callable[[int], bool], what: str) -> Callable[[Path, object], list[str]]:
    def check(folder: Path, _outcome) -> list[str]:
        mode = os.lstat(folder / name).st_mode
        return [] if test(mode) else [f"{name} is no longer {what} (mode {oct(mode)})"]
    return check


def _report_at(name: str, mode: int | None = None) -> Callable[[Path, object], list[str]]:
    """`name` holds a JSON report (and has permission bits `mode`)."""
    def check(folder: Path, _outcome) -> list[str]:
        path = folder / name
        wrong = []
        try:
            if "boards" not in json.loads(path.read_text(encoding="utf-8")):
                wrong.append(f"{name} is not a report")
        except (OSError, ValueError) as exc:
            wrong.append(f"{name} is not a JSON report: {exc}")
        if mode is not None and path.exists() and stat.S_IMODE(path.stat().st_mode) != mode:
            wrong.append(f"{name} has mode {oct(stat.S_IMODE(path.stat().st_mode))}, expected {oct(mode)}")
        return wrong
    return check


def _all(*checks: Callable[[Path, object], list[str]]) -> Callable[[Path, object], list[str]]:
    def check(folder: Path, outcome) -> list[str]:
        return [problem for one in checks for problem in one(folder, outcome)]
    return check


def _link_kept(name: str, target: str) -> Callable[[Path, object], list[str]]:
    def check(folder: Path, _outcome) -> list[str]:
        path = folder / name
        if not path.is_symlink() or os.readlink(path) != target:
            return [f"{name} is no longer a symbolic link to {target}"]
        return []
    return check


def _fifo_delivered(out: str) -> Callable[[Path, object], list[str]]:
    def check(folder: Path, outcome) -> list[str]:
        for _ in range(50):  # the reading thread writes its file when the writer closes
            if (folder / out).exists():
                break
            time.sleep(0.1)
        return _all(_kind("pipe.json", stat.S_ISFIFO, "a FIFO"), _report_at(out))(folder, outcome)
    return check


def _unchanged(name: str, text: str = OLD) -> Callable[[Path, object], list[str]]:
    def check(folder: Path, _outcome) -> list[str]:
        now = (folder / name).read_text()
        return [] if now == text else [f"{name} changed: {now[:80]!r}"]
    return check


def _no_temporary_files(folder: Path, _outcome) -> list[str]:
    left = [p.name for p in folder.iterdir() if p.name.endswith(".tmp")]
    return [f"temporary files left: {left}"] if left else []


def _ascii_stdout(outcome) -> list[str]:
    try:
        outcome.raw_stdout.decode("ascii")
    except UnicodeDecodeError as exc:
        return [f"standard output is not ASCII: {outcome.raw_stdout[exc.start:exc.start + 20]!r}"]
    return []


def _encoded(encoding: str, must: tuple[str, ...]) -> Callable[[Path, object], list[str]]:
    def check(_folder: Path, outcome) -> list[str]:
        wrong = _ascii_stdout(outcome) if encoding == "ascii" else []
        text = outcome.raw_stdout.decode(encoding, "replace")
        wrong += [f"{word!r} missing from the {encoding} output" for word in must if word not in text]
        return wrong
    return check


def _no_escape_sequences(_folder: Path, outcome) -> list[str]:
    return ["colour escape sequences despite NO_COLOR"] if "\x1b[" in outcome.stdout else []


def _first_line(expected: str) -> Callable[[Path, object], list[str]]:
    def check(_folder: Path, outcome) -> list[str]:
        first = outcome.stdout.splitlines()[0] if outcome.stdout else ""
        return [] if first == expected else [f"first line {first!r}, expected {expected!r}"]
    return check


def _no_raw_numbers(_folder: Path, outcome) -> list[str]:
    """No numpy warning and no infinite figure reached the user."""
    text = outcome.stdout + outcome.stderr
    return [f"{word!r} in the output" for word in (r"RuntimeWarning", "∞", r"\binf\b", r"\bnan\b")
            if re.search(word, text)]


def _stdout_has(*words: str) -> Callable[[Path, object], list[str]]:
    def check(_folder: Path, outcome) -> list[str]:
        return [f"{word!r} missing from standard output" for word in words if word not in outcome.stdout]
    return check


def _stderr_has(*words: str) -> Callable[[Path, object], list[str]]:
    def check(_folder: Path, outcome) -> list[str]:
        return [f"{word!r} missing from standard error" for word in words if word not in outcome.stderr]
    return check


def _lines_of_stdout(minimum: int) -> Callable[[Path, object], list[str]]:
    def check(_folder: Path, outcome) -> list[str]:
        count = len([line for line in outcome.stdout.splitlines() if line.strip()])
        return [] if count >= minimum else [f"only {count} lines on standard output"]
    return check


# ---------------------------------------------------------------- the cases

def output_cases() -> list[tuple[Case, Files]]:
    """Reports written onto devices, FIFOs, links, folders, sockets and odd names."""
    long_ok = "r" * 249 + ".json"           # 254 bytes: a legal name on every common filesystem
    too_long = "r" * 300 + ".json"
    return [
        (Case("output_to_null_device", ["check", "b.cir", "-o", "json:nul"], FINDINGS, "",
              build=_mknod("nul", stat.S_IFCHR, 1, 3), skip=_needs_root,
              check=_kind("nul", stat.S_ISCHR, "a character device")), BOARD),
        (Case("output_to_full_device", ["check", "b.cir", "-o", "json:full"], 2,
              "no space left on device", build=_mknod("full", stat.S_IFCHR, 1, 7), skip=_needs_root,
              check=_kind("full", stat.S_ISCHR, "a character device")), BOARD),
        (Case("output_to_block_device", ["check", "b.cir", "-o", "json:disk"], 2,
              "it is a block device", build=_mknod("disk", stat.S_IFBLK, 7, 0), skip=_needs_root,
              check=_kind("disk", stat.S_ISBLK, "a block device")), BOARD),
        (Case("output_to_fifo", ["check", "b.cir", "-o", "json:pipe.json"], FINDINGS, "",
              build=_reader("pipe.json", "delivered.json"), timeout=30,
              check=_fifo_delivered("delivered.json")), BOARD),
        (Case("output_through_symlink", ["check", "b.cir", "-o", "json:link.json"], FINDINGS, "",
              build=_both(_old_report("target.json", 0o640), _links(("link.json", "target.json"))),
              check=_all(_link_kept("link.json", "target.json"), _report_at("target.json", 0o640),
                         _no_temporary_files)), BOARD),
        (Case("output_through_dangling_symlink", ["check", "b.cir", "-o", "json:link.json"],
              FINDINGS, "", build=_links(("link.json", "made.json")),
              check=_all(_link_kept("link.json", "made.json"), _report_at("made.json"))), BOARD),
        (Case("output_keeps_permission_bits", ["check", "b.cir", "-o", "json:report.json"],
              FINDINGS, "", build=_old_report("report.json", 0o604),
              check=_all(_report_at("report.json", 0o604), _no_temporary_files)), BOARD),
        (Case("output_new_file_follows_umask", ["check", "b.cir", "-o", "json:report.json"],
              FINDINGS, "", check=_report_at("report.json", 0o666 & ~_umask())), BOARD),
        (Case("output_to_folder", ["check", "b.cir", "-o", "json:out"], 2, "it is a folder",
              build=lambda f: (f / "out").mkdir(), check=_kind("out", stat.S_ISDIR, "a folder")),
         BOARD),
        (Case("output_to_socket", ["check", "b.cir", "-o", "json:sock"], 2, "it is a socket",
              build=_socket("sock"), check=_kind("sock", stat.S_ISSOCK, "a socket")), BOARD),
        (Case("output_name_254_bytes", ["check", "b.cir", "-o", f"json:{long_ok}"], FINDINGS, "",
              check=_all(_report_at(long_ok), _no_temporary_files)), BOARD),
        (Case("output_name_over_the_limit", ["check", "b.cir", "-o", f"json:{too_long}"], 2,
              "file name too long"), BOARD),
        (Case("output_name_not_utf8", ["check", "b.cir", "-o", "json:\udcfe.json"], FINDINGS, "",
              check=_report_at("\udcfe.json")), BOARD),
        (Case("board_name_not_utf8", ["check", "\udcff.cir"], 1, "",
              check=_first_line("\\xff.cir")), {"\udcff.cir": HEADER + GOOD_STAGE}),
        (Case("board_name_not_utf8_json", ["check", "\udcff.cir", "--format", "json"], 1, "",
              check=_stdout_has('"path": "\ufffd.cir"')), {"\udcff.cir": HEADER + GOOD_STAGE}),
        (Case("board_name_not_utf8_sarif", ["check", "\udcff.cir", "--format", "sarif"], 1, "",
              check=_stdout_has('"uri": "%FF.cir"')), {"\udcff.cir": HEADER + GOOD_STAGE}),
        (Case("board_name_with_newline", ["check", "new\nline.cir"], 1, "",
              check=_first_line("new\\nline.cir")), {"new\nline.cir": HEADER + GOOD_STAGE}),
        (Case("two_outputs_to_one_file", ["check", "b.cir", "-o", "json:x", "-o", "sarif:x"], 2,
              "both write x"), BOARD),
        (Case("output_and_baseline_to_one_file",
              ["check", "b.cir", "-o", "json:x", "--write-baseline", "./x"], 2, "both write"), BOARD),
    ]


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def stream_cases() -> list[tuple[Case, Files]]:
    """Standard output in trouble, output encodings, terminal settings, the working folder."""
    return [
        (Case("stdout_full_device", ["check", "b.cir"], 2, "no space left on device",
              stdout="full", skip=_needs_dev_full), BOARD),
        (Case("stdout_closed", ["check", "b.cir"], 2, "standard output is closed",
              stdout="closed"), BOARD),
        (Case("stdout_reader_gone_sigpipe", ["check", "b.cir"], 2, "broken pipe",
              stdout="broken"), BOARD),
        (Case("stdout_file_size_limit", ["check", "b.cir"], 2, "file too large",
              stdout="fsize:1024"), BOARD),
        (Case("stdout_file_size_limit_json", ["check", "b.cir", "--format", "json"], 2,
              "the report is incomplete", stdout="fsize:1024"), BOARD),
        (Case("encoding_ascii", ["check", "b.cir"], 1, "->", env={"PYTHONIOENCODING": "ascii"},
              check=_encoded("ascii", ("100 ohm-1 kohm", " us (min", "SW1 -> U1:1"))), BOARD),
        (Case("encoding_ascii_json", ["check", "b.cir", "--format", "json"], 1, "",
              env={"PYTHONIOENCODING": "ascii"}, check=_encoded("ascii", ("100 ohm-1 kohm",))),
         BOARD),
        (Case("encoding_latin1", ["check", "b.cir"], 1, "", env={"PYTHONIOENCODING": "latin-1"},
              check=_encoded("latin-1", ("100 ohm-1 kohm", " µs (min"))), BOARD),
        (Case("columns_zero", ["check", "b.cir"], 1, "bounce-window", env={"COLUMNS": "0"},
              check=_lines_of_stdout(5)), BOARD),
        (Case("columns_not_a_number", ["check", "b.cir"], 1, "bounce-window",
              env={"COLUMNS": "wide"}, check=_lines_of_stdout(5)), BOARD),
        (Case("no_color_beats_force_color", ["check", "b.cir"], 1, "bounce-window",
              env={"NO_COLOR": "1", "FORCE_COLOR": "1", "TTY_COMPATIBLE": "1"},
              check=_no_escape_sequences), BOARD),
        (Case("working_folder_deleted", ["check", "../b.cir"], 2, "working folder no longer exists",
              workdir="gone", setup=("rmcwd",)), BOARD),
        (Case("folder_scan_reports_every_skipped_file", ["check", "boards"], 2,
              "boards/dangling.cir: file not found", build=_scan_folder,
              prefix=_drop_read_permission, skip=_needs_setpriv_as_root, timeout=30,
              check=_stderr_has("boards/x.cir: not a regular file",
                                "boards/locked.cir: cannot open file: Permission denied")), {}),
        (Case("supply_outside_family_range", ["check", "b.cir"], 1,
              "not checked (supply-out-of-range): U1: VCC 12 V is outside the HC supply range"),
         {"b.cir": HEADER + GOOD_STAGE.replace("DC 5", "DC 12")}),
    ]


def value_cases() -> list[tuple[Case, Files]]:
    """Values refused the same way wherever they are given (config, annotation, option)."""
    def limits(line: str) -> Files:
        return {"b.cir": HEADER + GOOD_STAGE, "drc.toml": f"[limits]\n{line}\n"}

    huge = "9" * 5000
    cases: list[tuple[Case, Files]] = [
        (Case("limit_negative_margin", ["check", "b.cir"], 2, "expected a positive ratio", "line",
              "drc.toml"), limits("bounce-margin = -1.5")),
        (Case("limit_zero_margin", ["check", "b.cir"], 2, "expected a positive ratio", "line",
              "drc.toml"), limits("bounce-margin = 0")),
        (Case("limit_nan", ["check", "b.cir"], 2, "not a ratio", "line", "drc.toml"),
         limits("bounce-margin = nan")),
        (Case("limit_infinite", ["check", "b.cir"], 2, "not a ratio", "line", "drc.toml"),
         limits("bounce-margin = inf")),
        (Case("limit_wrong_unit", ["check", "b.cir"], 2, "is not a ratio (its unit is volt)", "line",
              "drc.toml"), limits('bounce-margin = "5 V"')),
        (Case("limit_time_negative", ["check", "b.cir"], 2, "expected a positive time", "line",
              "drc.toml"), limits('latency-limit = "-100 ms"')),
        (Case("limit_tolerance_not_a_fraction", ["check", "b.cir"], 2, "below 100 %", "line",
              "drc.toml"), limits("tolerance-resistor = 1.5")),
        (Case("limit_expression_for_pint", ["check", "b.cir"], 2, "is not a time", "line",
              "drc.toml"), limits('latency-limit = "10**10**10 ms"')),
        (Case("limit_margin_may_be_zero", ["check", "b.cir"], FINDINGS, "contact"),
         limits("leakage-headroom-margin = 0")),
        (Case("config_integer_over_4300_digits", ["check", "b.cir"], 2, "more than 4300 digits",
              "column", "drc.toml"), limits(f"bounce-margin = {huge}")),
        (Case("baseline_integer_over_4300_digits", ["check", "b.cir", "--baseline", "base.json"], 2,
              "more than 4300 digits", "column", "base.json"),
         {"b.cir": HEADER + GOOD_STAGE, "base.json": f'{{"format": {huge}}}'}),
        (Case("annotation_negative_bounce", ["check", "b.cir"], 2, "expected a positive time",
              "column", "b.cir"),
         {"b.cir": HEADER + "*@drc contact SW1 bounce=-20ms\n" + GOOD_STAGE}),
        (Case("annotation_nan_debounce", ["check", "b.cir"], 2, "not a time", "column", "b.cir"),
         {"b.cir": HEADER + "*@drc debounce U1:1 nan\n" + GOOD_STAGE}),
        (Case("annotation_contact_matches_nothing", ["check", "b.cir"], FINDINGS,
              "annotation `contact SW9` matches no part on the board", "column", "b.cir"),
         {"b.cir": HEADER + "*@drc contact SW9 class=toggle\n" + GOOD_STAGE}),
        (Case("annotation_debounce_part_missing", ["check", "b.cir"], FINDINGS,
              "annotation `debounce U9:12`: U9 is not on the board", "column", "b.cir"),
         {"b.cir": HEADER + "*@drc debounce U9:12 20ms\n" + GOOD_STAGE}),
        (Case("annotation_debounce_pin_not_an_input", ["check", "b.cir"], FINDINGS,
              "U1:2 is not a logic input", "column", "b.cir"),
         {"b.cir": HEADER + "*@drc debounce U1:2 20ms\n" + GOOD_STAGE}),
        (Case("annotation_waive_part_missing", ["check", "b.cir"], FINDINGS,
              "R7 matches no part on the board", "column", "b.cir"),
         {"b.cir": HEADER + "*@drc waive bounce-window SW1 R7 : bench unit\n" + GOOD_STAGE}),
        (Case("config_bounce_negative", ["check", "b.cir"], 2, "expected a positive time", "line",
              "drc.toml"),
         {"b.cir": HEADER + GOOD_STAGE,
          "drc.toml": '[[contacts]]\ndesignator = "SW1"\nbounce = "-20 ms"\n'}),
        (Case("option_bounce_negative", ["check", "b.cir", "--bounce=-20ms"], 2,
              "--bounce: expected a positive time"), BOARD),
        (Case("option_eseries_unknown_on_check", ["check", "b.cir", "--eseries", "E7"], 2,
              "unknown E-series 'E7'"), BOARD),
        (Case("design_capacitor_zero", ["design", "--rail", "5V", "--family", "HC",
                                        "--capacitor", "0F"], 2,
              "--capacitor: expected a positive capacitance"), {}),
        (Case("design_resistor_infinite", ["design", "--rail", "5V", "--family", "HC",
                                           "--resistor", "1e999"], 2, "--resistor"), {}),
        (Case("design_rail_negative", ["design", "--rail=-5V", "--family", "HC"], 2,
              "--rail: expected a positive voltage"), {}),
        (Case("simulate_negative_seed", ["simulate", "b.cir", "SW1", "--seed", "-1"], 2,
              "--seed: expected a whole number >= 0"), BOARD),
        (Case("simulate_trials_capped", ["simulate", "b.cir", "SW1", "--trials", "100000000"], 0,
              "simulating 10000 trials", timeout=120), BOARD),
        (Case("extreme_resistance", ["check", "b.cir"], 2, "R1 has a resistance of 1e+30",
              "column", "b.cir", check=_no_raw_numbers),
         {"b.cir": HEADER + GOOD_STAGE.replace("R1 vcc in 10k", "R1 vcc in 1e30")}),
        (Case("subnormal_capacitance", ["check", "b.cir"], 2, "outside what drc evaluates",
              "column", "b.cir", check=_no_raw_numbers),
         {"b.cir": HEADER + GOOD_STAGE.replace("C1 in 0 100n", "C1 in 0 1e-320")}),
        (Case("extreme_values_within_range", ["check", "b.cir"], FINDINGS, "contact",
              check=_no_raw_numbers),
         {"b.cir": HEADER + GOOD_STAGE.replace("R1 vcc in 10k", "R1 vcc in 1T")
          .replace("C1 in 0 100n", "C1 in 0 1e-18")}),
        (Case("design_resistor_extreme", ["design", "--rail", "5V", "--family", "HC",
                                          "--resistor", "1e30"], 2,
              "outside what drc evaluates", check=_no_raw_numbers), {}),
        (Case("reader_limit_zero", ["check", "b.cir", "--max-elements", "0"], 2,
              "--max-elements: expected a whole number >= 1"), BOARD),
    ]
    return cases
