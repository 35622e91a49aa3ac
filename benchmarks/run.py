"""Every speed ratio of the README, measured side by side in one run.

Each figure is the median of several fresh processes (3 by default), run one
at a time; times are the child's CPU time (user + system, so that other
load on a shared machine counts less), except where parallelism is the point
(`--jobs`), which is wall time. Every child runs the `drc` console script
beside the interpreter (never a version manager's shim: see `drc_command`)
from compiled bytecode (a cache prefix in the temporary folder, warmed
once), as an installed package does, with its result cache in a temporary folder (never the user's)
and `--no-cache` unless the measurement is the cache itself. ngspice reads
the very same deck with a `.control / quit / .endc` block: parse and expand
only (`ngspice -n -b`).

What is measured (the goals of the speed issue, each a ratio):

  text / json      the 100k board, `--format text` piped vs `--format json` (<= 1.3)
  small board      each demo board (boards/lx24), `drc check BOARD` (text, fixes on,
                   no cache) vs ngspice's parse of the same deck made readable
                   for ngspice (2-node switches as X instances, a dummy
                   subcircuit per unknown part) (<= 12); also with the cache warm
  re-run           200 demo boards (boards/lx24 copied 50 times), a second check
                   with the cache warm vs the first with it empty; the reports
                   must be byte-identical (<= 0.25)
  workers          the same 200 boards, `--jobs 2` vs `--jobs 1`, wall (<= 0.75);
                   also on 200 generated demo-sized boards (distinct values)
  fixes            the 10k board and the 200 demo boards, with the fix search vs
                   `--no-fixes` (<= 1.5)
  big board        100k elements, `--format json --no-fixes` vs ngspice: the
                   generated board of benchmarks/generate.py (<= 2) and a flat
                   board with one contact per 14 elements (<= 2.5)
  memory           peak resident memory of the 1M-element check (< 500 MB)

plus the size table (10k to 1M elements) and stage analysis alone.

    python benchmarks/run.py     # everything: writes benchmarks/results.md and the README's speed section

A reduced run that takes every path at small sizes (a proof that the script
works, not figures to publish; written elsewhere, the README is left alone):

    python benchmarks/run.py --sizes 10000 --big 10000 --runs 1 --archive 20 \
        --stages 1000 --output /tmp/results.md
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import random
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
RESULTS = HERE / "results.md"
README = ROOT / "README.md"
# The README's speed section holds results.md's tables between these two lines.
BEGIN, END = "<!-- benchmarks/results.md: begin -->", "<!-- benchmarks/results.md: end -->"
sys.path.insert(0, str(HERE))
from generate import default_contacts, generate  # noqa: E402

# The run's scratch folder (boards, decks, the children's result cache), made by main().
_TMP = Path(tempfile.gettempdir()) / "drc-bench-unset"
_ENV = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
# Children run from compiled bytecode, as an installed package does (pip compiles
# it): written once, outside the source tree, even where the environment says
# not to write bytecode (PYTHONDONTWRITEBYTECODE would make every run compile drc).
_ENV.pop("PYTHONDONTWRITEBYTECODE", None)
_ENV["PYTHONPYCACHEPREFIX"] = os.path.join(tempfile.gettempdir(), "drc-bench-pycache")
_ENV.pop("COVERAGE_PROCESS_START", None)

# One child, and the peak resident memory of that child alone (kB on Linux).
_PEAK = ("import resource, subprocess, sys; p = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL, "
         "stderr=subprocess.DEVNULL); print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss); "
         "sys.exit(p.returncode)")


def drc_command() -> list[str]:
    """The console script as an install runs it: the one beside this interpreter, else the
    first on PATH, else the module. The first on PATH may be a version manager's shim (a
    shell script that finds the interpreter: pyenv's costs about 70 ms of CPU per run,
    more than ngspice's whole parse of a demo board), which is not drc's time."""
    beside = Path(sys.executable).parent / "drc"
    if beside.is_file() and os.access(beside, os.X_OK):
        return [str(beside)]
    exe = shutil.which("drc")
    return [exe] if exe else [sys.executable, "-m", "drc.cli"]


def warm_bytecode() -> None:
    """Untimed runs that leave the compiled modules in the cache prefix."""
    subprocess.run(drc_command() + ["--version"], capture_output=True, env=_ENV)
    board = ROOT / "boards" / "lx24" / "front_panel.cir"
    for fmt in ("text", "json"):
        subprocess.run(drc_command() + ["check", str(board), "--format", fmt, "--no-cache"],
                       capture_output=True, env=_ENV)


@dataclass
class Run:
    cpu: float  # seconds of CPU (user + system), children included
    wall: float
    status: int
    stdout: bytes


def run_once(cmd: list[str], cwd: Path | None = None, env: dict | None = None) -> Run:
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    proc = subprocess.run(cmd, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, cwd=cwd, env=env or _ENV)
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return Run(cpu, wall, proc.returncode, proc.stdout)


@dataclass
class Measure:
    cpu: float
    wall: float
    stdout: bytes


def measure(cmd: list[str], runs: int, cwd: Path | None = None, env: dict | None = None,
            before_each=None, ok=(0, 1)) -> Measure:
    """Medians of `runs` fresh processes (`before_each()` is called, untimed, before each)."""
    got = []
    for _ in range(runs):
        if before_each:
            before_each()
        r = run_once(cmd, cwd, env)
        if r.status not in ok:
            raise RuntimeError(f"{' '.join(cmd)} exited {r.status}")
        got.append(r)
    return Measure(statistics.median(r.cpu for r in got), statistics.median(r.wall for r in got), got[-1].stdout)


def peak_mb(cmd: list[str]) -> float:
    proc = subprocess.run([sys.executable, "-c", _PEAK, *cmd], capture_output=True, text=True, env=_ENV)
    try:
        return int(proc.stdout.split()[-1]) / 1024.0
    except (ValueError, IndexError):
        return float("nan")


def check_cmd(path: Path, fmt: str = "json", fixes: bool = False, cache: bool = False, *extra: str) -> list[str]:
    cmd = drc_command() + ["check", str(path), "--format", fmt, "--report-only",
                           "--max-elements", "10000000", *extra]
    if not fixes:
        cmd.append("--no-fixes")
    if not cache:
        cmd.append("--no-cache")
    return cmd


# ------------------------------------------------------------------ ngspice

def ngspice_deck(text: str, name: str) -> Path:
    """The deck as ngspice reads it: a `.control / quit / .endc` block before `.end`;
    2-node switches become X instances and every unknown subcircuit gets a dummy
    definition (one resistor), so ngspice expands everything drc reads."""
    lines: list[str] = []
    for raw in text.splitlines():
        if raw.startswith("+") and lines:
            lines[-1] += " " + raw[1:]
        else:
            lines.append(raw)
    while lines and not lines[-1].strip():
        lines.pop()
    if lines and lines[-1].strip().lower() == ".end":
        lines.pop()
    defined = {ln.split()[1].upper() for ln in lines[1:] if ln.lower().startswith(".subckt")}
    out, needed = [lines[0]], {}
    for line in lines[1:]:
        words = line.split()
        if words and words[0][0] in "Ss" and len(words) == 4 and not line.lstrip().startswith("*"):
            line, words = "X" + line, ["X" + words[0]] + words[1:]
        if words and words[0][0] in "Xx" and words[-1].upper() not in defined:
            ports = len([w for w in words[1:-1] if "=" not in w])
            needed[words[-1].upper()] = max(ports, needed.get(words[-1].upper(), 0))
        out.append(line)
    for part, ports in needed.items():
        out.append(f".subckt {part} " + " ".join(f"p{k}" for k in range(1, ports + 1)))
        out.append("Rq p1 p2 1meg" if ports >= 2 else "Rq p1 0 1meg")
        out.append(f".ends {part}")
    deck = _TMP / f"{name}_ngspice.cir"
    deck.write_text("\n".join(out + [".control", "quit", ".endc", ".end"]) + "\n", encoding="utf-8")
    return deck


def time_ngspice(deck: Path, runs: int) -> Measure | None:
    exe = shutil.which("ngspice")
    if exe is None:
        return None
    home = _TMP / "ngspice-home"
    home.mkdir(exist_ok=True)
    return measure([exe, "-n", "-b", str(deck)], runs, cwd=home, env=dict(os.environ, HOME=str(home)))


# ------------------------------------------------------------------ archives

def demo_archive(count: int) -> Path:
    """`count` boards: the demo boards copied in turn (with their config), as a folder."""
    folder = _TMP / "demo-archive"
    if not folder.exists():
        folder.mkdir()
        boards = sorted((ROOT / "boards" / "lx24").glob("*.cir"))
        for i in range(count):
            board = boards[i % len(boards)]
            shutil.copy(board, folder / f"{board.stem}_{i // len(boards):03d}.cir")
        shutil.copy(ROOT / "boards" / "lx24" / "drc.toml", folder / "drc.toml")
    return folder


def generated_archive(count: int) -> Path:
    """`count` generated demo-sized boards (120 elements, 6 contacts), each its own values."""
    folder = _TMP / "generated-archive"
    if not folder.exists():
        folder.mkdir()
        for i in range(count):
            (folder / f"board{i:04d}.cir").write_text(generate(120, 1000 + i, contacts=6), encoding="utf-8")
    return folder


def archive_cmd(folder: Path, jobs: int, fixes: bool = True, cache: bool = False) -> list[str]:
    cmd = drc_command() + ["check", str(folder), "--format", "json", "--report-only", "--jobs", str(jobs)]
    if not fixes:
        cmd.append("--no-fixes")
    if not cache:
        cmd.append("--no-cache")
    return cmd


def empty_cache() -> None:
    shutil.rmtree(_ENV["DRC_CACHE_DIR"], ignore_errors=True)


def rerun(folder: Path, runs: int) -> tuple[Measure, Measure, bool]:
    """(first check with an empty cache, second with it warm, reports byte-identical)."""
    firsts, seconds, same = [], [], True
    for _ in range(runs):
        empty_cache()
        first = run_once(archive_cmd(folder, 1, cache=True))
        second = run_once(archive_cmd(folder, 1, cache=True))
        fresh = run_once(archive_cmd(folder, 1, cache=False))
        same = same and first.stdout == second.stdout == fresh.stdout
        firsts.append(first)
        seconds.append(second)
    med = lambda rs: Measure(statistics.median(r.cpu for r in rs), statistics.median(r.wall for r in rs), b"")  # noqa: E731
    return med(firsts), med(seconds), same


# ------------------------------------------------------------------ stage analysis alone

def stage_analysis(count: int) -> tuple[float, float]:
    """(seconds for `count` distinct stages, seconds for `count` repeated ones), in-process."""
    sys.path.insert(0, str(ROOT))
    from drc.analysis.stage_analysis import analyse_stages
    stages, rxs = stage_set(count)
    analyse_stages(stages[:50], rxs[:50])  # warm caches and imports
    start = time.perf_counter()
    analyse_stages(stages, rxs)
    distinct = time.perf_counter() - start
    few = [stages[i % 40] for i in range(count)]
    start = time.perf_counter()
    analyse_stages(few, [rxs[i % 40] for i in range(count)])
    repeated = time.perf_counter() - start
    return distinct, repeated


def stage_set(count: int, seed: int = 5):
    """`count` stages of the generated board's kinds, each with its own random values."""
    from drc.analysis.receiver import receiver_electrical
    from drc.board.classify import classify
    from drc.board.recognise import stages_for_board
    from drc.config.settings import Config
    from drc.design.fixes import with_values
    from drc.netlist.reader import read_netlist_text
    from drc.pipeline import library
    lib = library()
    text = generate(2000, seed, contacts=40)
    netlist = read_netlist_text(text, "<bench>", keep_as_part=lib.is_known_subcircuit)
    config = Config()
    board = classify(netlist, lib, config, default_bounce_s=config.default_bounce_s)
    base = list(stages_for_board(board, config))
    rng = random.Random(seed)
    stages, rxs = [], []
    cache = {}
    for i in range(count):
        st = base[i % len(base)]
        values = {r.designator: r.ohms * rng.uniform(0.5, 2.0) for r in st.circuit.resistors}
        values.update({c.designator: c.farads * rng.uniform(0.5, 2.0) for c in st.circuit.capacitors})
        st = with_values(st, values)
        rec = st.receiver
        key = (rec.family, rec.supply_v, rec.schmitt)
        if key not in cache:
            cache[key] = receiver_electrical(lib, *key)
        stages.append(st)
        rxs.append(cache[key])
    return stages, rxs


