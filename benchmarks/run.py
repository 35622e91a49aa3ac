"""The speed benchmarks of the README, side by side in one run.

For each size (default 10k, 100k, 300k, 1M flattened elements) it generates
a seeded board with benchmarks/generate.py (--ngspice-safe, so ngspice reads
the very same file; contacts as X instances, every stage kind but firmware,
a few thousand contacts at 100k, mostly flat lines) and takes the median of
several runs of:

  check      `drc check FILE --format json --no-fixes` as a subprocess (the
             console script if installed, else `python -m drc.cli`; start-up
             included): read, flatten, trace, analyse every stage at its
             corners, every rule, JSON out;
  +fixes     the same with the standard-value fix search (the default of
             `drc check`), at the sizes given by --fix-sizes;
  ngspice    `ngspice -n -b` on the deck with a `.control / quit / .endc`
             block: parse and expand only;
  split      bare Python in-process: read the file, split every line into words.

Peak memory is the child's maximum resident set (resource.getrusage of
children, one child per measurement). Children run from compiled bytecode
(a cache prefix in the temporary folder, warmed once), as an installed
package does. Then the archive (1000 demo-sized boards, `drc check DIR
--jobs 2`, start-up included, boards/s; with the fix search, the default,
and with --no-fixes) and stage
analysis alone (10,000 stages with distinct values, `analysis.analyse_stages`,
in-process; plus the same count of repeated stages, as a keypad has them).

    python benchmarks/run.py                  # everything, writes benchmarks/results.md
    python benchmarks/run.py --sizes 10000 --runs 1 --archive 100
"""

from __future__ import annotations

import argparse
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
sys.path.insert(0, str(HERE))
from generate import default_contacts, generate  # noqa: E402

_ENV = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
# Children run from compiled bytecode, as an installed package does (pip compiles
# it): written once, outside the source tree, even where the environment says
# not to write bytecode (PYTHONDONTWRITEBYTECODE would make every run compile drc).
_ENV.pop("PYTHONDONTWRITEBYTECODE", None)
_ENV["PYTHONPYCACHEPREFIX"] = os.path.join(tempfile.gettempdir(), "drc-bench-pycache")


def warm_bytecode() -> None:
    """One untimed run that leaves the compiled modules in the cache prefix."""
    subprocess.run(drc_command() + ["--version"], capture_output=True, env=_ENV)
    subprocess.run([sys.executable, "-c", "import drc.pipeline, drc.cli, drc.cli.commands, drc.netlist.reader, "
                    "drc.board.classify, drc.board.recognise, drc.analysis.stage_analysis, drc.checks, "
                    "drc.design.fixes, drc.report.json_report, drc.library.catalogue"], capture_output=True, env=_ENV)


def drc_command() -> list[str]:
    """The console script when installed, else the module."""
    exe = shutil.which("drc")
    return [exe] if exe else [sys.executable, "-m", "drc.cli"]


