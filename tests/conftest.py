"""Shared helpers for the test suite."""
from decimal import ROUND_HALF_UP, Decimal

import pytest


def round_half_up(x: float, places: int = 2) -> float:
    """Round as BS 7671's tables round (half up), not as Python's round() does."""
    q = Decimal(1).scaleb(-places)
    return float(Decimal(repr(float(x))).quantize(q, rounding=ROUND_HALF_UP))


@pytest.fixture
def half_up():
    return round_half_up
