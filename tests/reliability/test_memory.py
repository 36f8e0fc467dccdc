"""The memory bound of a request (service/api/memory.py) and the chunked computation.

- A batch whose cases would take more than ``MAX_MEMORY`` (``MEANLINE_MAX_MEMORY``) is refused
  with 413 and the too-large problem before it is loaded, saying how many cases fit; a batch of
  exactly that many is computed.
- The machine design and the stage split are computed a chunk of cases at a time, and their rows
  answers written a slice at a time: the answer is the same, byte for byte, as computed and laid
  out in one piece (a mixed batch: other stage counts, an option per case, an impossible case);
  so is a columns answer of the machine design written chunk by chunk.
- The default bound follows the container's memory limit (cgroup v2 and v1 files).
The memory actually taken is measured on a real worker in tests/drills/test_memory_drill.py and
by ``python -m tests.benchmarks.memory``.
"""

from __future__ import annotations

import json
import re

import orjson
import pytest

from service import create_app
from service.api import memory
from service.api.calculation import run_calculation
from service.api.problems import TOO_LARGE
from service.api.registry import CALCULATIONS
from tests.api.examples import EXAMPLES

TRIANGLES = EXAMPLES["triangles"].good
MACHINE = EXAMPLES["machine-design"]


@pytest.fixture
def environment(monkeypatch):
    for name in ("MEANLINE_MAX_MEMORY", "MEANLINE_MAX_CASES", "MEANLINE_API_KEYS", "MEANLINE_API_KEYS_FILE"):
        monkeypatch.delenv(name, raising=False)
    return monkeypatch


def _post(client, name, body):
    return client.post(f"/v1/{name}", data=json.dumps(body), content_type="application/json")


