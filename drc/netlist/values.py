"""Numeric values as written in a netlist, read two ways.

A SPICE number is a mantissa, an optional exponent, an optional scale suffix
(T G MEG K M MIL U µ N P F, any case) and ignored trailing unit letters
(ngspice manual, "Numeric values"). `M` is milli and `F` is femto there.
Board exports also use the letter-and-digit code of IEC 60062 (`4k7`,
`2R2`, `0R1`, `1M5`, `4n7`) where the letter replaces the decimal point;
ngspice's default mode reads `4k7` as 4000 (observed, see
shared/reference/spice-dialect.md). `parse_value` returns a `Value` whose
`si` is what a person means and whose `spice_si` is what ngspice reads.
Results are remembered per distinct text (drc.caching): boards repeat a few
hundred values.
"""

from __future__ import annotations

import re

from drc.caching import memoized
from drc.netlist.elements import Value

# SPICE scale suffixes (ngspice manual, table "Scale factors"); MEG and MIL
# are checked before the one-letter forms.
# Scales are kept as powers of ten so that `4.7n` is the float nearest
# 4.7e-9 (no rounding from a multiplication).
_SPICE_SCALE = {
    "t": 12, "g": 9, "k": 3, "m": -3, "u": -6, "µ": -6, "μ": -6,
    "n": -9, "p": -12, "f": -15,
}

_NUMBER = re.compile(r"([+-]?(?:\d+\.?\d*|\.\d+))(?:[eE]([+-]?\d+))?")
# What may follow a number: letters and digits (a scale suffix, then unit
# letters; ngspice ignores everything after the suffix, so `4k7` is 4000).
_LETTERS = re.compile(r"[^\W_]*")

# IEC 60062 letter-and-digit code: digits, a multiplier letter standing for
# the decimal point, digits, optional unit letters. IEC 60062 makes the case of
# M meaningful (M = mega, m = milli); R/r marks the point of a plain number.
_CODE = re.compile(r"(\d+)(meg|MEG|Meg|[RrKkMmGgTtUuµμNnPp])(\d+)([^\W\d_]*)")
_CODE_SCALE = {
    "r": 0, "k": 3, "K": 3, "M": 6, "meg": 6, "g": 9, "t": 12,
    "m": -3, "u": -6, "µ": -6, "μ": -6, "n": -9, "p": -12,
}

def spice_number(text: str) -> float | None:
    """The number ngspice's default mode reads from `text`, or None if none.

    Trailing characters after the number must be letters or digits; a
    token such as `1k-2` or `a1` is not a number.
    """
    match = _NUMBER.match(text)
    if match is None:
        return None
    mantissa, exponent = match.groups()
    rest = text[match.end():]
    if rest and _LETTERS.fullmatch(rest) is None:
        return None
    low = rest[:3].lower()
    power = int(exponent) if exponent else 0
    if low == "mil":
        return float(f"{mantissa}e{power}") * 25.4e-6
    if low == "meg":
        power += 6
    elif low:
        power += _SPICE_SCALE.get(low[0], 0)
    if abs(power) > 400:  # beyond any float: keep the conversion cheap
        return float("inf") if power > 0 and float(mantissa) != 0 else 0.0
    return float(f"{mantissa}e{power}")


def _code_number(text: str) -> float | None:
    """The IEC 60062 reading of `4k7`-style text, or None if it is not one."""
    match = _CODE.fullmatch(text)
    if match is None:
        return None
    whole, letter, fraction, _unit = match.groups()
    scale = _CODE_SCALE.get(letter)
    if scale is None:
        scale = _CODE_SCALE.get(letter.lower())
    if scale is None:
        return None
    return float(f"{whole}.{fraction}e{scale}")


@memoized(100_000)
def parse_value(text: str) -> Value | None:
    """A `Value` for `text`, or None when `text` is not a number at all."""
    spice = spice_number(text)
    if spice is None:
        return None
    code = _code_number(text)
    return Value(spice if code is None else code, text, spice)


def is_number(text: str) -> bool:
    """True when SPICE reads `text` as a number."""
    return parse_value(text) is not None
