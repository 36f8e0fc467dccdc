"""Output selection: the answer restricted to the named outputs and checks equals the full answer
restricted, in every request shape and for every calculation (the service against itself)."""

from __future__ import annotations

import pytest

from tests.api.examples import COLUMN_NAMES, EXAMPLES, INVALID_INPUT, strict_json, valid_cases


def _post(client, name, body, query=""):
    response = client.post(f"/v1/{name}{query}", json=body)
    return response.status_code, strict_json(response.get_data(as_text=True))


def _selection(full_case: dict) -> tuple[list[str], list[str], list[str]]:
    """Two outputs (the only one, if one) and one check (if any) of a computed case, and the names
    that select them."""
    computed = [name for name in full_case if name not in ("checks", "assumed")]
    outputs = computed[1:3] or computed[:1]
    checks = list(full_case["checks"])[:1]
    return outputs, checks, outputs + [f"checks.{name}" for name in checks]


def _restricted_case(case: dict, outputs, checks) -> dict:
    kept = {name: value for name, value in case.items() if name in outputs}
    kept["checks"] = {name: value for name, value in case["checks"].items() if name in checks}
    if "assumed" in case:  # what the case took as given stays with any selection
        kept["assumed"] = case["assumed"]
    return kept


@pytest.mark.parametrize("name", list(EXAMPLES))
def test_one_case_and_rows_restricted_equal_the_full_answer_restricted(client, name):
    for case in valid_cases(name):
        status, full = _post(client, name, case)
        assert status == 200, full
        outputs, checks, names = _selection(full)
        status, restricted = _post(client, name, {**case, "outputs": names})
        assert status == 200, restricted
        assert restricted == _restricted_case(full, outputs, checks)
        assert set(restricted) - {"assumed"} == set(outputs) | {"checks"}
    # Rows with a physically impossible case: its outputs are null and its error stays.
    example = EXAMPLES[name]
    rows = {"cases": [example.good, example.bad, example.good]}
    status, full = _post(client, name, rows)
    assert status == 200 and full["errors"], full
    outputs, checks, names = _selection(full["results"][0])
    for body, query in (({**rows, "outputs": names}, ""), (rows, "?output=" + ",".join(names))):
        status, restricted = _post(client, name, body, query)
        assert status == 200, restricted
        assert restricted["errors"] == full["errors"]
        assert restricted["results"] == [_restricted_case(r, outputs, checks) for r in full["results"]]


@pytest.mark.parametrize("name", COLUMN_NAMES)
def test_columns_restricted_equal_the_full_answer_restricted(client, name):
    example = EXAMPLES[name]
    keys = list(dict.fromkeys([*example.good, *example.bad]))
    columns = {key: [example.good.get(key), example.bad.get(key), example.good.get(key)] for key in keys}
    if any(None in values for values in columns.values()):
        pytest.skip("the good and bad cases name different fields")
    status, full = _post(client, name, {"columns": columns})
    assert status == 200 and full["errors"], full
    names = [n for n in full["columns"] if n not in ("checks", "assumed")][:2]
    names += [f"checks.{n}" for n in list(full["columns"]["checks"])[:1]]
    status, restricted = _post(client, name, {"columns": columns, "outputs": names})
    assert status == 200, restricted
    assert restricted["errors"] == full["errors"]
    expected = {n: v for n, v in full["columns"].items() if n in names}
    expected["checks"] = {n: v for n, v in full["columns"]["checks"].items() if f"checks.{n}" in names}
    assert restricted["columns"] == expected


def test_a_check_by_its_name_or_its_status(client):
    case = EXAMPLES["triangles"].good
    status, full = _post(client, "triangles", case)
    for names in (["checks.velocity_ratio_rotor.status"], ["checks.velocity_ratio_rotor"]):
        status, restricted = _post(client, "triangles", {**case, "outputs": names})
        assert status == 200
        assert restricted == {"checks": {"velocity_ratio_rotor": full["checks"]["velocity_ratio_rotor"]}}
    # A name that is both an output and a check is the output; checks.NAME is the check.
    status, restricted = _post(client, "triangles", {**case, "outputs": ["de_haller_rotor"]})
    assert restricted == {"de_haller_rotor": full["de_haller_rotor"], "checks": {}}


@pytest.mark.parametrize(("outputs", "pointer"), [
    (["alpha1", "no_such_output"], "/outputs/1"),
    (["velocity_ratio_rotor"], "/outputs/0"),  # a check without the checks. prefix
    (["checks.no_such_check"], "/outputs/0"),
    (["checks.de_haller_rotor.limits"], "/outputs/0"),
    (["alpha 1"], "/outputs/0"),
    ([], "/outputs"),
    ("alpha1", "/outputs"),
    ([1], "/outputs"),
    (None, "/outputs"),
])
def test_an_unknown_name_is_a_422_naming_it(client, outputs, pointer):
    for body in ({**EXAMPLES["triangles"].good, "outputs": outputs}, {"cases": [EXAMPLES["triangles"].good],
                                                                       "outputs": outputs}):
        response = client.post("/v1/triangles", json=body)
        problem = strict_json(response.get_data(as_text=True))
        assert response.status_code == 422 and problem["type"] == INVALID_INPUT, problem
        assert [error["pointer"] for error in problem["errors"]] == [pointer]


def test_outputs_in_the_body_and_the_query_are_judged_each_and_answered_together(client):
    good = EXAMPLES["triangles"].good
    response = client.post("/v1/triangles?output=beta1", json={"cases": [good], "outputs": []})
    assert response.status_code == 422
    assert [e["pointer"] for e in strict_json(response.get_data(as_text=True))["errors"]] == ["/outputs"]
    answer = strict_json(client.post("/v1/triangles?output=beta1", json={"cases": [good], "outputs": ["alpha1"]})
                         .get_data(as_text=True))
    assert set(answer["results"][0]) == {"alpha1", "beta1", "checks"}
