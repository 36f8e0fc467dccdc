"""The shared masking of failed cases (service.core.cases.masked_results).

Properties checked against the definition in the module's docstring, not against physics:
failed cases hold NaN (0 in integer outputs), every output is a full-shape C-contiguous array
of its own (serialisers read them as flat buffers), and the caller's inputs are never written to.
"""

from __future__ import annotations

import numpy as np
import pytest

from service.core import diffusion, triangles, zweifel
from service.core.cases import masked_results


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
