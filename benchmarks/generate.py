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
            head, letter = text[:index], text[index:]
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


# Stage kinds in a repeating pattern of 20 contacts: rc-schmitt 8, rc 3,
# pull-only 3, latch 3 (one SPDT each), dedicated 2, direct 1.
_KIND_PATTERN = ("rc-schmitt", "rc", "rc-schmitt", "pull-only", "latch", "rc-schmitt", "dedicated",
                 "rc", "rc-schmitt", "pull-only", "latch", "rc-schmitt", "direct", "rc-schmitt",
                 "rc", "pull-only", "latch", "rc-schmitt", "dedicated", "rc-schmitt")
_PULLS = ["4k7", "10k", "22k", "47k", "1M", "3k3", "15k", "33k", "6k8", "100k"]
_SERIES = ["1k", "2k2", "470", "4k7", "10k", "3k3"]
_CAPS = ["100n", "1u", "4n7", "220n", "470n", "47n", "10n", "2u2"]
# Receivers and contacts ngspice must be able to expand in --ngspice-safe mode:
# (name, ports) of a dummy subcircuit with one high-value resistor.
_DUMMIES = (("74HC14", 14, "p14 p7"), ("74HC04", 14, "p14 p7"), ("74HC00", 14, "p14 p7"),
            ("MC14490P", 16, "p16 p8"), ("TACTILE", 2, "p1 p2"), ("TOGGLE_SPDT", 3, "p2 p3"))


class _Gates:
    """Collects input nets of one hex-inverter type and emits a 14-pin instance per six."""

    def __init__(self, part: str, prefix: str, vcc: str, safe: bool) -> None:
        self.part, self.prefix, self.vcc, self.safe = part, prefix, vcc, safe
        self.pending: list[str] = []
        self.count = 0

    def add(self, lines: list[str], net: str) -> int:
        self.pending.append(net)
        return self.flush(lines) if len(self.pending) == 6 else 0

    def flush(self, lines: list[str]) -> int:
        if not self.pending:
            return 0
        self.count += 1
        ins = self.pending + ["0"] * (6 - len(self.pending))
        outs = [_net(f"/logic/{self.prefix}{self.count}Y{k + 1}", self.safe) for k in range(6)]
        pins = [ins[0], outs[0], ins[1], outs[1], ins[2], outs[2], "0",
                outs[3], ins[3], outs[4], ins[4], outs[5], ins[5], self.vcc]
        lines.append(f"XU{self.prefix}{self.count} {' '.join(pins)}")
        lines.append(f"+ {self.part}")
        self.pending = []
        return 1


def _contact_stage(lines: list[str], rng: random.Random, index: int, kind: str, vcc: str,
                   hc14: _Gates, hc04: _Gates, safe: bool) -> int:
    """One contact and its input path; returns the elements written (contact included)."""
    v = lambda choices: _value(rng.choice(choices), safe)  # noqa: E731
    pad = _net(f"Net-(SW{index}-Pad1)", safe)
    node_c = _net(f"Net-(C{index}-Pad1)", safe)
    contact = f"XSW{index} {pad} 0 TACTILE" if safe else f"SW{index} {pad} 0 TACTILE"
    if kind == "latch":
        nc, no = _net(f"Net-(SW{index}-NC)", safe), _net(f"Net-(SW{index}-NO)", safe)
        q, qn = _net(f"/latch{index}/Q", safe), _net(f"/latch{index}/QN", safe)
        lines.append(f"XSW{index} 0 {nc} {no} TOGGLE_SPDT")
        lines.append(f"R{index}A {vcc} {nc} {v(['10k', '4k7', '22k'])}")
        lines.append(f"R{index}B {vcc} {no} {v(['10k', '4k7', '22k'])}")
        lines.append(f"XUL{index} {nc} {q} {qn} {qn} {no} {q} 0 "
                     f"{_net(f'Net-(UL{index}-Pad8)', safe)} 0 0 {_net(f'Net-(UL{index}-Pad11)', safe)} "
                     f"0 0 {vcc} 74HC00")
        return 4
    if kind == "dedicated":
        pin = _net(f"Net-(UD{index}-Pad1)", safe)
        lines.append(contact)
        lines.append(f"XUD{index} {pin} 0 0 0 0 0 {_net(f'Net-(UD{index}-Pad7)', safe)} 0 "
                     f"{_net(f'Net-(UD{index}-Pad9)', safe)} 0 0 0 0 0 "
                     f"{_net(f'Net-(UD{index}-Pad15)', safe)} {vcc} MC14490P")
        lines.append(f"RD{index} {pad} {pin} 100")
        lines.append(f"CD{index} {_net(f'Net-(UD{index}-Pad7)', safe)} {_net(f'Net-(UD{index}-Pad9)', safe)} 10n")
        return 4
    lines.append(contact)
    if kind == "direct":
        return 1 + hc14.add(lines, pad)
    lines.append(f"R{index} {vcc} {pad} {v(_PULLS)}")
    if kind == "pull-only":
        return 2 + hc14.add(lines, pad)
    lines.append(f"RS{index} {pad} {node_c} {v(_SERIES)}")
    if index % 7 == 3:
        lines.append(f"C{index} {node_c}")
        lines.append(f"+ 0 {v(_CAPS)} ; continued line")
    else:
        lines.append(f"C{index} {node_c} 0 {v(_CAPS)}")
    if kind == "rc":
        return 4 + hc04.add(lines, node_c)
    pin = _net(f"Net-(UH{index}-Pad)", safe)
    lines.append(f"RP{index} {node_c} {pin} 100")
    return 5 + hc14.add(lines, pin)


