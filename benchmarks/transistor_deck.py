"""A netlist of transistors whose models are not read, and the time to check it.

The LX-24 dimmer rack's driver board, exported the way schematic tools write
a discrete board: per channel a base resistor into an NPN driver (`Q`), a
logic-level MOSFET written as a 3-terminal vertical power MOSFET instance
(`M`), a gate resistor and an LED with its series resistor; the models come
from a library line pointing into a simulator's installation (`.lib
"C:\\Program Files\\...\\standard.bjt"`), which the checker does not read. A
few front-panel keys into a 74HC14 give it something to check. Every
transistor then names a model that is not defined: thousands of alike
warnings, which the reader tells as one line with a count (issue 12, item 5).

    python benchmarks/transistor_deck.py --bytes 2000000 -o deck.cir
    python benchmarks/transistor_deck.py --bytes 2000000 --measure   # median of 3 runs

`--measure` writes the deck to a scratch folder, runs `python -m drc.cli check
DECK --no-fixes` (text report, start-up included) three times, and prints the
median wall time, the size and the report's warning lines.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

_HEADER = """LX-24 dimmer rack, driver board (generated: benchmarks/transistor_deck.py)
* exported-style deck: models live in the simulator's own library
.lib "C:\\Program Files (x86)\\LTC\\LTspiceXVII\\lib\\cmp\\standard.bjt"
.lib C:\\Program Files (x86)\\LTC\\LTspiceXVII\\lib\\cmp\\standard.mos
V1 +5V 0 DC 5
V2 +24V 0 DC 24
"""

# Three front-panel keys: a pull-up, an RC filter into a 74HC14 input each
# (the standard 14-pin hex-inverter pinout, from memory). Their one-digit
# designators never meet a channel's, which carry the channel number first.
_KEYS = """SW1 Net-(SW1-Pad1) 0 TACTILE
R1 +5V Net-(SW1-Pad1) 10k
R2 Net-(SW1-Pad1) Net-(C1-Pad1) 10k
C1 Net-(C1-Pad1) 0 3.3u
SW2 Net-(SW2-Pad1) 0 TACTILE
R3 +5V Net-(SW2-Pad1) 10k
R4 Net-(SW2-Pad1) Net-(C2-Pad1) 10k
C2 Net-(C2-Pad1) 0 3.3u
SW3 Net-(SW3-Pad1) 0 TACTILE
R5 +5V Net-(SW3-Pad1) 10k
R6 Net-(SW3-Pad1) Net-(C3-Pad1) 10k
C3 Net-(C3-Pad1) 0 3.3u
XU900 Net-(C1-Pad1) /k1 Net-(C2-Pad1) /k2 Net-(C3-Pad1) /k3 0 /k4 0 /k5 0 /k6 0 +5V 74HC14
"""


def channel(index: int) -> list[str]:
    """One driver channel: 7 lines, two transistors."""
    base, collector, gate = (f"Net-(Q{index}-B)", f"Net-(Q{index}-C)", f"Net-(M{index}-G)")
    led = f"Net-(D{index}-K)"
    return [
        f"R{index}1 /dmx/ch{index} {base} 4.7k",
        f"Q{index} {collector} {base} 0 BC847B",
        f"R{index}2 +24V {collector} 10k",
        f"R{index}3 {collector} {gate} 100",
        f"M{index} {led} {gate} 0 IRLML2502",
        f"D{index} Net-(D{index}-A) {led} LED_WHITE",
        f"R{index}4 +24V Net-(D{index}-A) 1k",
    ]


def deck(size_bytes: int) -> str:
    """A deck of about `size_bytes` characters."""
    lines = [_HEADER.rstrip("\n"), _KEYS.rstrip("\n")]
    total = sum(len(part) + 1 for part in lines)
    index = 0
    while total < size_bytes:
        index += 1
        for line in channel(index):
            lines.append(line)
            total += len(line) + 1
    lines.append(".end")
    return "\n".join(lines) + "\n"


def measure(size_bytes: int, runs: int = 3) -> None:
    text = deck(size_bytes)
    with tempfile.TemporaryDirectory() as scratch:
        path = Path(scratch) / "driver_board.cir"
        path.write_text(text, encoding="utf-8")
        env = dict(os.environ, PYTHONPATH=str(ROOT))
        times = []
        output = ""
        for _ in range(runs):
            start = time.perf_counter()
            proc = subprocess.run([sys.executable, "-m", "drc.cli", "check", str(path),
                                   "--no-fixes"], capture_output=True, text=True, env=env,
                                  cwd=scratch)
            times.append(time.perf_counter() - start)
            output = proc.stdout + proc.stderr
        transistors = text.count("\nQ") + text.count("\nM")
        print(f"deck: {len(text):,} bytes, {text.count(chr(10)):,} lines, "
              f"{transistors:,} transistors")
        print(f"drc check --no-fixes (text): median {statistics.median(times):.2f} s "
              f"of {runs} ({', '.join(f'{t:.2f}' for t in times)})")
        print(f"report: {len(output.splitlines())} lines; warning lines:")
        for line in output.splitlines():
            if "warning" in line or "note" in line:
                print("   ", line.strip()[:160])


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--bytes", type=int, default=2_000_000, help="size of the deck")
    parser.add_argument("-o", "--output", help="write the deck here (default: stdout)")
    parser.add_argument("--measure", action="store_true", help="time drc check on it")
    args = parser.parse_args(argv)
    if args.measure:
        measure(args.bytes)
        return
    text = deck(args.bytes)
    if args.output:
        Path(args.output).write_text(text, encoding="utf-8")
    else:
        sys.stdout.write(text)


if __name__ == "__main__":
    main()
