"""Seeded generator of realistic board netlists for the reader benchmarks.

The board has a 5 V rail (`V1 +5V 0 DC 5`), a few thousand tactile contacts
(`SWn a b TACTILE`) each with a pull-up, a series resistor and a capacitor
into a pin of a `74HC14` hex Schmitt inverter (an X instance of an undefined
subcircuit, as board exports have), and hierarchical sheets (`.subckt` with
several instances, one sheet nested in another) full of ordinary passives to
reach the requested number of flattened elements. Net names look exported
(`Net-(SW3-Pad1)`), values use the letter-and-digit code (`4k7`), and the
text has comments and continuation lines. `--ngspice-safe` avoids what
ngspice reads differently or refuses: parentheses in names become `_`;
values are decimal (`4.7k`: ngspice-39 takes `4n7` on a C for a model name);
each contact becomes a simulated switch `SWn a b ctl 0 TACTILE` with a
`.model TACTILE SW` (ngspice has no 2-node S); and a dummy `.subckt 74HC14`
is added so ngspice can expand the instances.

    python benchmarks/generate.py --elements 100000 --seed 1 -o board.cir
"""

from __future__ import annotations

import argparse
import random
import sys

_R_VALUES = ["1k", "2k2", "4k7", "10k", "22k", "47k", "100k", "330", "470", "1meg"]
_C_VALUES = ["100n", "10n", "1u", "4n7", "22p", "100p", "10u"]
# 74HC14 pin order (inputs 1A..6A, outputs 1Y..6Y, GND pin 7, VCC pin 14):
# the standard 14-pin hex-inverter pinout, from memory.
_HC14_INPUT_PINS = (1, 3, 5, 9, 11, 13)


def _value(text: str, safe: bool) -> str:
    """`4k7` -> `4.7k` in ngspice-safe mode (the decimal SPICE form)."""
    if not safe:
        return text
    for index, char in enumerate(text):
        if char.isalpha():
            head, letter, tail = text[:index], text[index:], ""
            digits = "".join(c for c in letter if c.isdigit())
            letters = "".join(c for c in letter if c.isalpha())
            if digits:
                return f"{head}.{digits}{letters.replace('R', '').replace('r', '')}"
            return text
    return text


def _net(name: str, safe: bool) -> str:
    if safe:
        return name.replace("(", "_").replace(")", "_")
    return name


