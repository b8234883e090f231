"""Tests of pipeopt.duty (definitions; 8760 h in a year, common practice)."""

import numpy as np
import pytest

from pipeopt.duty import DutyProfile
from pipeopt.errors import InputError


def test_growth_compounds():
    d = DutyProfile((0.1, 0.2), (1000, 2000), growth=0.05)
    q = d.flows_by_year(3)
    np.testing.assert_allclose(q, [[0.1, 0.2], [0.105, 0.21], [0.11025, 0.2205]])
    assert d.names == ("duty 1", "duty 2")


@pytest.mark.parametrize(
    ("flows", "hours", "growth", "match"),
    [
        ((0.1,), (9000,), 0.0, r"duty\[0\]\.hours must be between 0 and 8760"),
        ((0.1, 0.1), (5000, 5000), 0.0, "add up to 10000, more than the 8760 hours"),
        ((-0.1,), (100,), 0.0, r"duty\[0\]\.flow must be positive"),
        ((0.1,), (100, 200), 0.0, "1 flows but 2 hours"),
        ((0.1,), (100,), 2.0, "growth.flow_per_year"),
        ((), (), 0.0, "at least one duty point"),
    ],
)
def test_errors(flows, hours, growth, match):
    with pytest.raises(InputError, match=match):
        DutyProfile(flows, hours, growth)


def test_scaled():
    d = DutyProfile((0.1,), (1000,)).scaled(1.5, 2.0)
    assert d.flows == (pytest.approx(0.15),) and d.hours == (2000.0,)