def default_contacts(elements: int) -> int:
    """A few thousand contacts at 100k elements (one per 40 elements, 6..5000)."""
    return max(6, min(5000, elements // 40))


def generate(elements: int, seed: int, ngspice_safe: bool = False, contacts: int | None = None,
             sheet_share: float = 0.2) -> str:
    """Netlist text with about `elements` flattened elements.

    contacts: how many contacts (default `default_contacts`); sheet_share: the
    part of the elements that sits in hierarchical sheets (the rest are flat lines).
    """
    rng = random.Random(seed)
    safe = ngspice_safe
    lines = [f"generated board, {elements} elements, seed {seed}",
             "* exported-style netlist for benchmarks (benchmarks/generate.py)", ""]
    vcc = "+5V"
    lines.append(f"V1 {vcc} 0 DC 5")
    total = 1
    count = default_contacts(elements) if contacts is None else contacts
    hc14 = _Gates("74HC14", "S", vcc, safe)
    hc04 = _Gates("74HC04", "P", vcc, safe)
    for index in range(1, count + 1):
        kind = _KIND_PATTERN[(index - 1) % len(_KIND_PATTERN)]
        total += _contact_stage(lines, rng, index, kind, vcc, hc14, hc04, safe)
    total += hc14.flush(lines) + hc04.flush(lines)
    if safe:
        lines.append("* dummy models so ngspice can expand the part and contact instances")
        for name, ports, body in _DUMMIES:
            lines.append(f".subckt {name} " + " ".join(f"p{k}" for k in range(1, ports + 1)))
            lines.append(f"Rq {body} 1meg")
            lines.append(f".ends {name}")
    leaf_count = _sheet_leaf(lines, rng, 20, safe)
    mid_count = _sheet_mid(lines, leaf_count, 4)
    remaining = max(0, elements - total)
    mids = int(remaining * sheet_share) // mid_count
    for index in range(1, mids + 1):
        src = _net(f"Net-(J{index}-Pad1)", safe)
        dst = _net(f"/sheet{index}/out", safe)
        lines.append(f"XS{index} {src} {dst} {vcc} sheet_mid  $ sheet {index}")
        total += mid_count
    filler = elements - total
    # Flat lines, as an export writes the top sheet: resistors and capacitors
    # between exported net names, with a comment line now and then.
    for index in range(1, filler + 1):
        node = _net(f"Net-(RF{index}-Pad1)", safe)
        if index % 500 == 0:
            lines.append(f"* ---- sheet /misc{index // 500} ----")
        if index % 3 == 0:
            lines.append(f"CF{index} {node} 0 {_value(rng.choice(_C_VALUES), safe)}")
        else:
            lines.append(f"RF{index} {vcc} {node} {_value(rng.choice(_R_VALUES), safe)}")
    lines.append(".end")
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--elements", type=int, required=True,
                        help="flattened element count (e.g. 10000, 100000, 300000, 1000000)")
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("-o", "--output", required=True)
    parser.add_argument("--ngspice-safe", action="store_true",
                        help="no parentheses in names; contacts as X instances; dummy .subckt "
                             "definitions so ngspice expands every instance")
    parser.add_argument("--contacts", type=int, default=None,
                        help="number of contacts (default: elements / 40, 6..5000)")
    parser.add_argument("--sheet-share", type=float, default=0.2,
                        help="share of the elements inside hierarchical sheets (default 0.2)")
    args = parser.parse_args(argv)
    text = generate(args.elements, args.seed, args.ngspice_safe, args.contacts, args.sheet_share)
    with open(args.output, "w", encoding="utf-8", newline="\n") as handle:
        handle.write(text)
    return 0


if __name__ == "__main__":
    sys.exit(main())
