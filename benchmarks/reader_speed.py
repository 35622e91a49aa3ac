"""Time drc's netlist reader against ngspice's parser and a bare Python split.

For each size, generates a board with benchmarks/generate.py (the ngspice-safe
variant, so ngspice reads the same file), then takes the median of 3 runs of:
  drc      read_netlist (read, parse, flatten), in a fresh process each run,
           so imports are counted as a command-line user pays them;
  ngspice  `ngspice -n -b` on the deck with a `.control / quit / .endc` block
           (parse and expand only, no analysis);
  split    bare Python: read the file and split every line into words.

    python benchmarks/reader_speed.py --sizes 10000 100000
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))
from generate import generate  # noqa: E402

_DRC_RUN = ("import sys, time; t = time.perf_counter(); "
            "from drc.netlist.reader import read_netlist; n = read_netlist(sys.argv[1]); "
            "print(time.perf_counter() - t, len(n.elements))")


def _median(runs: list[float]) -> float:
    return statistics.median(runs)


def time_drc(path: Path) -> tuple[float, int]:
    runs, count = [], 0
    for _ in range(3):
        out = subprocess.run([sys.executable, "-c", _DRC_RUN, str(path)], capture_output=True,
                             text=True, check=True, cwd=ROOT,
                             env=dict(os.environ, PYTHONPATH=str(ROOT)))
        seconds, count = out.stdout.split()
        runs.append(float(seconds))
    return _median(runs), int(count)


def time_ngspice(path: Path) -> float | None:
    exe = shutil.which("ngspice")
    if exe is None:
        return None
    text = path.read_text(encoding="utf-8").rstrip()
    if text.lower().endswith(".end"):
        text = text[:-4]
    runs = []
    with tempfile.TemporaryDirectory() as tmp:
        deck = Path(tmp) / "deck.cir"
        deck.write_text(text + "\n.control\nquit\n.endc\n.end\n", encoding="utf-8")
        for _ in range(3):
            start = time.perf_counter()
            subprocess.run([exe, "-n", "-b", str(deck)], capture_output=True, cwd=tmp,
                           env=dict(os.environ, HOME=tmp), check=False)
            runs.append(time.perf_counter() - start)
    return _median(runs)


def time_split(path: Path) -> float:
    runs = []
    for _ in range(3):
        start = time.perf_counter()
        with open(path, encoding="utf-8") as handle:
            words = [line.split() for line in handle]
        runs.append(time.perf_counter() - start)
        del words
    return _median(runs)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="reader speed vs ngspice")
    parser.add_argument("--sizes", type=int, nargs="+", default=[10_000, 100_000])
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args(argv)
    print(f"{'elements':>10} {'drc read_netlist':>17} {'ngspice -n -b':>14} "
          f"{'python split':>13} {'drc/ngspice':>12}")
    with tempfile.TemporaryDirectory() as tmp:
        for size in args.sizes:
            path = Path(tmp) / f"board{size}.cir"
            path.write_text(generate(size, args.seed, ngspice_safe=True), encoding="utf-8")
            drc, count = time_drc(path)
            spice = time_ngspice(path)
            split = time_split(path)
            ratio = f"{drc / spice:.2f}" if spice else "n/a"
            spice_text = f"{spice:.3f} s" if spice is not None else "n/a"
            print(f"{count:>10} {drc:>15.3f} s {spice_text:>14} {split:>11.3f} s {ratio:>12}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
