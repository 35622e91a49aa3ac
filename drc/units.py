"""Quantities at the edges: parse "5 ms" or "10 kΩ" from config, format SI floats for people.

Inside the tool every figure is a plain SI float. Text with units arrives
only from config files, annotations and command-line options, and leaves
only through reports; this module is the one place that crosses that edge.
Parsing reads the common forms ("20 ms", "10 kΩ", "100 nF", "3.3 V", "5 %")
with a small SI-prefix parser of its own, and falls back to pint (imported
lazily, one registry for the process) for any other spelling pint knows, and
for every refusal, so the messages stay pint's; building pint's registry costs
most of a second, which a command-line run should pay only when needed.
Formatting is a few lines of arithmetic with
engineering prefixes, because reports format thousands of figures and need
no unit algebra for that.

Every value a user gives (config, `*@drc` annotations, command-line options)
is validated here, once, the same way: `checked_quantity` for a quantity of
one dimension (time, resistance, capacitance, voltage, current, fraction, ratio)
within a `Range` (positive unless said otherwise), `checked_count` for a
whole number. NaN, infinity, a wrong unit, a negative or a zero where the
range excludes it are refused with the caller's "where" (a file, line and
key, or an option). Only a short text of a number and a unit product ever
reaches pint ("10**10**10 ms" would make it compute for ever).
"""

from __future__ import annotations

import math
import re
from enum import StrEnum

from drc.caching import memoized
from drc.errors import ConfigError

# The pint reference unit each dimension must be compatible with, and the
# example shown when the text is not such a quantity.
DIMENSIONS: dict[str, tuple[str, str]] = {
    "time": ("second", "5 ms"),
    "resistance": ("ohm", "10 kΩ"),
    "capacitance": ("farad", "100 nF"),
    "voltage": ("volt", "3.3 V"),
    "current": ("ampere", "1 mA"),
    "fraction": ("", "5 %"),
    "ratio": ("", "1.5"),
}

# A bare number is unambiguous only where the base unit is what a person
# means by default (volts for a rail, ohms for a resistor, a plain ratio);
# "bounce = 5" or "100" for a capacitor is far more likely a slip than 5 s or 100 F.
_BARE_NUMBER_OK = frozenset({"voltage", "resistance", "fraction", "ratio"})

_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")
# "4.7k", "10K", "1M" written for a resistance with no unit (common practice on schematics).
_BARE_RESISTANCE = re.compile(r"^([+-]?(?:\d+\.?\d*|\.\d+))\s*([kKM])$")
# The letter-as-decimal-point code of IEC 60062 (from memory): 3V3, 4k7, 2R2, 4n7.
_LETTER_CODE = re.compile(r"^(\d+)([A-Za-zΩµμ])(\d+)$")

_LETTER_CODE_UNITS = {
    "V": ("", "V"), "v": ("", "V"), "R": ("", "Ω"), "r": ("", "Ω"), "Ω": ("", "Ω"),
    "k": ("k", "Ω"), "K": ("k", "Ω"), "M": ("M", "Ω"), "m": ("m", "Ω"),
    "p": ("p", "F"), "n": ("n", "F"), "u": ("µ", "F"), "µ": ("µ", "F"), "μ": ("µ", "F"),
}


# SI prefixes (BIPM SI Brochure, 9th edition, table 7); "u" is the usual ASCII micro.
_SI_PREFIX = {"T": 1e12, "G": 1e9, "M": 1e6, "k": 1e3, "": 1.0, "m": 1e-3,
              "u": 1e-6, "µ": 1e-6, "n": 1e-9, "p": 1e-12, "f": 1e-15}
# Coherent SI unit symbols and names per dimension: their base-unit magnitude is the value.
_SI_UNITS = {
    "time": ("s",), "resistance": ("Ω", "ohm", "ohms"), "capacitance": ("F",),
    "voltage": ("V",), "current": ("A",),
}
_UNIT_DIMENSION = {unit: dim for dim, units in _SI_UNITS.items() for unit in units}
_QUANTITY = re.compile(r"^([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*([TGMkmuµnpf]?)(Ω|ohms?|[sFVA])$")


def _fast_quantity(clean: str) -> tuple[float, str] | None:
    """(SI value, dimension) of "<number> <prefix><unit>", or None to let pint decide."""
    match = _QUANTITY.match(clean)
    if match is None:
        return None
    number, prefix, unit = match.groups()
    value = float(number) * _SI_PREFIX[prefix]
    return (value, _UNIT_DIMENSION[unit]) if math.isfinite(value) else None