# ------------------------------------------------------------------ the run

@dataclass
class Goal:
    what: str
    value: float
    limit: float
    detail: str
    below: bool = True  # the goal is value <= limit (else value >= limit)

    def line(self) -> str:
        met = self.value <= self.limit if self.below else self.value >= self.limit
        sign = "<=" if self.below else ">="
        return (f"| {self.what} | {self.value:.2f} | {sign} {self.limit:g} | {'met' if met else 'not met'} "
                f"| {self.detail} |")


def _k(size: int) -> str:
    """1M, 100k, 10k, 2500: how the goals name a board's size."""
    if size % 1_000_000 == 0:
        return f"{size // 1_000_000}M"
    return f"{size // 1000}k" if size % 1000 == 0 else f"{size:,}"


def _s(x: float) -> str:
    return f"{x:.2f} s" if x == x else "n/a"


def size_rows(args, goals: list[Goal]) -> list[str]:
    rows = ["| elements (lines) | contacts / stages | drc check --no-fixes: CPU (peak) | with fixes "
            "| ngspice parse: CPU (peak) | check / ngspice |", "|---|---|---|---|---|---|"]
    for size in args.sizes:
        path = _TMP / f"board{size}.cir"
        path.write_text(generate(size, args.seed, ngspice_safe=True), encoding="utf-8")
        runs = args.runs if size < 1_000_000 else max(1, min(args.runs, 2))
        check = measure(check_cmd(path), runs)
        stages = sum(len(b.get("stages", [])) for b in json.loads(check.stdout)["boards"])
        peak = peak_mb(check_cmd(path))
        fixes = measure(check_cmd(path, fixes=True), runs) if size in args.fix_sizes else None
        deck = ngspice_deck(path.read_text(encoding="utf-8"), path.stem)
        spice = time_ngspice(deck, runs)
        spice_peak = peak_mb(["ngspice", "-n", "-b", str(deck)]) if spice else float("nan")
        lines = sum(1 for _ in open(path, encoding="utf-8"))
        ratio = check.cpu / spice.cpu if spice else float("nan")
        rows.append(f"| {size:,} ({lines:,}) | {default_contacts(size):,} / {stages:,} | {_s(check.cpu)} "
                    f"({peak:.0f} MB) | {_s(fixes.cpu) if fixes else 'not run'} | "
                    f"{_s(spice.cpu) if spice else 'n/a'} ({spice_peak:.0f} MB) | {ratio:.2f} |")
        print(rows[-1], flush=True)
        if size == args.big:
            if spice:
                goals.append(Goal(f"big board: {_k(size)} generated, check (JSON, no fixes) / ngspice", ratio,
                                  2.0, f"{_s(check.cpu)} / {_s(spice.cpu)}"))
            text = measure(check_cmd(path, "text"), runs)
            goals.append(Goal(f"text / JSON, {_k(size)} board, piped", text.cpu / check.cpu, 1.3,
                              f"{_s(text.cpu)} / {_s(check.cpu)}"))
        if fixes:
            goals.append(Goal(f"fixes: {size:,} board, with / without", fixes.cpu / check.cpu, 1.5,
                              f"{_s(fixes.cpu)} / {_s(check.cpu)}"))
        if size == max(args.sizes):
            goals.append(Goal(f"memory: peak of the {_k(size)} check, MB", peak, 500, f"{peak:.0f} MB"))
    return rows


