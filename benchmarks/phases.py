"""Where one check spends its time and memory: CPU seconds and resident memory per phase.

    python benchmarks/phases.py BOARD [--with-fixes] [drc check options...]

runs `drc check BOARD --format json --no-cache --no-fixes --max-elements 10000000`
(plus the options given; `--with-fixes` leaves the fix search on) in this process and prints, for each phase of the
pipeline (read, classify, survey, analyse, rules, fixes, report), its CPU time and
the resident memory before and after it, then the start-up (interpreter and
imports up to the first phase) and the process' peak. The phases are the
pipeline's own functions, timed where they are called; nothing else changes.
benchmarks/run.py gives the ratios; this script says which phase a ratio that
is short of its goal should be looked for in.
"""

from __future__ import annotations

import os
import resource
import sys
import time

import drc.board.classify as classify_module
import drc.board.coverage as coverage_module
import drc.checks as checks_module
import drc.pipeline as pipeline
from drc.cli.parser import main

PHASES = (  # (module, function, phase name)
    (pipeline, "read_board", "read"),
    (classify_module, "classify", "classify"),
    (coverage_module, "survey_board", "survey"),
    (pipeline, "analyse_board", "analyse"),
    (checks_module, "run_rules", "rules"),
    (pipeline, "_with_fixes", "fixes"),
    (pipeline, "board_report", "report records"),
)
ROWS: list[tuple[str, float, float, float]] = []
FIRST: list[float] = []


def resident_mb() -> float:
    with open("/proc/self/statm", encoding="ascii") as f:
        return int(f.read().split()[1]) * resource.getpagesize() / 2**20


def peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # kB on Linux


def timed(module, name: str, phase: str) -> None:
    inner = getattr(module, name)

    def wrapper(*args, **kwargs):
        if not FIRST:  # the first phase starts: what came before is start-up
            FIRST.append(time.process_time())
        before, t0 = resident_mb(), time.process_time()
        out = inner(*args, **kwargs)
        ROWS.append((phase, time.process_time() - t0, before, resident_mb()))
        return out

    setattr(module, name, wrapper)


def run(argv: list[str]) -> None:
    for module, name, phase in PHASES:
        timed(module, name, phase)
    args = ["check", argv[0], "--format", "json", "--no-cache", "--no-fixes", "--max-elements", "10000000",
            *argv[1:]]
    if "--with-fixes" in args:  # this script's own option: the fix search on
        args.remove("--no-fixes")
        args.remove("--with-fixes")
    # The report goes to the null device, as the benchmark's children send theirs to a pipe
    # it discards: the writing is timed, and no copy of the report is held in memory.
    sys.stdout.flush()
    saved = os.dup(1)
    with open(os.devnull, "wb") as null:
        os.dup2(null.fileno(), 1)
    try:
        main(args)
    except SystemExit:
        pass
    finally:
        sys.stdout.flush()
        os.dup2(saved, 1)
        os.close(saved)
    total = time.process_time()  # CPU since the process started: interpreter start-up included
    start_up = FIRST[0] if FIRST else total
    print(f"{'phase':16s} {'CPU s':>7s} {'MB before':>10s} {'MB after':>9s}")
    print(f"{'start-up':16s} {start_up:7.2f}")
    for phase, cpu, before, after in ROWS:
        print(f"{phase:16s} {cpu:7.2f} {before:10.0f} {after:9.0f}")
    rest = total - start_up - sum(r[1] for r in ROWS)
    print(f"{'writing, other':16s} {rest:7.2f}")
    print(f"{'total':16s} {total:7.2f}   peak {peak_mb():.0f} MB")


if __name__ == "__main__":
    if len(sys.argv) < 2:
        sys.exit(__doc__)
    run(sys.argv[1:])
