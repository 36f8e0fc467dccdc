"""The rows answer written as text equals, byte for byte, orjson's writing of the rows as dicts.

Reference: ``orjson.dumps(body, option=OPT_SERIALIZE_NUMPY)`` (orjson, from PyPI) of the body
laid out with one dict per case (``run_calculation`` without ``stream``), on a stand-in
calculation made to reach the corners of the text writer: a signed zero in an output that a check
repeats only up to the sign, whole numbers with failed cases, a ``%`` and non-ASCII text in a
rule's basis, options that split the batch into outcomes whose cases interleave, and slices of
rows smaller than the batch.
"""

import numpy as np
import orjson
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from marshmallow import Schema

from service.api import jsonwrite
from service.api.calculation import run_calculation
from service.api.common import integer_output, output, positive
from service.api.declarations import Alternative, Calculation, Choice
from service.api.fields import CaseSchema, Option
from service.api.rowstext import RowsText
from service.core.cases import CaseResults
from service.core.checks import RuleCheck

OPTION = orjson.OPT_SERIALIZE_NUMPY


class StandInInput(CaseSchema):
    x = positive("A number. [-]", "-")
    kind = Option("Which rule basis applies.", ("a", "b"), load_default="a")


StandInOutput = Schema.from_dict({"signed": output("x - 1, signed. [-]", "-"),
                                  "count": integer_output("x rounded down. [-]"),
                                  "half": output("x / 2. [-]", "-")}, name="StandInOutput")


def _compute(options, inputs):
    x = np.asarray(inputs["x"], dtype=float)
    failed = x > 50.0
    signed = np.where(x == 1.0, -0.0, x - 1.0)  # -0.0 at x = 1
    count = np.floor(x)
    half = x / 2.0
    values = {name: np.where(failed, np.nan, a) for name, a in
              {"signed": signed, "count": count, "half": half}.items()}
    basis = "10% rule, common practice" if options["kind"] == "a" else "Müller–Ähnlich (1950), from memory"
    checks = {
        # Judges |signed|: equal to "signed" except for the sign of zero, so its texts are its own.
        "size": RuleCheck(value=np.abs(values["signed"]), limit=2.0, comparison="at_most", basis=basis),
        "half": RuleCheck(value=values["half"], limit=1.0, comparison="at_least", basis=basis,
                          fail_limit=0.5 if options["kind"] == "b" else None),
    }
    return CaseResults(values=values, failures=[("x above 50", failed)], checks=checks)


CALCULATION = Calculation("stand-in", "", "", StandInInput, StandInOutput,
                          (Choice("only", "x", (Alternative("only", "x", required=("x",)),)),), _compute)


@pytest.fixture(autouse=True)
def small_slices(monkeypatch):
    monkeypatch.setattr(RowsText, "ROWS_PER_PIECE", 3)


def _texts(cases):
    streamed, _ = run_calculation(CALCULATION, {"cases": cases}, 1000, stream=True)
    plain, _ = run_calculation(CALCULATION, {"cases": cases}, 1000)
    assert isinstance(streamed["results"], RowsText) and isinstance(plain["results"], list)
    return b"".join(jsonwrite.pieces(streamed)), orjson.dumps(plain, option=OPTION)


def test_corners_of_the_text_writer():
    cases = [{"x": 1.0}, {"x": 1.0, "kind": "b"}, {"x": 60.0}, {"x": 2.5, "kind": "b"}, {"x": 0.25},
             {"x": 70.0, "kind": "b"}, {"x": 3.0}]
    text, reference = _texts(cases)
    assert text == reference
    assert b'"signed":-0.0' in text and b'"value":0.0' in text  # the signed zero kept apart
    assert b"10% rule" in text and "Müller".encode() in text


@pytest.mark.parametrize("cases", [
    pytest.param([{"x": 2.0, "kind": "b"}] * 5, id="one-case-repeated"),
    pytest.param([{"x": 60.0}] * 4, id="every-case-failed"),
    pytest.param([{"x": 2.0}, {"x": 60.0}, {"x": 2.0}, {"x": 2.0}], id="one-value-and-a-failure"),
])
def test_columns_of_one_value_are_written_into_the_text_around_them(cases):
    # Every column holds one value (or one value and the nulls of a failed case): the writer folds
    # such a column into its constant text, or writes it as usual where a case failed.
    text, reference = _texts(cases)
    assert text == reference


@settings(max_examples=60, deadline=None)
@given(st.lists(st.fixed_dictionaries({"x": st.floats(0.001, 100.0, allow_nan=False)},
                                      optional={"kind": st.sampled_from(["a", "b"])}), min_size=1, max_size=20))
def test_random_rows_text_is_orjsons_text_of_the_dicts(cases):
    text, reference = _texts(cases)
    assert text == reference