def _child(cmd: list[str], cwd: str, env=None) -> tuple[float, float, subprocess.CompletedProcess]:
    """(seconds, peak RSS MB of this child, process). One child at a time, so the
    children's maximum RSS after it is this child's (it only grows)."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    start = time.perf_counter()
    proc = subprocess.run(cmd, capture_output=True, text=True, cwd=cwd, env=env or _ENV)
    seconds = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    peak = max(after, before) / 1024.0  # kB on Linux
    return seconds, (peak if after > before else float("nan")), proc


def _peak_via_time(cmd: list[str], cwd: str) -> float:
    """Peak RSS (MB) of one run through /usr/bin/time -v, when available."""
    if not Path("/usr/bin/time").exists():
        return float("nan")
    proc = subprocess.run(["/usr/bin/time", "-v"] + cmd, capture_output=True, text=True, cwd=cwd, env=_ENV)
    for line in proc.stderr.splitlines():
        if "Maximum resident set size" in line:
            return int(line.split(":")[1]) / 1024.0
    return float("nan")


@dataclass
class Timed:
    seconds: float
    peak_mb: float


def time_check(path: Path, runs: int, fixes: bool) -> tuple[Timed, str]:
    cmd = drc_command() + ["check", str(path), "--format", "json", "--report-only"]
    if not fixes:
        cmd.append("--no-fixes")
    # the reader refuses more than 1M flattened elements by default (a safety limit)
    cmd += ["--max-elements", "10000000"]
    times, out = [], ""
    for _ in range(runs):
        seconds, _, proc = _child(cmd, str(path.parent))
        if proc.returncode not in (0, 1):
            raise RuntimeError(f"drc check failed ({proc.returncode}): {proc.stderr[-2000:]}")
        times.append(seconds)
        out = proc.stdout
    return Timed(statistics.median(times), _peak_via_time(cmd, str(path.parent))), out


def ngspice_deck(path: Path, folder: Path) -> Path:
    text = path.read_text(encoding="utf-8").rstrip()
    if text.lower().endswith(".end"):
        text = text[:-4]
    deck = folder / (path.stem + "_deck.cir")
    deck.write_text(text + "\n.control\nquit\n.endc\n.end\n", encoding="utf-8")
    return deck


def time_ngspice(path: Path, runs: int) -> Timed | None:
    exe = shutil.which("ngspice")
    if exe is None:
        return None
    with tempfile.TemporaryDirectory() as tmp:
        deck = ngspice_deck(path, Path(tmp))
        cmd = [exe, "-n", "-b", str(deck)]
        env = dict(os.environ, HOME=tmp)
        times = [_child(cmd, tmp, env)[0] for _ in range(runs)]
        return Timed(statistics.median(times), _peak_via_time(cmd, tmp))


def time_split(path: Path, runs: int) -> float:
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        with open(path, encoding="utf-8") as handle:
            words = [line.split() for line in handle]
        times.append(time.perf_counter() - start)
        del words
    return statistics.median(times)


def time_archive(count: int, jobs: int, runs: int, tmp: Path, fixes: bool = True) -> tuple[float, int]:
    """boards/s for `drc check DIR --jobs N` over `count` demo-sized boards."""
    folder = tmp / "archive"
    folder.mkdir(exist_ok=True)
    for i in range(count):
        path = folder / f"board{i:04d}.cir"
        if not path.exists():
            path.write_text(generate(120, 1000 + i, contacts=6), encoding="utf-8")
    cmd = drc_command() + ["check", str(folder), "--format", "json", "--report-only", "--jobs", str(jobs)]
    if not fixes:
        cmd.append("--no-fixes")
    times = []
    for _ in range(runs):
        seconds, _, proc = _child(cmd, str(tmp))
        if proc.returncode not in (0, 1):
            raise RuntimeError(f"archive check failed: {proc.stderr[-2000:]}")
        times.append(seconds)
    return count / statistics.median(times), count


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


def _fmt(x: float | None, unit: str = "s") -> str:
    if x is None or x != x:
        return "n/a"
    return f"{x:.2f} {unit}" if unit == "s" else f"{x:.0f} {unit}"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="drc speed benchmarks")
    parser.add_argument("--sizes", type=int, nargs="+", default=[10_000, 100_000, 300_000, 1_000_000])
    parser.add_argument("--fix-sizes", type=int, nargs="*", default=[10_000],
                        help="sizes also timed with the fix search on")
    parser.add_argument("--runs", type=int, default=3, help="runs per measurement (median)")
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--archive", type=int, default=1000, help="boards in the archive run (0: skip)")
    parser.add_argument("--jobs", type=int, default=2)
    parser.add_argument("--stages", type=int, default=10_000, help="stages for the analysis-alone run")
    parser.add_argument("--output", default=str(HERE / "results.md"))
    args = parser.parse_args(argv)

    warm_bytecode()
    rows, notes = [], []
    checks: dict[int, Timed] = {}
    spices: dict[int, Timed] = {}
    with tempfile.TemporaryDirectory() as tmpname:
        tmp = Path(tmpname)
        for size in args.sizes:
            path = tmp / f"board{size}.cir"
            path.write_text(generate(size, args.seed, ngspice_safe=True), encoding="utf-8")
            runs = args.runs if size < 1_000_000 else max(1, min(args.runs, 2))
            check, out = time_check(path, runs, fixes=False)
            checks[size] = check
            import json
            doc = json.loads(out)
            stages = sum(len(b.get("stages", [])) for b in doc["boards"])
            fix = time_check(path, 1, fixes=True)[0] if size in args.fix_sizes else None
            spice = time_ngspice(path, runs)
            if spice:
                spices[size] = spice
            split = time_split(path, runs)
            lines = sum(1 for _ in open(path, encoding="utf-8"))
            rows.append((size, lines, default_contacts(size), stages, check, fix, spice, split))
            print(f"{size}: check {check.seconds:.2f} s, ngspice "
                  f"{spice.seconds if spice else float('nan'):.2f} s, split {split:.3f} s", flush=True)
        archive = time_archive(args.archive, args.jobs, max(1, min(args.runs, 2)), tmp) if args.archive else None
        archive_plain = (time_archive(args.archive, args.jobs, max(1, min(args.runs, 2)), tmp, fixes=False)
                         if args.archive else None)
        if archive:
            print(f"archive: {archive[0]:.1f} boards/s, --no-fixes {archive_plain[0]:.1f} boards/s", flush=True)
    distinct, repeated = stage_analysis(args.stages) if args.stages else (None, None)

    table = ["| elements (lines) | contacts / stages | drc check --no-fixes (peak) | drc check with fixes "
             "| ngspice parse (peak) | Python read+split | check / ngspice | check / split |",
             "|---|---|---|---|---|---|---|---|"]
    for size, lines, contacts, stages, check, fix, spice, split in rows:
        ratio_spice = f"{check.seconds / spice.seconds:.2f}" if spice else "n/a"
        table.append(f"| {size:,} ({lines:,}) | {contacts:,} / {stages:,} | {_fmt(check.seconds)} "
                     f"({_fmt(check.peak_mb, 'MB')}) | {_fmt(fix.seconds) if fix else 'not run'} | "
                     f"{_fmt(spice.seconds) if spice else 'n/a'} ({_fmt(spice.peak_mb, 'MB') if spice else 'n/a'}) | "
                     f"{split:.3f} s | {ratio_spice} | {check.seconds / split:.1f} |")
    goals = []
    if 100_000 in checks and 100_000 in spices:
        r = checks[100_000].seconds / spices[100_000].seconds
        goals.append(f"- check(100k) / ngspice(100k) = {r:.2f} (goal <= 0.5): {'met' if r <= 0.5 else 'not met'}")
        split100 = [row for row in rows if row[0] == 100_000][0][7]
        r2 = checks[100_000].seconds / split100
        goals.append(f"- check(100k) / split(100k) = {r2:.1f} (goal <= 4): {'met' if r2 <= 4 else 'not met'}")
    if 100_000 in checks and 1_000_000 in checks:
        r = checks[1_000_000].seconds / checks[100_000].seconds
        goals.append(f"- time(1M) / time(100k) = {r:.1f} (goal <= 11): {'met' if r <= 11 else 'not met'}")
    if 1_000_000 in checks and 300_000 in spices:
        a, b = checks[1_000_000].peak_mb, spices[300_000].peak_mb
        goals.append(f"- peak memory check(1M) = {a:.0f} MB vs ngspice(300k) = {b:.0f} MB: "
                     f"{'met' if a < b else 'not met'}")
    if archive:
        goals.append(f"- archive: {archive[1]} demo-sized boards, --jobs {args.jobs}: {archive[0]:.1f} boards/s "
                     f"(goal >= 50): {'met' if archive[0] >= 50 else 'not met'}; with --no-fixes "
                     f"{archive_plain[0]:.1f} boards/s")
    if distinct is not None:
        goals.append(f"- stage analysis alone: {args.stages:,} stages with distinct values in {distinct:.2f} s "
                     f"(goal < 1 s): {'met' if distinct < 1 else 'not met'}; "
                     f"{args.stages:,} stages repeating 40 designs in {repeated:.2f} s")
    head = (f"Machine: {platform.machine()}, {os.cpu_count()} CPUs, Python {platform.python_version()}, "
            f"{time.strftime('%Y-%m-%d')}; medians of {args.runs} runs (1M: at most 2); "
            f"seed {args.seed}; command `{' '.join(Path(c).name for c in drc_command())} check FILE "
            f"--format json`; start-up included, from compiled bytecode as installed.")
    text = "\n".join(["# drc benchmarks", "", head, ""] + table + ["", "Goals:", ""] + goals + notes) + "\n"
    print(text)
    Path(args.output).write_text(text, encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
