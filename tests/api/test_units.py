"""Quantities as strings with their unit: conversion factors against NIST SP 811, and unit strings
giving the answers of the same quantities sent as SI numbers (to 1e-12 relative)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from service.api import units
from service.api.registry import CALCULATIONS
from tests.api.examples import EXAMPLES, INVALID_INPUT, strict_json

# NIST SP 811 (2008 edition), Appendix B.8, "Factors for units listed alphabetically"; from memory
# (the table not at hand) except where noted. Exact factors in SP 811's bold type are marked exact.
FT = 0.3048  # foot -> meter, exact
INCH = 0.0254  # inch -> meter, exact
LB = 0.45359237  # pound (avoirdupois) -> kilogram, exact
PSI = 6.894757e3  # pound-force per square inch -> pascal, 6.894 757 E+03 (rounded to 7 digits)
RPM = 1.047198e-1  # revolution per minute -> radian per second, 1.047 198 E-01 (rounded)
BTU_PER_LB_DEGF = 4.1868e3  # Btu_IT per pound degree Fahrenheit -> J/(kg K), exact
BTU_IT = 1.055056e3  # Btu_IT -> joule, 1.055 056 E+03 (also in the SP 811 table as reproduced in handbooks)


@pytest.mark.parametrize(("text", "unit", "expected", "rtol"), [
    # An exact factor to within the rounding of pint's chain of double-precision factors.
    ("1 ft", "m", FT, 1e-15),
    ("1 in", "m", INCH, 1e-15),
    ("1 ft/s", "m s^-1", FT, 1e-15),
    ("1 lb/s", "kg s^-1", LB, 1e-15),
    ("1 psi", "Pa", PSI, 1e-7),
    ("1 lbf/in**2", "Pa", PSI, 1e-7),
    ("1.8 degR", "K", 1.0, 1e-15),  # T/K = (T/degR)/1.8
    ("32 degF", "K", 273.15, 1e-15),  # T/K = (t/degF + 459.67)/1.8
    ("0 degC", "K", 273.15, 1e-15),
    ("1 Btu/lb/delta_degF", "J kg^-1 K^-1", BTU_PER_LB_DEGF, 1e-6),  # pint's Btu is ISO's 1055.056 J
    ("1 lbf*s/ft**2", "Pa s", 4.788026e1, 1e-6),  # pound-force second per square foot, 4.788 026 E+01
    ("1 Btu", "J kg^-1", None, None),  # energy is not specific energy: refused (below)
])
def test_conversion_factors_agree_with_nist_sp_811(text, unit, expected, rtol):
    if expected is None:
        with pytest.raises(units.ValidationError, match="dimension"):
            units.to_si(text, unit, "work")
        return
    np.testing.assert_allclose(units.to_si(text, unit, "x"), expected, rtol=rtol, atol=0)


def test_shaft_speed_in_rpm_and_radians_per_second():
    # 1 r/min = 1.047198E-01 rad/s (NIST SP 811 B.8, from memory): 1000 rad/s in rev/min.
    np.testing.assert_allclose(units.to_si("1000 rad/s", "rev min^-1", "shaft_speed"), 1000 / RPM, rtol=1e-6)
    assert units.to_si("12000 rpm", "rev min^-1", "shaft_speed") == 12000
    np.testing.assert_allclose(units.to_si("200 rev/s", "rev min^-1", "shaft_speed"), 12000, rtol=1e-15)


def test_every_documented_unit_is_known_to_pint():
    documented = {f.unit for c in CALCULATIONS for f in c._case_schema.fields.values() if hasattr(f, "unit")}
    documented |= {f.item.unit for c in CALCULATIONS for f in c._case_schema.fields.values() if hasattr(f, "item")}
    # Outputs too: an answer in US units (units=us) converts every output by its x-unit.
    documented |= {f.metadata["x-unit"] for c in CALCULATIONS for f in c.outputs().fields.values()}
    assert documented <= set(units.PINT_UNITS) & set(units.US_UNITS)
    for unit in units.PINT_UNITS:
        assert units.to_si(f"1 {units.PINT_UNITS[unit]}", unit, "x") == 1.0


US_TRIANGLES = ({"blade_speed": ("984.25 ft/s", 984.25 * FT), "total_temperature": ("518.67 degR", 518.67 / 1.8),
                 "total_pressure": ("14.696 psi", 14.696 * LB * 9.80665 / INCH**2)})
US_MACHINE = {"mass_flow": ("45 lb/s", 45 * LB), "shaft_speed": ("12000 rpm", 12000.0),
              "total_temperature": ("518.67 degR", 518.67 / 1.8),
              "total_pressure": ("2116.2 lbf/ft**2", 2116.2 * LB * 9.80665 / FT**2),
              "mean_radius": ("11.811 in", 11.811 * INCH)}


def _assert_same_answer(a, b):
    if isinstance(a, dict):
        assert a.keys() == b.keys()
        for key in a:
            _assert_same_answer(a[key], b[key])
    elif isinstance(a, list):
        assert len(a) == len(b)
        for x, y in zip(a, b, strict=True):
            _assert_same_answer(x, y)
    elif isinstance(a, float) and isinstance(b, float):
        assert math.isclose(a, b, rel_tol=1e-12, abs_tol=1e-12), (a, b)
    else:
        assert a == b


@pytest.mark.parametrize(("name", "base", "given"), [
    ("triangles", EXAMPLES["triangles"].good, US_TRIANGLES),
    ("machine-design", EXAMPLES["machine-design"].good, US_MACHINE),
])
def test_unit_strings_give_the_answers_of_si_numbers(client, name, base, given):
    # The SI numbers: the US values times the NIST SP 811 factors (lbf = lb x standard gravity
    # 9.80665 m/s^2, exact), so each side converts on its own.
    with_units = {**base, **{field: text for field, (text, _) in given.items()}}
    with_si = {**base, **{field: value for field, (_, value) in given.items()}}
    a = strict_json(client.post(f"/v1/{name}", json=with_units).get_data(as_text=True))
    b = strict_json(client.post(f"/v1/{name}", json=with_si).get_data(as_text=True))
    assert "checks" in a
    _assert_same_answer(a, b)
    # Rows convert the same way.
    rows = strict_json(client.post(f"/v1/{name}", json={"cases": [with_units, with_si]}).get_data(as_text=True))
    _assert_same_answer(rows["results"][0], rows["results"][1])


def test_a_column_of_unit_strings(client):
    base = EXAMPLES["triangles"].good
    columns = {**base, "blade_speed": ["984.25 ft/s", 300.0, "1080 km/h"]}
    body = strict_json(client.post("/v1/triangles", json={"columns": columns}).get_data(as_text=True))
    np.testing.assert_allclose(body["columns"]["blade_speed"], [984.25 * FT, 300.0, 300.0], rtol=1e-12)


@pytest.mark.parametrize(("field", "text", "fragments"), [
    ("mean_radius", "30 kg", ["mean_radius", "[length]", "[mass]"]),
    ("total_temperature", "30 m", ["total_temperature", "[temperature]", "[length]"]),
    ("blade_speed", "30 furlongz", ["Unknown unit"]),
    ("blade_speed", "300", ["JSON number"]),
    ("blade_speed", "fast", ["Not a number"]),
    ("blade_speed", "-300 ft/s", ["Must be at least"]),  # the documented range, as for the number
])
def test_a_wrong_unit_is_a_422_naming_the_field(client, field, text, fragments):
    case = {**EXAMPLES["triangles"].good, "mean_radius": 0.3, "rotor_solidity": 1.2, "stator_solidity": 1.0}
    if field == "mean_radius":  # a compressor stage takes a mean radius with its chord and blade counts
        case = {**EXAMPLES["triangles"].good, "chord": 0.05, "rotor_blade_count": 40, "stator_blade_count": 50,
                "mean_radius": text}
    else:
        case.pop("mean_radius")
        case[field] = text
    problem = strict_json(client.post("/v1/triangles", json=case).get_data(as_text=True))
    assert problem["status"] == 422 and problem["type"] == INVALID_INPUT, problem
    (error,) = problem["errors"]
    assert error["pointer"] == f"/{field}"
    assert all(fragment in error["detail"] for fragment in fragments), error["detail"]


def test_hz_is_refused_for_a_shaft_speed(client):
    case = {**EXAMPLES["machine-design"].good, "shaft_speed": "200 Hz"}
    problem = strict_json(client.post("/v1/machine-design", json=case).get_data(as_text=True))
    assert [e["pointer"] for e in problem["errors"]] == ["/shaft_speed"] and "rev/s" in problem["errors"][0]["detail"]


# SI value per US customary value of each answer's unit, from the NIST SP 811 factors above:
# lbf = lb x 9.80665 m/s^2 (standard gravity, exact); Btu is pint's ISO Btu (1055.056 J), which
# differs from SP 811's Btu_IT (1.055 056 E+03, rounded) by about 1e-7; horsepower (550 ft lbf/s)
# -> watt 7.456 999 E+02 (SP 811 B.8, from memory).
SI_PER_US = {
    "-": (1.0, 0), "deg": (1.0, 0), "m": (FT, 1e-12), "m^2": (FT**2, 1e-12), "m s^-1": (FT, 1e-12),
    "K": (1 / 1.8, 1e-12), "Pa": (LB * 9.80665 / INCH**2, 1e-12), "kg s^-1": (LB, 1e-12),
    "kg m^-3": (LB / FT**3, 1e-12), "rev min^-1": (1.0, 0), "J kg^-1": (BTU_IT / LB, 1e-6),
    "J kg^-1 K^-1": (BTU_PER_LB_DEGF, 1e-6), "W": (7.456999e2, 1e-6),
    # pound-force second per square foot -> pascal second, 4.788 026 E+01 (SP 811 B.8, from memory).
    "Pa s": (4.788026e1, 1e-6),
}


@pytest.mark.parametrize(("name", "case"), [
    ("triangles", EXAMPLES["triangles"].good),
    ("stage-split", EXAMPLES["stage-split"].variants[0]),
    ("machine-design", EXAMPLES["machine-design"].good),
])
def test_answers_in_us_units_are_the_si_answers_converted(client, name, case):
    si = strict_json(client.post(f"/v1/{name}", json=case).get_data(as_text=True))
    us = strict_json(client.post(f"/v1/{name}", json={**case, "units": "us"}).get_data(as_text=True))
    get = strict_json(client.get(f"/v1/{name}", query_string={
        **{k: ",".join(map(str, v)) if isinstance(v, list) else v for k, v in case.items()}, "units": "us"})
        .get_data(as_text=True))
    assert get == us and us["checks"] == si["checks"]
    calculation = next(c for c in CALCULATIONS if c.name == name)
    converted = set()
    for output, field in calculation.outputs().fields.items():
        if output not in si:
            continue
        factor, rtol = SI_PER_US[field.metadata["x-unit"]]
        a, b = np.array(si[output], dtype=float), np.array(us[output], dtype=float)
        np.testing.assert_allclose(b * factor, a, rtol=rtol, atol=0, equal_nan=True, err_msg=output)
        converted.add(field.metadata["x-unit"])
    assert {"m s^-1", "K"} <= converted or {"Pa", "K"} <= converted


def test_every_documented_unit_has_its_us_unit(spec_document):
    """The Units schema lists, once, the US customary unit of every SI unit the document uses (a
    ratio or an angle is the same in both)."""
    used = set()

    def walk(node):
        if isinstance(node, dict):
            used.update([node["x-unit"]] if "x-unit" in node else [])
            for value in node.values():
                walk(value)
        elif isinstance(node, list):
            for value in node:
                walk(value)

    walk(spec_document["components"])
    described = spec_document["components"]["schemas"]["Units"]["description"]
    assert {"m", "K", "Pa", "m s^-1"} <= used
    for unit in {u for u in used if units.us_unit(u) != u}:
        assert f"{unit} as {units.us_unit(unit)}" in described, unit


@pytest.fixture(scope="module")
def spec_document(client):
    return strict_json(client.get("/v1/openapi.json").get_data(as_text=True))


def test_an_unknown_unit_system_is_a_422(client):
    problem = strict_json(client.post("/v1/triangles", json={**EXAMPLES["triangles"].good, "units": "imperial"})
                          .get_data(as_text=True))
    assert [e["pointer"] for e in problem["errors"]] == ["/units"]
    problem = strict_json(client.get("/v1/triangles?machine=compressor&units=metric").get_data(as_text=True))
    assert ("/units", "units") in [(e["pointer"], e.get("parameter")) for e in problem["errors"]]


def test_a_null_unit_system_is_a_422(client):
    problem = strict_json(client.post("/v1/triangles", json={"cases": [EXAMPLES["triangles"].good], "units": None})
                          .get_data(as_text=True))
    assert problem["status"] == 422 and [e["pointer"] for e in problem["errors"]] == ["/units"]


def test_an_overflow_in_us_units_fails_the_case_not_the_batch(client):
    # 1.5e308 K is finite in SI and 2.7e308 degR is not: that case fails as any overflow does.
    good = EXAMPLES["triangles"].good
    huge = {**good, "total_temperature": 1.5e308}
    si = client.post("/v1/triangles", json={"cases": [good, huge]})
    if si.status_code != 200 or strict_json(si.get_data(as_text=True))["errors"]:
        pytest.skip("the inputs' bounds, or the SI answer itself, refuse the case already")
    body = strict_json(client.post("/v1/triangles", json={"cases": [good, huge], "units": "us"}).get_data(as_text=True))
    assert [e["index"] for e in body["errors"]] == [1]
    assert body["results"][1]["T01"] is None and body["results"][0]["T01"] > 0
    single = client.post("/v1/triangles", json={**huge, "units": "us"})
    assert single.status_code == 422
    columns = {name: [good[name], huge[name]] for name in good}
    body = strict_json(client.post("/v1/triangles", json={"columns": columns, "units": "us"}).get_data(as_text=True))
    assert [e["index"] for e in body["errors"]] == [1] and body["columns"]["T01"][1] is None


def test_units_in_the_query_are_judged_beside_the_bodys(client):
    body = {"cases": [EXAMPLES["triangles"].good], "units": "us"}
    problem = strict_json(client.post("/v1/triangles?units=", json=body).get_data(as_text=True))
    assert problem["status"] == 422 and [e.get("parameter") for e in problem["errors"]] == ["units"]
