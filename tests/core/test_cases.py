"""The shared masking of failed cases (service.core.cases.masked_results) and the reasons.

Properties checked against the definitions in the module's docstrings, not against physics:
failed cases hold NaN (0 in integer outputs), every output is a full-shape C-contiguous array
of its own (serialisers read them as flat buffers), the caller's inputs are never written to,
a reason with a number per case (NumberedReason) gives every case the text of its own
number, through prefixes, slices and subsets, and every case's failure (failure_codes) is the one
its docstring defines.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from service.core import diffusion, triangles, zweifel
from service.core.cases import (
    LARGEST_WHOLE,
    NOT_FINITE,
    CaseResults,
    NumberedReason,
    failure_codes,
    masked_results,
    prefixed,
    reason_for,
    reason_texts,
)


def test_masks_failed_cases_and_broadcasts_scalars():
    given = np.array([1.0, 2.0, 3.0])
    counts = np.array([4, 5, 6], dtype=np.int32)
    result = masked_results({"given": given, "scalar": 7.0, "count": counts},
                            [("first", np.array([True, False, False])), ("second", np.array(False))],
                            inputs=(given,))
    np.testing.assert_allclose(result.values["given"], [np.nan, 2.0, 3.0], rtol=0, atol=0)
    np.testing.assert_allclose(result.values["scalar"], [np.nan, 7.0, 7.0], rtol=0, atol=0)
    np.testing.assert_array_equal(result.values["count"], [0, 5, 6])
    assert result.values["count"].dtype == np.int64
    # The input is untouched and not aliased; the integer output was converted, so the
    # caller's integer array is untouched too.
    np.testing.assert_allclose(given, [1.0, 2.0, 3.0], rtol=0, atol=0)
    np.testing.assert_array_equal(counts, [4, 5, 6])
    assert not np.shares_memory(result.values["given"], given)
    np.testing.assert_array_equal(result.failed(), [True, False, False])
    assert [mask.shape for _, mask in result.failures] == [(3,), (3,)]


def test_without_failures_outputs_are_contiguous_arrays_of_their_own():
    strided = np.arange(6.0).reshape(3, 2)[:, 1]
    result = masked_results({"strided": strided, "scalar": 2.0}, [("never", np.zeros(3, dtype=bool))],
                            checks=lambda out, failed: {"seen": failed.sum()})
    for array in result.values.values():
        assert array.shape == (3,) and array.flags.c_contiguous and array.flags.writeable
    np.testing.assert_allclose(result.values["strided"], [1.0, 3.0, 5.0], rtol=0, atol=0)
    assert result.checks == {"seen": 0}


def _copies(arguments):
    return {k: np.array(v, copy=True) for k, v in arguments.items() if isinstance(v, np.ndarray)}


CALLS = [
    (triangles.evaluate_stage_from_duty,
     dict(machine="compressor", flow_coefficient=np.array([0.5, -0.1, 0.6]), loading_coefficient=0.4,
          reaction=np.array([0.5, 0.5, 0.7]), blade_speed=np.array([300.0, 300.0, 250.0]),
          total_temperature=np.array([288.15, 288.15, 5.0]), total_pressure=101325.0)),
    (zweifel.evaluate_zweifel_analysis,
     dict(inlet_angle=np.array([10.0, 0.0, 20.0]), outlet_angle=-65.0, axial_chord=np.array([0.04, -0.01, 0.04]),
          pitch=np.array([0.03, 0.03, -0.02]))),
    (diffusion.evaluate_diffusion_analysis,
     dict(row="rotor", axial_velocity=np.array([150.0, -1.0, 150.0]), inlet_angle=-55.0, outlet_angle=-35.0,
          solidity=np.array([1.2, 1.2, -1.0]))),
]


@pytest.mark.parametrize(("function", "arguments"), CALLS, ids=[f.__name__ for f, _ in CALLS])
def test_cores_leave_their_inputs_untouched(function, arguments):
    before = _copies(arguments)
    result = function(**arguments)
    assert result.failed().any() and not result.failed().all()
    for name, copy in before.items():
        np.testing.assert_array_equal(arguments[name], copy, err_msg=name)
    for name, array in result.values.items():
        assert array.flags.c_contiguous, name
        if array.dtype.kind == "f":
            assert np.isnan(array[result.failed()]).all(), name


def _at(number):
    return f"reaches {number:.3f}"


def test_a_numbered_reason_gives_each_case_the_text_of_its_own_number():
    reason = NumberedReason(_at, np.array([0.25, 0.5, 0.25, 9.0, 0.0]))
    texts, which = reason_texts(reason, np.array([True, True, True, False, True]))
    # One text per distinct number among the chosen cases; the unchosen case's number makes none.
    assert sorted(texts) == ["reaches 0.000", "reaches 0.250", "reaches 0.500"]
    assert [texts[k] for k in which] == ["reaches 0.250", "reaches 0.500", "reaches 0.250", "reaches 0.000"]
    # A plain text is the same for every chosen case.
    texts, which = reason_texts("too hot", np.array([True, False, True]))
    assert texts == ["too hot"]
    np.testing.assert_array_equal(which, [0, 0])


def test_a_numbered_reason_keeps_its_numbers_through_prefixes_slices_and_subsets():
    numbers = np.array([[0.1, 0.2], [0.3, 0.4], [0.5, 0.6]])
    mask = np.array([[True, False], [False, True], [True, True]])
    reason = prefixed("stage 1: ", prefixed("row 2: ", NumberedReason(_at, numbers)))
    assert prefixed("stage 1: ", "too hot") == "stage 1: too hot"

    def second_column(a):
        return a[:, 1]

    column = reason_for(reason, second_column)
    texts, which = reason_texts(column, second_column(mask))
    assert [texts[k] for k in which] == ["stage 1: row 2: reaches 0.400", "stage 1: row 2: reaches 0.600"]

    # Three cases computed as a subset of five, put back in place.
    index = np.array([4, 0, 2])

    def in_place(a):
        full = np.zeros(5, dtype=a.dtype)
        full[index] = a
        return full

    first = reason_for(reason_for(reason, lambda a: a[:, 0]), in_place)
    placed = in_place(mask[:, 0])
    texts, which = reason_texts(first, placed)
    np.testing.assert_array_equal(placed, [False, False, True, False, True])
    assert [texts[k] for k in which] == ["stage 1: row 2: reaches 0.500", "stage 1: row 2: reaches 0.100"]
    assert reason_for("too hot", in_place) == "too hot"


def test_merged_results_prefix_the_numbered_reasons_of_the_other():
    mask = np.array([False, True, True])
    other = CaseResults(values={"x": np.array([1.0, np.nan, np.nan])},
                        failures=[(NumberedReason(_at, np.array([0.0, 0.7, 0.8])), mask)])
    merged = CaseResults(values={"y": np.array([1.0, 2.0, 3.0])}).merged(other, "rotor")
    np.testing.assert_array_equal(merged.failed(), mask)
    (reason, where), = merged.failures
    texts, which = reason_texts(reason, where)
    assert [texts[k] for k in which] == ["rotor: reaches 0.700", "rotor: reaches 0.800"]
    np.testing.assert_allclose(merged.values["y"], [1.0, np.nan, np.nan], rtol=0, atol=0)


def _reason_by_definition(failures, values, absent, whole_outputs, i):
    """Case i's reason code read off failure_codes' docstring one case at a time (bookkeeping, no
    physics): the first core reason that applies, else an output that is not finite (a per-stage row
    may end in NaN padding after its last finite entry; an absent entry does not count), else a
    whole-number output beyond LARGEST_WHOLE."""
    for code, (_, mask) in enumerate(failures, start=1):
        if np.broadcast_to(mask, (len(next(iter(values.values()))),))[i]:
            return code
    for name, array in values.items():
        row = np.atleast_1d(array[i]).copy()
        if name in absent:
            row[absent[name][i]] = 0.0
        finite = np.isfinite(row).tolist()
        last = max((k for k, f in enumerate(finite) if f), default=-1)
        padding_only = last >= 0 and all(finite[: last + 1]) and all(np.isnan(row[last + 1:]))
        whole_too_big = name in whole_outputs and any(abs(v) > LARGEST_WHOLE for v in row[np.isfinite(row)])
        if not padding_only or whole_too_big:
            return len(failures) + 1
    return 0


@settings(max_examples=300, deadline=None)
@given(st.data())
def test_failure_codes_follow_their_definition(data):
    size = data.draw(st.integers(1, 6))
    entry = st.sampled_from([np.nan, np.inf, -np.inf, 1.0, -2.5, 2.0**60])
    masks = st.lists(st.booleans(), min_size=size, max_size=size).map(np.array) | st.booleans()
    # Every mask an array of the cases (the usual core) or some of them scalars.
    failures = [(f"reason {k}", mask) for k, mask in enumerate(data.draw(st.lists(masks, max_size=6)))]
    width = data.draw(st.integers(1, 4))
    values = {"x": np.array(data.draw(st.lists(entry, min_size=size, max_size=size))),
              "rows": np.array(data.draw(st.lists(st.lists(entry, min_size=width, max_size=width),
                                                  min_size=size, max_size=size)))}
    absent = {"rows": np.array(data.draw(st.lists(st.lists(st.booleans(), min_size=width, max_size=width),
                                                  min_size=size, max_size=size)))}
    values["rows"][absent["rows"]] = np.nan  # as the core leaves an entry that does not apply
    whole = data.draw(st.sampled_from([frozenset(), frozenset({"x"}), frozenset({"rows"})]))
    reason, reasons = failure_codes(failures, values, absent, whole)
    assert reasons == [text for text, _ in failures] + [NOT_FINITE]
    assert reason.tolist() == [_reason_by_definition(failures, values, absent, whole, i) for i in range(size)]