def _sheet_leaf(lines: list[str], rng: random.Random, size: int, safe: bool) -> int:
    """A leaf sheet: a chain of RC sections; returns its element count."""
    lines.append("* leaf sheet: filter chain")
    lines.append(".subckt sheet_leaf in out vcc")
    count = 0
    previous = "in"
    for index in range(size // 2):
        node = f"n{index}"
        lines.append(f"R{index + 1} {previous} {node} {_value(rng.choice(_R_VALUES), safe)}")
        capacitor = _value(rng.choice(_C_VALUES), safe)
        if index % 7 == 3:
            lines.append(f"C{index + 1} {node}")
            lines.append(f"+ 0 {capacitor} ; continued line")
        else:
            lines.append(f"C{index + 1} {node} 0 {capacitor}")
        previous = node
        count += 2
    lines.append(f"Rout {previous} out 100")
    lines.append("Rbias vcc out 1meg")
    lines.append(".ends sheet_leaf")
    return count + 2


def _sheet_mid(lines: list[str], leaf_count: int, leaves: int) -> int:
    """A sheet holding several leaf sheets in series (nested hierarchy)."""
    lines.append("* mid sheet: leaves in series")
    lines.append(".subckt sheet_mid in out vcc")
    previous = "in"
    for index in range(leaves):
        node = "out" if index == leaves - 1 else f"m{index}"
        lines.append(f"XL{index + 1} {previous} {node} vcc sheet_leaf")
        previous = node
    lines.append("Cdec vcc 0 100n")
    lines.append(".ends sheet_mid")
    return leaves * leaf_count + 1


def generate(elements: int, seed: int, ngspice_safe: bool = False) -> str:
    """Netlist text with about `elements` flattened elements."""
    rng = random.Random(seed)
    lines = [f"generated board, {elements} elements, seed {seed}",
             "* exported-style netlist for reader benchmarks", ""]
    vcc = "+5V"
    lines.append(f"V1 {vcc} 0 DC 5")
    total = 1
    contacts = max(6, min(3000, elements // 12))
    contacts -= contacts % 6
    gates = []
    for index in range(1, contacts + 1):
        pad1 = _net(f"Net-(SW{index}-Pad1)", ngspice_safe)
        pin = _net(f"Net-(U{(index - 1) // 6 + 1}-Pad{_HC14_INPUT_PINS[(index - 1) % 6]})",
                   ngspice_safe)
        node_c = _net(f"Net-(C{index}-Pad1)", ngspice_safe)
        if ngspice_safe:
            lines.append(f"SW{index} {pad1} 0 ctl 0 TACTILE")
        else:
            lines.append(f"SW{index} {pad1} 0 TACTILE")
        pull_up = _value(rng.choice(['4k7', '10k', '1M', '47k']), ngspice_safe)
        lines.append(f"R{index} {vcc} {pad1} {pull_up}")
        lines.append(f"RS{index} {pad1} {node_c} "
                     f"{_value(rng.choice(['1k', '2k2', '470']), ngspice_safe)}")
        lines.append(f"C{index} {node_c} 0 "
                     f"{_value(rng.choice(['100n', '1u', '4n7']), ngspice_safe)}")
        lines.append(f"RP{index} {node_c} {pin} 100")
        gates.append(pin)
        total += 5
    for gate in range(len(gates) // 6):
        ins = gates[gate * 6:gate * 6 + 6]
        outs = [_net(f"/logic/Y{gate * 6 + k + 1}", ngspice_safe) for k in range(6)]
        pins = [ins[0], outs[0], ins[1], outs[1], ins[2], outs[2], "0",
                outs[3], ins[3], outs[4], ins[4], outs[5], ins[5], vcc]
        lines.append(f"XU{gate + 1} {' '.join(pins)}")
        lines.append("+ 74HC14")
        total += 1
    if ngspice_safe:
        lines.append("Vctl ctl 0 DC 0")
        lines.append(".model TACTILE SW(VT=2.5 VH=0 RON=0.1 ROFF=1G)")
        total += 1
        lines.append("* dummy model so ngspice can expand the 74HC14 instances")
        lines.append(".subckt 74HC14 " + " ".join(f"p{k}" for k in range(1, 15)))
        lines.append("Rq p14 p7 1meg")
        lines.append(".ends 74HC14")
        total += len(gates) // 6
    leaf_count = _sheet_leaf(lines, rng, 20, ngspice_safe)
    mid_count = _sheet_mid(lines, leaf_count, 4)
    remaining = max(0, elements - total)
    mids = remaining // mid_count
    for index in range(1, mids + 1):
        src = _net(f"Net-(J{index}-Pad1)", ngspice_safe)
        dst = _net(f"/sheet{index}/out", ngspice_safe)
        lines.append(f"XS{index} {src} {dst} {vcc} sheet_mid  $ sheet {index}")
        total += mid_count
    filler = elements - total
    for index in range(1, filler + 1):
        node = _net(f"Net-(RF{index}-Pad1)", ngspice_safe)
        lines.append(f"RF{index} {vcc} {node} {_value(rng.choice(_R_VALUES), ngspice_safe)}")
    lines.append(".end")
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--elements", type=int, required=True,
                        help="flattened element count (e.g. 10000, 100000, 300000, 1000000)")
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("-o", "--output", required=True)
    parser.add_argument("--ngspice-safe", action="store_true",
                        help="no parentheses in names; dummy .subckt for 74HC14")
    args = parser.parse_args(argv)
    text = generate(args.elements, args.seed, args.ngspice_safe)
    with open(args.output, "w", encoding="utf-8", newline="\n") as handle:
        handle.write(text)
    return 0


if __name__ == "__main__":
    sys.exit(main())
