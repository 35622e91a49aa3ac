"""Our IEC 60063 tables against the `eseries` package (IEC 60063 tables, used as the oracle)."""

from __future__ import annotations

import math

import eseries as oracle
import pytest
from hypothesis import given
from hypothesis import strategies as st

from drc.library import eseries

SERIES = {"E3": oracle.E3, "E6": oracle.E6, "E12": oracle.E12, "E24": oracle.E24,
          "E48": oracle.E48, "E96": oracle.E96, "E192": oracle.E192}


@pytest.mark.parametrize("name", list(SERIES))
def test_decade_matches_iec_60063_tables(name):
    # IEC 60063 via the eseries package: every value of one decade, in order.
    assert eseries.decade_codes(name) == tuple(oracle.series(SERIES[name]))


def test_irregular_values_are_present():
    # IEC 60063: E24 departs from 10^(i/24) at 27, 30, 33, 36, 39, 43, 47, 82; E192 has 920.
    formula = {round(10 * 10 ** (i / 24)) for i in range(24)}
    irregular = set(eseries.decade_codes("E24")) - formula
    assert irregular == {27, 30, 33, 36, 39, 43, 47, 82}
    assert 920 in eseries.decade_codes("E192") and 919 not in eseries.decade_codes("E192")


@pytest.mark.parametrize("name", list(SERIES))
def test_values_between_matches_erange(name):
    ours = eseries.values_between(name, 1.0, 1e6)
    theirs = list(oracle.erange(SERIES[name], 1.0, 1e6))
    assert len(ours) == len(theirs)
    assert all(math.isclose(a, b, rel_tol=1e-9) for a, b in zip(ours, theirs, strict=True))


@pytest.mark.parametrize("name", list(SERIES))
def test_membership_agrees_with_oracle(name):
    for value in oracle.erange(SERIES[name], 1e-12, 1e7):
        assert eseries.is_member(name, value), value
    assert not eseries.is_member(name, 1.234e3)


@given(st.floats(min_value=1e-11, max_value=1e8, allow_nan=False, allow_infinity=False))
def test_nearest_is_a_member_and_log_nearest(value):
    got = eseries.nearest("E24", value)
    assert eseries.is_member("E24", got)
    # nearest on a log scale: no oracle value within a decade is closer
    neighbours = [v for v in oracle.erange(oracle.E24, value / 10, value * 10)]
    best = min(abs(math.log(v / value)) for v in neighbours)
    assert abs(math.log(got / value)) <= best + 1e-12


def test_bad_input_is_refused():
    with pytest.raises(ValueError, match="unknown E-series"):
        eseries.decade_codes("E25")
    with pytest.raises(ValueError):
        eseries.nearest("E12", 0.0)