def flat_board(args, goals: list[Goal]) -> None:
    size = args.big
    path = _TMP / f"flat{size}.cir"
    path.write_text(generate(size, args.seed, ngspice_safe=True, contacts=size // 14, sheet_share=0.0),
                    encoding="utf-8")
    check = measure(check_cmd(path), args.runs)
    spice = time_ngspice(ngspice_deck(path.read_text(encoding="utf-8"), path.stem), args.runs)
    if spice:
        goals.append(Goal(f"big board: {_k(size)} flat, one contact per 14 elements, check / ngspice",
                          check.cpu / spice.cpu, 2.5, f"{_s(check.cpu)} / {_s(spice.cpu)}"))


def small_boards(args, goals: list[Goal]) -> None:
    for board in sorted((ROOT / "boards" / "lx24").glob("*.cir")):
        cmd = drc_command() + ["check", str(board), "--report-only"]
        cold = measure(cmd + ["--no-cache"], args.runs)
        plain = measure(cmd + ["--no-cache", "--no-fixes"], args.runs)
        empty_cache()
        run_once(cmd)  # fills the cache
        warm = measure(cmd, args.runs)
        spice = time_ngspice(ngspice_deck(board.read_text(encoding="utf-8"), board.stem), max(args.runs, 9))
        if spice:
            goals.append(Goal(f"small board: {board.name}, check / ngspice", cold.cpu / spice.cpu, 12,
                              f"{_s(cold.cpu)} / {spice.cpu * 1000:.0f} ms; --no-fixes {_s(plain.cpu)} "
                              f"({plain.cpu / spice.cpu:.1f}x); cache warm {_s(warm.cpu)} "
                              f"({warm.cpu / spice.cpu:.1f}x)"))


def archives(args, goals: list[Goal]) -> None:
    demo = demo_archive(args.archive)
    first, second, same = rerun(demo, args.runs)
    goals.append(Goal(f"re-run: {args.archive} demo boards, warm cache / first check", second.cpu / first.cpu,
                      0.25, f"{_s(second.cpu)} / {_s(first.cpu)}; reports byte-identical: {'yes' if same else 'NO'}"))
    one = measure(archive_cmd(demo, 1), args.runs)
    two = measure(archive_cmd(demo, args.jobs), args.runs)
    goals.append(Goal(f"workers: {args.archive} demo boards, --jobs {args.jobs} / --jobs 1 (wall)",
                      two.wall / one.wall, 0.75, f"{_s(two.wall)} / {_s(one.wall)}"))
    plain = measure(archive_cmd(demo, 1, fixes=False), args.runs)
    goals.append(Goal(f"fixes: {args.archive} demo boards, with / without", one.cpu / plain.cpu, 1.5,
                      f"{_s(one.cpu)} / {_s(plain.cpu)}"))
    if args.quick:
        return
    generated = generated_archive(args.archive)
    one = measure(archive_cmd(generated, 1, fixes=False), args.runs)
    two = measure(archive_cmd(generated, args.jobs, fixes=False), args.runs)
    goals.append(Goal(f"workers: {args.archive} generated demo-sized boards (distinct values, --no-fixes), "
                      f"--jobs {args.jobs} / --jobs 1 (wall)", two.wall / one.wall, 0.75,
                      f"{_s(two.wall)} / {_s(one.wall)}"))


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="drc speed benchmarks")
    parser.add_argument("--sizes", type=int, nargs="+", default=[10_000, 100_000, 1_000_000])
    parser.add_argument("--big", type=int, default=100_000,
                        help="the size of the big-board and text/JSON goals and of the flat board (one of --sizes)")
    parser.add_argument("--fix-sizes", type=int, nargs="*", default=[10_000],
                        help="sizes also timed with the fix search on")
    parser.add_argument("--runs", type=int, default=3, help="fresh processes per measurement (median)")
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--archive", type=int, default=200, help="boards in the archive runs")
    parser.add_argument("--jobs", type=int, default=2)
    parser.add_argument("--stages", type=int, default=10_000, help="stages for the analysis-alone run (0: skip)")
    parser.add_argument("--quick", action="store_true", help="skip the flat board and the generated archive")
    parser.add_argument("--output", default=str(RESULTS),
                        help="where the results go; only the default also updates the README's speed section")
    args = parser.parse_args(argv)
    if args.big not in args.sizes:
        parser.error("--big must be one of --sizes")

    global _TMP
    _TMP = Path(tempfile.mkdtemp(prefix="drc-bench-"))
    _ENV["DRC_CACHE_DIR"] = str(_TMP / "cache")  # never the user's cache folder
    warm_bytecode()
    goals: list[Goal] = []
    try:
        rows = size_rows(args, goals)
        if not args.quick:
            flat_board(args, goals)
        small_boards(args, goals)
        archives(args, goals)
    finally:
        shutil.rmtree(_TMP, ignore_errors=True)
    distinct, repeated = stage_analysis(args.stages) if args.stages else (None, None)

    head = (f"Machine: {platform.machine()}, {os.cpu_count()} CPUs, Python {platform.python_version()}, "
            f"{time.strftime('%Y-%m-%d')}, load average before the run "
            f"{os.getloadavg()[0]:.1f}; medians of {args.runs} fresh processes (1M: at most 2); seed "
            f"{args.seed}; CPU time (user + system) unless marked wall; start-up included, from compiled "
            f"bytecode as installed; `--no-cache` except where the cache is measured.")
    table = ["| goal | ratio | limit | | measured |", "|---|---|---|---|---|"] + [g.line() for g in goals]
    extra = []
    if distinct is not None:
        extra = ["", f"Stage analysis alone (in-process): {args.stages:,} stages with distinct values in "
                 f"{distinct:.2f} s; {args.stages:,} stages repeating 40 designs in {repeated:.2f} s."]
    body = [head, "", *table, "", "Sizes (generated boards, `drc check FILE --format json --no-fixes`):", "",
            *rows, *extra]
    text = "\n".join(["# drc benchmarks", "", *body]) + "\n"
    print(text)
    output = Path(args.output)
    output.write_text(text, encoding="utf-8")
    if output.resolve() == RESULTS:
        update_readme("\n".join(body))
    return 0


def update_readme(body: str) -> None:
    """Put the results' tables between the README's markers (the README's speed table is results.md's)."""
    readme = README.read_text(encoding="utf-8")
    start, end = readme.find(BEGIN), readme.find(END)
    if start < 0 or end < start:
        print(f"README.md has no {BEGIN} ... {END} block: not updated", file=sys.stderr)
        return
    README.write_text(readme[: start + len(BEGIN)] + "\n" + body + "\n" + readme[end:], encoding="utf-8")


if __name__ == "__main__":
    sys.exit(main())