@pytest.mark.parametrize("shape", ["rows", "columns"])
def test_a_batch_over_the_memory_bound_is_413_saying_how_many_cases_fit(environment, shape):
    per_case = memory.bytes_per_case("triangles", shape)
    environment.setenv("MEANLINE_MAX_MEMORY", str(per_case * 300 + per_case // 2))
    client = create_app().test_client()

    def batch(count):
        if shape == "rows":
            return {"cases": [TRIANGLES] * count}
        return {"columns": {**TRIANGLES, "flow_coefficient": [0.5] * count}}

    over = _post(client, "triangles", batch(301))
    assert over.status_code == 413
    assert over.mimetype == "application/problem+json"
    assert over.json["type"] == TOO_LARGE
    assert re.search(r"\bat most 300 fit\b", over.json["detail"]), over.json["detail"]
    assert "301 cases" in over.json["detail"]
    assert _post(client, "triangles", batch(300)).status_code == 200


def test_the_machine_design_bound_counts_its_fixed_share(environment):
    fixed, per_case = memory.FIXED_BYTES["machine-design"], memory.bytes_per_case("machine-design", "rows")
    client = create_app({"MAX_MEMORY": fixed + 4 * per_case}).test_client()
    assert memory.cases_that_fit("machine-design", "rows", fixed + 4 * per_case) == 4
    assert _post(client, "machine-design", {"cases": [MACHINE.good] * 4}).status_code == 200
    over = _post(client, "machine-design", {"cases": [MACHINE.good] * 5})
    assert over.status_code == 413 and "at most 4 fit" in over.json["detail"]


def test_every_measured_cost_is_of_a_served_calculation_and_shape():
    # A new endpoint needs no entry: it gets memory.DEFAULT_BYTES_PER_CASE (assumed) until it is
    # measured (python -m tests.benchmarks.memory); an entry must not outlive its endpoint.
    served = {c.name for c in CALCULATIONS}
    for name, shapes in memory.BYTES_PER_CASE.items():
        assert name in served and set(shapes) <= {"rows", "columns"}, (name, shapes)


@pytest.mark.parametrize("calculation", CALCULATIONS, ids=lambda c: c.name)
def test_every_calculation_is_bounded_by_its_cost_or_the_default(environment, calculation):
    """Three cases fit a bound of three cases' cost (measured, or the default for an unmeasured
    calculation), four do not."""
    per_case = memory.bytes_per_case(calculation.name, "rows")
    assert per_case == memory.BYTES_PER_CASE.get(calculation.name, {}).get("rows", memory.DEFAULT_BYTES_PER_CASE)
    client = create_app({"MAX_MEMORY": memory.FIXED_BYTES.get(calculation.name, 0) + 3 * per_case}).test_client()
    good = EXAMPLES[calculation.name].good
    assert _post(client, calculation.name, {"cases": [good] * 3}).status_code == 200
    over = _post(client, calculation.name, {"cases": [good] * 4})
    assert over.status_code == 413 and "at most 3 fit" in over.json["detail"], over.json


def _answer(name, body, chunks, monkeypatch):
    monkeypatch.setattr(memory, "CHUNK_CASES", chunks)
    calculation = next(c for c in CALCULATIONS if c.name == name)
    streamed, _ = run_calculation(calculation, json.loads(json.dumps(body)), 1000, stream=True)
    whole, _ = run_calculation(calculation, json.loads(json.dumps(body)), 1000, stream=False)
    from service.api import jsonwrite

    text = b"".join(jsonwrite.pieces(streamed))
    assert text == orjson.dumps(whole, option=orjson.OPT_SERIALIZE_NUMPY)  # streamed as laid out whole
    return text


@pytest.mark.parametrize("name", ["machine-design", "stage-split"])
def test_chunked_computation_gives_the_same_answer(monkeypatch, name):
    example = EXAMPLES[name]
    cases = []
    for i in range(11):
        case = dict(example.good)
        if "stages" in case:
            case["stages"] = 2 + i % 3  # other per-stage list lengths
        case["total_temperature"] = 288.15 + i
        cases.append(case)
    cases[4] = dict(example.bad)  # physically impossible: an entry in errors
    cases[7] = dict(example.variants[0]) if example.variants else cases[7]
    body = {"cases": cases}
    in_one = _answer(name, body, {}, monkeypatch)
    chunked = _answer(name, body, {name: 3}, monkeypatch)
    assert chunked == in_one
    answer = orjson.loads(in_one)
    assert len(answer["results"]) == 11 and [e["index"] for e in answer["errors"]] == [4]


def test_a_chunked_columns_answer_is_written_chunk_by_chunk_as_laid_out_whole(monkeypatch):
    # One group in chunks of 3 (outcomes holding the cases in turn, of different list widths): the
    # streamed answer writes each chunk's per-stage blocks in turn and is the same text as the
    # answer laid out whole, and as the answer computed in one chunk.
    good, bad = MACHINE.good, MACHINE.bad
    size = 11
    choked = 5
    columns = {**good, "stages": [2 + i % 3 for i in range(size)],
               "total_temperature": [288.15 + i for i in range(size)],
               **{name: [bad[name] if i == choked else good[name] for i in range(size)]
                  for name in ("shaft_speed", "flow_coefficient")}}
    body = {"columns": columns}
    monkeypatch.setitem(memory.CHUNK_CASES_GIVEN, "machine-design", {})
    in_one = _answer("machine-design", body, {}, monkeypatch)
    chunked = _answer("machine-design", body, {"machine-design": 3}, monkeypatch)
    assert chunked == in_one
    answer = orjson.loads(chunked)
    assert [e["index"] for e in answer["errors"]] == [choked]
    assert [None if v is None else len(v) for v in answer["columns"]["stage_pressure_ratio"]] == \
        [None if i == choked else 2 + i % 3 for i in range(size)]
    calculation = next(c for c in CALCULATIONS if c.name == "machine-design")
    streamed, _ = run_calculation(calculation, json.loads(json.dumps(body)), 1000, stream=True)
    assert len(streamed["columns"]["stage_pressure_ratio"].blocks) == 4  # written chunk by chunk


def test_the_default_bound_follows_the_container_limit(tmp_path):
    (tmp_path / "memory.max").write_text("2147483648\n")
    assert memory.container_limit(str(tmp_path)) == 2 << 30
    share = memory.default_max_memory(2, 2 << 30)
    assert share == ((2 << 30) - 3 * memory.WORKER_BASE_BYTES) // 2
    (tmp_path / "memory.max").write_text("max\n")
    assert memory.container_limit(str(tmp_path)) is None
    assert memory.default_max_memory(2, None) == memory.DEFAULT_MAX_MEMORY
    v1 = tmp_path / "v1"
    (v1 / "memory").mkdir(parents=True)
    (v1 / "memory" / "memory.limit_in_bytes").write_text("9223372036854771712\n")  # v1's "no limit"
    assert memory.container_limit(str(v1)) is None
    (v1 / "memory" / "memory.limit_in_bytes").write_text("536870912\n")
    assert memory.container_limit(str(v1)) == 512 << 20