@memoized(1)
def _registry():
    import pint  # lazy: pint costs a noticeable start-up time

    return pint.UnitRegistry()


def _pint_failures() -> tuple[type[BaseException], ...]:
    """What pint raises on text that is not a quantity of the asked dimension.

    Its own errors (unknown unit, wrong dimension, bad definition, offset
    units), the tokenizer's, and built-in ones from evaluating the parsed
    text: AssertionError (a lone operator), ValueError, TypeError,
    AttributeError, ZeroDivisionError and OverflowError (ArithmeticError),
    RecursionError (deep nesting), LookupError.
    """
    import tokenize

    from pint.errors import PintError
    return (PintError, tokenize.TokenError, AssertionError, ValueError, TypeError, AttributeError,
            ArithmeticError, RecursionError, LookupError)


def _error(message: str, where: str) -> ConfigError:
    return ConfigError(f"{where}: {message}" if where else message)


def _letter_code_suggestion(text: str) -> str | None:
    match = _LETTER_CODE.match(text)
    if not match:
        return None
    whole, letter, fraction = match.groups()
    prefix, unit = _LETTER_CODE_UNITS.get(letter, ("", letter))
    return f"{whole}.{fraction} {prefix}{unit}"


def _normalise(text: str) -> str:
    # pint knows "Ω" and "µ"; the Greek mu (U+03BC) and "Ohm" spellings are normalised here.
    return text.replace("μ", "µ").replace("Ohm", "ohm").replace("OHM", "ohm").strip()


def parse_quantity(text: str, dimension: str, where: str = "") -> float:
    """The SI value of `text` ("5 ms", "10 kΩ", "4.7k", "100 nF", "3.3 V", "5 %").

    dimension: one of DIMENSIONS. where: what is being read, for the error
    message (e.g. "drc.toml: rails[0].voltage"). A fraction accepts "5 %" or
    a plain ratio such as 0.05. Raises ConfigError when the text is not a
    quantity of that dimension, saying what was expected.
    """
    if dimension not in DIMENSIONS:
        raise ValueError(f"unknown dimension {dimension!r}")
    raw = text if isinstance(text, str) else str(text)
    clean = _normalise(raw)
    value = _common_form(raw, clean, dimension, where)
    return value if value is not None else _pint_quantity(raw, clean, dimension, where)


def _common_form(raw: str, clean: str, dimension: str, where: str) -> float | None:
    """The value of the forms read without pint, None to let pint decide; refuses
    an empty text, a bare number where a unit is needed and part-marking codes."""
    example = DIMENSIONS[dimension][1]
    if not clean:
        raise _error(f"expected a {dimension} such as {example!r}, got an empty text", where)
    if _NUMBER.match(clean):
        if dimension in _BARE_NUMBER_OK:
            return float(clean)
        raise _error(f"{raw!r} has no unit; write a {dimension} with its unit, e.g. {example!r}", where)
    suggestion = _letter_code_suggestion(clean)
    if suggestion is not None:
        raise _error(f"{raw!r} is a part-marking code, not a quantity; write {suggestion!r}", where)
    if dimension == "resistance":
        bare = _BARE_RESISTANCE.match(clean)
        if bare:
            return float(bare.group(1)) * (1e3 if bare.group(2) in "kK" else 1e6)
    if dimension in ("fraction", "ratio") and clean.endswith("%"):
        return _percentage(raw, clean, example, where)
    fast = _fast_quantity(clean)
    return fast[0] if fast is not None and fast[1] == dimension else None


def _percentage(raw: str, clean: str, example: str, where: str) -> float:
    number = clean[:-1].strip()
    if _NUMBER.match(number):
        return float(number) / 100.0
    raise _error(f"{raw!r} is not a percentage; expected e.g. {example!r}", where)


# What may reach pint: a number, then unit words joined by blanks, "/", "*" or "·",
# each with at most a one-digit power ("m/s^2", "kiloohm"); short. Anything else
# (an expression such as 10**10**10, which pint would evaluate) is refused first.
MAX_PINT_TEXT = 64
_PINT_TEXT = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d{1,3})?\s*"
                        r"(?:[A-Za-zΩµ°]+(?:(?:\^|\*\*)-?\d)?(?:\s*[/*·]\s*|\s+)?)*")


