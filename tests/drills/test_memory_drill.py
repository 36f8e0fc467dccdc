"""The memory bound on a real server (tests/drills/memory_drill.py), short: a batch that fits is
answered in full within the bound of the worker's memory, one case more is refused with 413. The
long version is ``python -m tests.drills.memory_drill``."""

from __future__ import annotations

import sys

import pytest

from service.api.memory import BYTES_PER_CASE, FIXED_BYTES
from tests.drills.memory_drill import describe, memory_drill

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")


@pytest.mark.parametrize(("name", "shape", "max_memory"), [
    ("triangles", "columns", 48 << 20),
    ("machine-design", "rows", FIXED_BYTES["machine-design"] + 200 * BYTES_PER_CASE["machine-design"]["rows"]),
])
def test_a_batch_that_fits_stays_within_the_bound_and_one_more_case_is_413(report_figure, name, shape, max_memory):
    figure = memory_drill(name, shape, max_memory, timeout=120)
    report_figure("memory drill (short)", describe(figure))
    assert figure["over_status"] == 413, figure
    assert f"at most {figure['fit']} fit" in figure["over_detail"]
    assert figure["status"] == 200 and figure["computed"] == figure["fit"], figure
    assert figure["same_worker"], figure
    assert figure["growth"] <= max_memory, figure
