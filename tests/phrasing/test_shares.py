"""Shares that partition the values add up to 100, and none is printed as 0% or 100% unless it is.

References: the largest-remainder (Hamilton) method, the common practice for published tables of shares
(described in Balinski & Young, "Fair Representation", 1982, from memory), re-derived here by brute force
(every way of rounding each quota down or up, the one nearest the quotas that adds up to 100); the bound
rule is ours (narrator.phrasing.numbers.places_clear_of). Data are invented, typed in.
"""

from __future__ import annotations

import itertools
import math
import re
from decimal import Decimal
from fractions import Fraction

import numpy as np
import pytest

from narrator.engine.describe import describe
from narrator.phrasing import narrate
from narrator.phrasing.context import make_context
from narrator.phrasing.numbers import largest_remainder


def _brute_force(parts: list[int], places: int) -> list[list[Fraction]]:
    """Among the roundings of each quota down or up that add up to 100, those whose rounded-up parts have the
    largest remainders (Hamilton's rule stated as a choice, not as a procedure; several on a tie)."""
    scale = 100 * 10**places
    total = sum(parts)
    quotas = [Fraction(part * scale, total) for part in parts]
    best, chosen = None, []
    for ups in itertools.product((0, 1), repeat=len(parts)):
        units = [math.floor(q) + up for q, up in zip(quotas, ups, strict=True)]
        if sum(units) != scale or any(up and q == math.floor(q) for q, up in zip(quotas, ups, strict=True)):
            continue
        key = sorted((q - math.floor(q) for q, up in zip(quotas, ups, strict=True) if up), reverse=True)
        if best is None or key > best:
            best, chosen = key, []
        if key == best:
            chosen.append([Fraction(unit, 10**places) for unit in units])
    return chosen


@pytest.mark.parametrize("parts", [[99, 6, 95], [1, 1, 1], [124, 8, 118], [7, 93], [3, 3, 3, 3, 3, 3, 3],
                                   [1, 2, 3, 4, 5, 6, 7]])
@pytest.mark.parametrize("places", [0, 1])
def test_largest_remainder_adds_up_to_100_and_matches_the_brute_force_choice(parts, places):
    rounded = largest_remainder(parts, places)
    assert sum(rounded) == Decimal(100)
    # A tie in the remainders may be broken either way by the choice: the one made must be among them.
    assert [Fraction(value) for value in rounded] in _brute_force(parts, places)


def _ctx(values, locale="en_US"):
    return make_context(describe(np.asarray(values, dtype=float), name="days", unit="days"), locale,
                        currency=None, unit=None, name=None)


def test_a_share_is_never_printed_as_none_or_all_unless_it_is():
    ctx = _ctx(range(10))
    assert ctx.shares((99, 6, 95)) == ("50%", "3%", "47%")  # half up alone gives 50%, 3% and 48%: 101
    assert ctx.shares((1, 999)) == ("0.1%", "99.9%")  # 0% and 100% would say none and all
    assert ctx.shares((1, 2999)) == ("0.03%", "99.97%")
    assert ctx.shares((0, 10)) == ("0%", "100%")  # none is none
    assert _ctx(range(10), "fr_FR").shares((1, 999)) == ("0,1\u00a0%", "99,9\u00a0%")


@pytest.mark.parametrize("locale", ["en_US", "es_ES", "fr_FR"])
def test_the_lead_shares_below_at_and_above_the_middle_add_up_to_100(locale):
    # Invented: days to a first visit, 99 below 22 days, six at exactly 22, 95 above. 49.5%, 3% and 47.5%
    # rounded half up one by one print as 50%, 3% and 48%.
    values = [10 + k % 12 for k in range(99)] + [22] * 6 + [23 + k % 30 for k in range(95)]
    text = narrate(describe(np.asarray(values, dtype=float), name="days", unit="days"), "memo", locale).plain_text()
    lead = text.split("\n")[3] if locale else text
    shares = [int(found) for found in re.findall(r"(\d+)\s?%", lead)[:3]]
    assert shares == [50, 3, 47], lead