def _pint_text_allowed(clean: str) -> bool:
    return len(clean) <= MAX_PINT_TEXT and _PINT_TEXT.fullmatch(clean) is not None


def _pint_quantity(raw: str, clean: str, dimension: str, where: str) -> float:
    """Any other spelling pint reads, converted to the dimension's reference unit."""
    reference, example = DIMENSIONS[dimension]
    if not _pint_text_allowed(clean):
        raise _error(f"{raw!r} is not a {dimension}; expected e.g. {example!r}", where)
    registry = _registry()
    try:
        quantity = registry.Quantity(clean)
    except _pint_failures():
        raise _error(f"{raw!r} is not a {dimension}; expected e.g. {example!r}", where) from None
    if not hasattr(quantity, "magnitude") or not hasattr(quantity, "to"):
        raise _error(f"{raw!r} is not a {dimension}; expected e.g. {example!r}", where)
    try:
        value = quantity.to(reference).magnitude
    except _pint_failures():
        raise _error(f"{raw!r} is not a {dimension} (its unit is {quantity.units}); "
                     f"expected e.g. {example!r}", where) from None
    value = float(value)
    if not math.isfinite(value):
        raise _error(f"{raw!r} is not a finite {dimension}", where)
    return value


def parse_any_quantity(text: str, where: str = "") -> float:
    """The SI base-unit magnitude of any quantity ("20 ms" -> 0.02, "5 %" -> 0.05).

    For values whose dimension the caller does not know (limit overrides).
    """
    clean = _normalise(str(text))
    if _NUMBER.match(clean):
        return float(clean)
    suggestion = _letter_code_suggestion(clean)
    if suggestion is not None:
        raise _error(f"{text!r} is a part-marking code, not a quantity; write {suggestion!r}", where)
    if clean.endswith("%") and _NUMBER.match(clean[:-1].strip()):
        return float(clean[:-1]) / 100.0
    fast = _fast_quantity(clean)
    if fast is not None:
        return fast[0]
    if not _pint_text_allowed(clean):
        raise _error(f"{text!r} is not a quantity; expected a number or e.g. '20 ms'", where)
    try:
        quantity = _registry().Quantity(clean)
        value = float(quantity.to_base_units().magnitude)
    except _pint_failures():
        raise _error(f"{text!r} is not a quantity; expected a number or e.g. '20 ms'", where) from None
    return value


class Range(StrEnum):
    """Which values of a quantity are allowed (besides being finite)."""

    POSITIVE = "positive"            # > 0: times, resistances, capacitances, limits
    NON_NEGATIVE = "non-negative"    # >= 0: margins and spreads that may be nil
    FRACTION = "fraction"            # 0 <= x < 1: tolerances
    FINITE = "finite"                # any finite value: a rail may be negative

    def admits(self, value: float) -> bool:
        if self is Range.POSITIVE:
            return value > 0
        if self is Range.NON_NEGATIVE:
            return value >= 0
        if self is Range.FRACTION:
            return 0 <= value < 1
        return True

    def describe(self, dimension: str) -> str:
        if self is Range.FRACTION:
            return "a fraction from 0 % to below 100 %"
        if self is Range.FINITE:
            return f"a finite {dimension}"
        return f"a{'' if self is Range.POSITIVE else ' zero or'} positive {dimension}"


# The magnitudes of parts the analysis evaluates: far wider than any part a logic
# board holds, narrow enough that time constants, currents and slopes stay
# normal double-precision numbers (1e30 Ω or a subnormal 1e-320 F overflow them
# into infinities). A value outside is a slip (1e30 written for 10k) and is refused.
EVALUABLE = {"resistance": (1e-6, 1e12, "Ω", "1 µΩ to 1 TΩ"),
             "capacitance": (1e-18, 1e4, "F", "1 aF to 10 kF")}


def unevaluable(value: float, dimension: str) -> str | None:
    """Why a non-zero `value` of `dimension` lies outside what the analysis evaluates, or None."""
    bounds = EVALUABLE.get(dimension)
    if bounds is None or value == 0 or not math.isfinite(value):
        return None
    low, high, unit, span = bounds
    if low <= abs(value) <= high:
        return None
    return f"a {dimension} of {value:g} {unit}, outside what drc evaluates ({span})"


