"""RuleCheck statuses, as text and as codes, against the definition in its docstring."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from service.core.checks import STATUSES, RuleCheck

VALUES = st.lists(st.one_of(st.floats(-2.0, 2.0), st.just(float("nan"))), min_size=1, max_size=30)


@settings(max_examples=60, deadline=None)
@given(values=VALUES, beyond=st.sampled_from(["warn", "fail"]), comparison=st.sampled_from(["at_least", "at_most"]),
       with_fail_limit=st.booleans())
def test_status_codes_are_the_positions_of_the_statuses(values, beyond, comparison, with_fail_limit):
    limit, fail_limit = (0.45, 0.6) if comparison == "at_most" else (0.72, 0.5)
    check = RuleCheck(value=np.array(values), limit=limit, comparison=comparison, basis="common practice",
                      beyond_limit=beyond, fail_limit=fail_limit if with_fail_limit else None)
    # The definition, case by case: past the limit gives beyond_limit, past the fail limit "fail",
    # and a NaN crosses nothing.
    expected = []
    for v in values:
        past = (v < limit) if comparison == "at_least" else (v > limit)
        past_fail = with_fail_limit and ((v < fail_limit) if comparison == "at_least" else (v > fail_limit))
        expected.append("fail" if past_fail else beyond if past else "ok")
    assert check.status.tolist() == expected
    assert check.status.dtype == np.dtype("<U4")
    assert check.status_code.dtype == np.uint8
    assert [STATUSES[k] for k in check.status_code.tolist()] == expected


@pytest.mark.parametrize(("value", "status"), [(0.40, "ok"), (0.50, "warn"), (0.65, "fail")])
def test_one_case_given_as_a_scalar_keeps_a_zero_dimensional_status(value, status):
    # Rotor tip: warn above 0.45, fail above 0.6 (the design brief's limits).
    check = RuleCheck(value=np.float64(value), limit=0.45, comparison="at_most", basis="common practice",
                      fail_limit=0.6)
    assert check.status.shape == () and check.status.dtype == np.dtype("<U4")
    assert str(check.status) == status
    assert STATUSES[int(check.status_code)] == status