def checked_quantity(value: str | float, dimension: str, where: str = "",
                     allowed: Range = Range.POSITIVE) -> float:
    """The one validator of a quantity a user gives, wherever it is given.

    `value`: text ("20 ms", "4.7k", "5 %") or, where the dimension takes a bare
    number (voltage, resistance, fraction), a number. Refuses what is not a
    quantity of `dimension`, NaN and infinity, and values outside `allowed`,
    with a ConfigError starting with `where`.
    """
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise _error(f"expected {allowed.describe(dimension)} such as "
                     f"{DIMENSIONS[dimension][1]!r}, got {type(value).__name__}", where)
    text = value if isinstance(value, str) else repr(value)
    number = parse_quantity(text, dimension, where)
    if not math.isfinite(number):
        raise _error(f"{text!r} is not a finite {dimension}", where)
    if not allowed.admits(number):
        raise _error(f"expected {allowed.describe(dimension)}, got {text!r}", where)
    outside = unevaluable(number, dimension)
    if outside is not None:
        raise _error(f"{text!r}: {outside}", where)
    return number


def checked_count(value: object, where: str = "", minimum: int = 1,
                  maximum: int | None = None) -> int:
    """The one validator of a whole number a user gives (a pin, a count, a seed)."""
    if isinstance(value, bool) or not isinstance(value, int) or value < minimum or (
            maximum is not None and value > maximum):
        span = f"from {minimum} to {maximum}" if maximum is not None else f">= {minimum}"
        shown = repr(value) if not isinstance(value, int) or value.bit_length() < 64 else "a huge number"
        raise _error(f"expected a whole number {span}, got {shown}", where)
    return value


# Engineering prefixes, largest first.
_PREFIXES = ((1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""),
             (1e-3, "m"), (1e-6, "µ"), (1e-9, "n"), (1e-12, "p"), (1e-15, "f"))


def _three_figures(mantissa: float, digits: int = 3) -> str:
    text = f"{mantissa:.{digits}g}"
    if "e" in text:  # .3g switches to exponent form at 1000 after rounding
        text = f"{mantissa:.0f}"
    return text


def format_part_value(value: float | None, unit: str) -> str:
    """A part's value as written on it, with up to four significant figures:
    4700 Ω -> "4.7 kΩ", 4990 Ω -> "4.99 kΩ", 2215 Ω -> "2.215 kΩ" (never rounded
    to a part that does not exist, as three figures would)."""
    return format_quantity(value, unit, digits=4)


def format_quantity(value: float | None, unit: str, digits: int = 3) -> str:
    """`value` (SI) as text with an engineering prefix and three figures (`digits`).

    0.0118 s -> "11.8 ms", 4700 Ω -> "4.7 kΩ", 2.53 V -> "2.53 V",
    0.0004 A -> "0.4 mA". Volts and amperes between 0.1 and 1 of a prefix
    keep the larger prefix ("0.45 V", "0.4 mA"), as the trade writes margins
    and currents; other units move to the smaller prefix ("470 Ω", "100 nF").
    unit "%" formats a fraction as a percentage.
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "n/a"
    if math.isinf(value):
        return ("-∞ " if value < 0 else "∞ ") + unit if unit else ("-∞" if value < 0 else "∞")
    if unit == "%":
        return f"{_three_figures(value * 100.0, digits)} %"
    if unit in ("", "1"):  # a plain ratio takes no prefix
        return f"{value:.3g}"
    if value == 0:
        return f"0 {unit}".rstrip()
    magnitude = abs(value)
    scale, prefix = _PREFIXES[-1]
    for candidate_scale, candidate_prefix in _PREFIXES:
        if magnitude >= candidate_scale * 0.9995:
            scale, prefix = candidate_scale, candidate_prefix
            break
    if unit in ("V", "A") and magnitude < 1.0:
        # One prefix up when the value reads as 0.1..0.999 of it; amperes never go
        # to the bare unit this way (150 mA, not 0.15 A).
        index = [s for s, _ in _PREFIXES].index(scale)
        if index > 0:
            up_scale, up_prefix = _PREFIXES[index - 1]
            if magnitude >= 0.1 * up_scale and not (unit == "A" and up_prefix == ""):
                scale, prefix = up_scale, up_prefix
    text = _three_figures(value / scale, digits)
    return f"{text} {prefix}{unit}".rstrip()
