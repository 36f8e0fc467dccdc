"""Answers do not depend on the scale of the inputs (issue 13: no finite wrong number).

Property tests through the HTTP API, one family per endpoint, over the whole accepted range of every
scaled input (the documented bounds included). Each draws a case anywhere in the accepted range and
the same case at a reference scale of everyday magnitudes; both must be computed alike (both
answered, or both refused with the same reason), and where answered:

- dimensionless outputs (angles, duty coefficients, Mach numbers, efficiencies, diffusion factors,
  solidities, Zweifel coefficients, blade counts) are equal to 1e-9 relative;
- dimensional outputs are the reference's times the scale they carry.

Basis: the invariances follow from the equations the service implements. Every velocity triangle
relation (Dixon & Hall 2014, ch. 5) is homogeneous of degree one in the velocities; the static state
(NACA Report 1135, eqs. 43-44) depends on V^2 / (cp T0), so velocities times k with temperatures
times k^2 leave Mach numbers and temperature ratios unchanged; Lieblein's diffusion factor (NACA RM
E53D01) is homogeneous of degree zero in the velocities and the solidity of degree zero in the
lengths; Zweifel's coefficient (Zweifel 1945) depends on s/cx, the angles and the outlet Mach number,
which is a function of p2 / p01 only (NACA Report 1135, eq. 44); the stage split (Saravanamuttoo et
al. 2017, sec. 2.3) depends on temperature ratios and pressure ratios, and the loading on
cp T0 / U^2. A few draws are also checked against the formula evaluated in 50-digit decimal
arithmetic (tests/precise.py), so an answer that is wrong at every scale alike is caught too.

Every scale is a power of two, drawn so that the scaled input ranges over the whole accepted range:
multiplying by it is exact, so both cases have exactly the same ratios and any difference is the
service's. The reference magnitudes include the documented bounds themselves.

The machine design's scalings are tested in its core tests (tests/core/test_machine.py, length,
temperature and pressure scales with every radius held).
"""

from __future__ import annotations

import math
from decimal import localcontext

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from service import create_app
from tests.precise import PI, D, compressibility_factor, cos_deg, power, rel, tan_deg

APP = create_app({"API_KEYS": None})
SETTINGS = settings(max_examples=100, deadline=None, database=None,
                    suppress_health_check=[HealthCheck.filter_too_much, HealthCheck.too_slow])
RTOL = 1e-9
#: Results below this magnitude are compared absolutely (a subnormal result has fewer digits).
ATOL = 1e-290

SPEED = (1e-3, float(np.nextafter(299792458.0, 0)))  # documented range of speeds [m s^-1]
LENGTH = (1e-6, 1e300)  # from the documented minimum to far beyond any machine [m]
LENGTH_DRAWN = (1e-6, 1e290)  # base lengths, so that ratios of up to 1e4 times them stay finite [m]


def post(path: str, body: dict, drawn: bool = True):
    response = APP.test_client().post(path, json=body)
    assert response.status_code in (200, 422), response.get_data(as_text=True)[:500]
    answer = response.get_json()
    # A draw outside the accepted range (a derived length past the float range, say) is not a case
    # of these tests; the refusal of such input is the bad-input corpus's (tests/contract/test_bad_input.py).
    if drawn:
        assume(answer.get("type") != "urn:meanline:problem:invalid-input")
    return response.status_code, answer


def power_of_two(low: float, high: float, base: float):
    """A factor 2**n that keeps ``base`` times it within [low, high]: exact in floating point, so a scaled
    case has exactly the ratios of its reference (a non-binary factor would round them differently)."""
    return st.integers(math.ceil(math.log2(low / base)), math.floor(math.log2(high / base))).map(
        lambda n: 2.0**n).filter(lambda f: low <= base * f <= high)


def magnitude(low: float, high: float):
    """Log-uniform over [low, high], with both ends themselves drawn often."""
    return st.one_of(
        st.sampled_from([low, high]),
        st.floats(math.log10(low), math.log10(high)).map(lambda e: min(max(10.0**e, low), high)),
    )


#: Flow angles over the whole open range (-90, 90): uniform, near +-90 (down to one float short),
#: near zero (down to the subnormals).
ANGLE = st.one_of(
    st.floats(-90.0, 90.0, exclude_min=True, exclude_max=True),
    st.floats(-15.0, -1.0).map(lambda e: math.copysign(90.0 - 10.0**e, e + 8)),
    st.sampled_from([89.99999999999999, -89.99999999999999, 90 - 1e-12, 0.0, 5e-324, -1e-300]),
)


def assert_same(actual: dict, expected: dict, scales: dict):
    """actual[name] == expected[name] * scales.get(name, 1) to RTOL, for every number in expected."""
    for name, value in expected.items():
        if name in ("checks", "assumed") or value is None:
            continue
        scale = scales.get(name, 1.0)
        got = np.asarray(actual[name], dtype=float)
        want = np.asarray(value, dtype=float) * scale
        np.testing.assert_allclose(got, want, rtol=RTOL, atol=ATOL, err_msg=name)


def assert_alike(status: int, body: dict, ref_status: int, ref_body: dict, scales: dict):
    assert status == ref_status, (body, ref_body)
    if status == 422:
        assert body["detail"] == ref_body["detail"]
    else:
        assert_same(body, ref_body, scales)


# -- /v1/diffusion-factor: velocity scale and length scale -------------------------------------------


@SETTINGS
@given(row=st.sampled_from(["rotor", "stator"]), a1=ANGLE, a2=ANGLE, ref_vx=st.sampled_from([150.0, *SPEED]),
       k=power_of_two(*SPEED, 150.0), outlet_ratio=magnitude(0.2, 5.0),
       ref_chord=st.sampled_from([0.05, LENGTH[0]]), scale=power_of_two(*LENGTH_DRAWN, 0.05),
       pitch_ratio=magnitude(0.05, 20.0), radius_ratio=magnitude(1.0, 1e4), change=st.sampled_from([None, 0.9, 1.1]),
       mode=st.sampled_from(["solidity", "pitch", "count", "sizing"]), target=st.floats(0.05, 0.95))
def test_diffusion_factor_is_invariant_under_velocity_and_length_scales(row, a1, a2, ref_vx, k, outlet_ratio,
                                                                        ref_chord, scale, pitch_ratio, radius_ratio,
                                                                        change, mode, target):
    vx, chord = ref_vx * k, ref_chord * scale
    assume(SPEED[0] <= vx <= SPEED[1] and SPEED[0] <= ref_vx * outlet_ratio * k <= SPEED[1])
    vx2 = ref_vx * outlet_ratio * k

    lengths = {"r1": ref_chord * radius_ratio, "r2": ref_chord * radius_ratio * (change or 1.0),
               "pitch": ref_chord * pitch_ratio, "radius": ref_chord * radius_ratio}
    # A rotor with a radius change needs the shaft speed (issue 19): at the reference, U1 = 1.5 V_x. A blade
    # speed is a velocity: the shaft speed scales with the velocity scale over the length scale.
    ref_speed = 1.5 * ref_vx / lengths["r1"] * 60.0 / (2.0 * math.pi)

    def case(vx, vx2, chord):
        f = chord / ref_chord  # 1 or the exact power of two
        body = {"row": row, "axial_velocity": vx, "outlet_axial_velocity": vx2, "inlet_angle": a1,
                "outlet_angle": a2}
        if change is not None:
            body.update(inlet_radius=lengths["r1"] * f, outlet_radius=lengths["r2"] * f)
            if row == "rotor":
                body["shaft_speed"] = ref_speed * (vx / ref_vx) / f
        if mode == "solidity":
            body["solidity"] = pitch_ratio
        elif mode == "pitch":
            body.update(chord=chord, pitch=lengths["pitch"] * f)
        elif mode == "count":
            body.update(chord=chord, blade_count=37, mean_radius=lengths["radius"] * f)
        else:
            body.update(target_diffusion_factor=target, chord=chord, mean_radius=lengths["radius"] * f)
        return body

    request = case(vx, vx2, chord)
    status, body = post("/v1/diffusion-factor", request)
    ref_status, ref_body = post("/v1/diffusion-factor", case(ref_vx, ref_vx * outlet_ratio, ref_chord))
    # (the case built from ref_chord * scale: every length of it is the reference's times the exact factor)
    velocity = {"inlet_velocity": k, "outlet_velocity": k, "tangential_velocity_change": k, "pitch": scale}
    assert_alike(status, body, ref_status, ref_body, velocity)
    if status == 200 and mode == "solidity":
        # NACA RM E53D01 in 50 digits from this case's own inputs.
        with localcontext() as ctx:
            ctx.prec = 60
            v1, v2 = D(vx) / cos_deg(a1), D(vx2) / cos_deg(a2)
            r1, r2 = D(request.get("inlet_radius", 1.0)), D(request.get("outlet_radius", 1.0))
            w1, w2 = 2 * r1 / (r1 + r2), 2 * r2 / (r1 + r2)
            turning = w2 * D(vx2) * tan_deg(a2) - w1 * D(vx) * tan_deg(a1)
            if "shaft_speed" in request:  # the rotor's blade-speed part of r2 V_theta2 - r1 V_theta1 (issue 19)
                turning += 2 * D(request["shaft_speed"]) * 2 * PI / 60 * (r2 - r1)
            turning = abs(turning)
            expected = 1 - v2 / v1 + turning / (2 * D(pitch_ratio) * v1)
        # DF is a sum of terms of the order of one and of V2/V1: to 1e-9 relative, or where the terms
        # cancel to rounding of their size.
        assert abs(D(body["diffusion_factor"]) - expected) <= D(1e-9) * abs(expected) + D(1e-14) * (1 + v2 / v1)


# -- /v1/zweifel: length scale and pressure scale ------------------------------------------------------


@SETTINGS
@given(a1=ANGLE, a2=ANGLE, ref_chord=st.sampled_from([0.04, LENGTH[0]]), scale=power_of_two(*LENGTH_DRAWN, 0.04),
       ratio=magnitude(0.05, 20.0), radius_ratio=magnitude(1.0, 1e4),
       mode=st.sampled_from(["sizing", "pitch", "count"]), definition=st.sampled_from(["incompressible", "mach",
                                                                                      "pressures"]),
       mach=magnitude(1e-300, 1e300), ref_p01=st.sampled_from([1e5, 1.0]), pressure=power_of_two(1.0, 1e300, 1e5),
       drop=st.one_of(magnitude(1e-15, 0.999), st.sampled_from([1e-15, 0.5])), target=magnitude(0.05, 5.0))
def test_zweifel_is_invariant_under_length_and_pressure_scales(a1, a2, ref_chord, scale, ratio, radius_ratio, mode,
                                                               definition, mach, ref_p01, pressure, drop, target):
    ref_p2 = ref_p01 * (1.0 - drop)
    chord, p01, p2 = ref_chord * scale, ref_p01 * pressure, ref_p2 * pressure
    assume(ref_p2 >= 1.0 and p01 <= 1e300)
    pitch, radius = ref_chord * ratio, ref_chord * radius_ratio

    def case(chord, p01, p2):
        f = chord / ref_chord
        body = {"inlet_angle": a1, "outlet_angle": a2, "axial_chord": chord}
        if mode == "sizing":
            body.update(mean_radius=radius * f, zweifel_coefficient=target)
        elif mode == "pitch":
            body["pitch"] = pitch * f
        else:
            body.update(blade_count=40, mean_radius=radius * f)
        if definition == "mach":
            body.update(definition="compressible", outlet_mach=mach)
        elif definition == "pressures":
            body.update(definition="compressible", total_pressure=p01, outlet_pressure=p2)
        return body

    request = case(chord, p01, p2)
    status, body = post("/v1/zweifel", request)
    ref_status, ref_body = post("/v1/zweifel", case(ref_chord, ref_p01, ref_p2))
    assert_alike(status, body, ref_status, ref_body, {"pitch": scale, "axial_chord": scale})
    if status == 200 and mode == "pitch" and definition != "pressures":
        # Zweifel (1945) with NACA Report 1135 eq. 44, in 50 digits.
        with localcontext() as ctx:
            ctx.prec = 60
            expected = 2 * D(request["pitch"]) / D(chord) * cos_deg(a2) ** 2 * abs(tan_deg(a1) - tan_deg(a2))
            if definition == "mach":
                expected *= compressibility_factor(mach, 1.4)
        if expected > D(1e-290):
            assert rel(body["zweifel_coefficient"], expected) < 1e-8


# -- /v1/triangles: velocity scale with temperatures as its square, pressure scale ------------------------


@SETTINGS
@given(machine=st.sampled_from(["compressor", "turbine"]), by_angles=st.booleans(),
       ref_u=st.sampled_from([300.0, *SPEED]), k=power_of_two(*SPEED, 300.0),
       phi=magnitude(1e-6, 1e3), psi=magnitude(1e-6, 1e2), reaction=st.floats(-2.0, 3.0), a1=ANGLE, a2=ANGLE,
       theta=magnitude(1.001, 1e6), pressure=power_of_two(1.0, 1e300, 1e5), states=st.booleans())
def test_triangles_are_invariant_under_velocity_temperature_and_pressure_scales(machine, by_angles, ref_u, k, phi,
                                                                                psi, reaction, a1, a2, theta,
                                                                                pressure, states):
    u = ref_u * k
    assume(SPEED[0] <= u <= SPEED[1])
    first, second = ("alpha1", "alpha2") if machine == "compressor" else ("alpha2", "alpha3")

    def case(u):
        body = {"machine": machine, "blade_speed": u}
        if by_angles:
            body.update(axial_velocity=phi * ref_u * (u / ref_u), **{first: a1, second: a2})
        else:
            body.update(flow_coefficient=phi, loading_coefficient=psi, reaction=reaction)
        return body

    if by_angles:
        assume(SPEED[0] <= phi * ref_u * k <= SPEED[1] and SPEED[0] <= phi * ref_u <= SPEED[1])
    ref_status, ref_body = post("/v1/triangles", case(ref_u))
    scales = {name: k for name in ("blade_speed", "axial_velocity")}
    for s in (1, 2, 3):
        scales.update({f"{q}{s}": k for q in ("V", "Vx", "Vtheta", "W", "Wtheta")})
    scales.update(work=k * k)
    ref_case, scaled_case = case(ref_u), case(u)
    if states and ref_status == 200:
        # A total temperature theta times the largest dynamic temperature: every static temperature
        # is at least 1 - 1/theta of the total, a well-conditioned state.
        cp = 1005.0
        fastest = max(ref_body[f"{q}{s}"] for q in ("V", "W") for s in (1, 2, 3) if f"{q}{s}" in ref_body)
        ref_t0 = theta * fastest**2 / (2 * cp) + 1.0
        t0 = ref_t0 * k * k
        assume(t0 >= 1.0 and math.isfinite(t0) and t0 * theta < 1e300)
        ref_case.update(total_temperature=ref_t0, total_pressure=1e5)
        scaled_case.update(total_temperature=t0, total_pressure=1e5 * pressure)
        ref_status, ref_body = post("/v1/triangles", ref_case)
        for s in (1, 2, 3):
            scales.update({f"T{s}": k * k, f"T0{s}": k * k, f"T0_rel{s}": k * k})
        scales.update(total_temperature_change=k * k, p1=pressure, rho1=pressure / (k * k))
    status, body = post("/v1/triangles", scaled_case)
    assert_alike(status, body, ref_status, ref_body, scales)
    if status == 200 and by_angles and abs(body["loading_coefficient"]) > 1e-280:
        # psi = phi (tan a_out - tan a_in), signed for the machine (Dixon & Hall 2014, ch. 5), in 50 digits.
        with localcontext() as ctx:
            ctx.prec = 60
            sign = 1 if machine == "compressor" else -1
            expected = sign * D(body["axial_velocity"]) / D(u) * (tan_deg(a2) - tan_deg(a1))
        assert rel(body["loading_coefficient"], expected) < 1e-8


# -- /v1/stage-split: temperature, pressure and cp scales ---------------------------------------------


@SETTINGS
@given(machine=st.sampled_from(["compressor", "turbine"]), rule=st.sampled_from(["equal_work", "equal_pressure_ratio",
                                                                                "weights"]),
       model=st.sampled_from(["polytropic_efficiency", "stage_isentropic_efficiency"]),
       excess=magnitude(1e-14, 30.0), efficiency=st.floats(0.5, 1.0), stages=st.integers(1, 6),
       ref_t0=st.sampled_from([300.0, 1.0]), n_t=st.integers(-8, 990), b=power_of_two(1.0, 1e300, 1e5),
       ref_cp=st.sampled_from([1005.0, 1.0]), n_cp=st.integers(-9, 40), loading=st.booleans(),
       ref_u=magnitude(50.0, 500.0))
def test_stage_split_is_invariant_under_temperature_pressure_and_cp_scales(machine, rule, model, excess, efficiency,
                                                                           stages, ref_t0, n_t, b, ref_cp, n_cp,
                                                                           loading, ref_u):
    n_t += (n_t + n_cp) % 2  # a c an even power of two, so that sqrt(a c) is exact
    a, c = 2.0**n_t, 2.0**n_cp
    t0, p0, cp = ref_t0 * a, 1e5 * b, ref_cp * c
    ref_p0 = 1e5
    u = ref_u * 2.0 ** ((n_t + n_cp) // 2)  # cp T0 / U^2 unchanged
    assume(t0 >= 1.0 and cp >= 1.0 and math.isfinite(t0) and SPEED[0] <= u <= SPEED[1])

    def case(t0, p0, cp, u):
        body = {"machine": machine, "rule": rule, "pressure_ratio": 1.0 + excess, "total_temperature": t0,
                "total_pressure": p0, "cp": cp, model: efficiency, "blade_speed": u, "mass_flow": 2.0}
        if rule == "weights":
            body["weights"] = [1.0 + 0.1 * i for i in range(stages)]
        elif loading:
            body["max_loading_coefficient"] = 0.4 if machine == "compressor" else 2.0
        else:
            body["stages"] = stages
        return body

    status, body = post("/v1/stage-split", case(t0, p0, cp, u))
    ref_status, ref_body = post("/v1/stage-split", case(ref_t0, ref_p0, ref_cp, ref_u))
    scales = {name: a for name in ("stage_inlet_total_temperature", "stage_outlet_total_temperature",
                                   "stage_total_temperature_change", "outlet_total_temperature",
                                   "total_temperature_change")}
    scales.update({name: b for name in ("stage_inlet_total_pressure", "stage_outlet_total_pressure",
                                        "outlet_total_pressure")})
    scales.update({name: a * c for name in ("stage_work", "work", "power")})
    if ref_status == 200 and status == 422 and "not a finite number" in body["detail"]:
        # Refused by overflow only where a true output is beyond the float range.
        largest = max(abs(float(np.max(np.asarray(ref_body[n], dtype=float)))) * s for n, s in scales.items())
        assert largest > 1e300, body
        return
    assert_alike(status, body, ref_status, ref_body, scales)


@SETTINGS
@given(machine=st.sampled_from(["compressor", "turbine"]), excess=magnitude(1e-15, 30.0), eta=st.floats(0.5, 1.0),
       stages=st.integers(1, 5))
def test_stage_efficiency_of_a_polytropic_split_is_right_near_a_pressure_ratio_of_one(machine, excess, eta, stages):
    pr = 1.0 + excess
    status, body = post("/v1/stage-split", {"machine": machine, "rule": "equal_pressure_ratio", "pressure_ratio": pr,
                                            "total_temperature": 300.0, "total_pressure": 1e5, "stages": stages,
                                            "polytropic_efficiency": eta})
    assert status == 200, body
    # Saravanamuttoo et al. (2017) sec. 2.3: a stage of ratio Pi = PR^(1/N) has tau = Pi^(k/eta_p)
    # (compressor) or Pi^(-k eta_p) (turbine); eta = (Pi^k - 1)/(tau - 1) or (1 - tau)/(1 - Pi^-k).
    with localcontext() as ctx:
        ctx.prec = 60
        k = (D(1.4) - 1) / D(1.4)
        stage_ratio = power(D(pr), 1 / D(stages))
        if machine == "compressor":
            expected = (power(stage_ratio, k) - 1) / (power(stage_ratio, k / D(eta)) - 1)
        else:
            expected = (1 - power(stage_ratio, -k * D(eta))) / (1 - power(stage_ratio, -k))
    for value in body["stage_isentropic_efficiency"]:
        assert rel(value, expected) < RTOL


# -- /v1/stage-efficiency: velocity scale with temperatures as its square, pressure scale ----------------

#: The scale each unit of an answer carries under velocities x k, temperatures x k^2, pressures x P.
_UNIT_SCALE = {"m s^-1": lambda k, p: k, "K": lambda k, p: k * k, "J kg^-1": lambda k, p: k * k,
               "Pa": lambda k, p: p, "kg m^-3": lambda k, p: p / (k * k)}


@SETTINGS
@given(model=st.sampled_from(["lieblein_howell", "soderberg", "kacker_okapuu"]), phi=st.floats(0.3, 0.9),
       psi=st.floats(0.2, 0.5), reaction=st.floats(0.4, 0.7), k=power_of_two(2.0**-4, 2.0**20, 1.0),
       pressure=power_of_two(1.0, 1e300, 1e5))
def test_stage_efficiency_is_invariant_under_velocity_temperature_and_pressure_scales(model, phi, psi, reaction, k,
                                                                                      pressure):
    # The loss correlations (issue 14) depend on angles, geometry ratios, Mach numbers and the Reynolds
    # number, which is given here: scaling the velocities by k and the temperatures by k^2 (Mach numbers
    # unchanged) and the pressures by P leaves every loss coefficient and efficiency as it is, and the
    # dimensional outputs carry their units' scales.
    turbine = model != "lieblein_howell"
    ref = {"machine": "turbine" if turbine else "compressor", "loss_model": model, "flow_coefficient": phi,
           "loading_coefficient": psi * (4.0 if turbine else 1.0), "reaction": reaction, "blade_speed": 300.0,
           "total_temperature": 1100.0 if turbine else 288.0, "total_pressure": 1e5, "rotor_aspect_ratio": 2.0,
           "stator_aspect_ratio": 1.8}
    if model == "lieblein_howell":
        ref.update(rotor_solidity=1.2, stator_solidity=1.1)
    elif model == "soderberg":
        ref.update(reynolds_number=2e5, thickness_to_chord=0.2)
    else:
        ref.update(stator_nozzle_profile_loss=0.025, stator_impulse_profile_loss=0.07, rotor_nozzle_profile_loss=0.03,
                   rotor_impulse_profile_loss=0.08, thickness_to_chord=0.2, trailing_edge_thickness_to_throat=0.05,
                   base_pressure_coefficient=-0.15)
    scaled = {**ref, "blade_speed": 300.0 * k, "total_temperature": ref["total_temperature"] * k * k,
              "total_pressure": 1e5 * pressure}
    status, body = post("/v1/stage-efficiency", scaled)
    ref_status, ref_body = post("/v1/stage-efficiency", ref, drawn=False)
    scales = {name: _UNIT_SCALE[field.metadata["x-unit"]](k, pressure)
              for name, field in _stage_efficiency_outputs().items() if field.metadata.get("x-unit") in _UNIT_SCALE}
    # Both answered alike, or both refused for the same reason (a duty outside a correlation, say).
    assert_alike(status, body, ref_status, ref_body, scales)
    if status == 200:
        assert 0 < body["total_to_total_efficiency"] < 1


def _stage_efficiency_outputs():
    from service.api.registry import CALCULATIONS

    return next(c for c in CALCULATIONS if c.name == "stage-efficiency").outputs().fields


# -- refusals at the physical bounds (issue 19: subnormal lengths and speeds) --------------------------


@pytest.mark.parametrize(("path", "body", "field"), [
    ("/v1/diffusion-factor", {"row": "stator", "axial_velocity": 1e308, "inlet_angle": 45, "outlet_angle": 15,
                              "solidity": 1.2}, "axial_velocity"),
    ("/v1/diffusion-factor", {"row": "stator", "axial_velocity": 150, "inlet_angle": 45, "outlet_angle": 15,
                              "chord": 5e-324, "pitch": 0.05}, "chord"),
    ("/v1/triangles", {"machine": "compressor", "blade_speed": 5e-324, "axial_velocity": 150.0, "alpha1": 10,
                       "alpha2": 40}, "blade_speed"),
    ("/v1/triangles", {"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 5e-324,
                       "reaction": 0.5, "blade_speed": 300}, "loading_coefficient"),
    ("/v1/zweifel", {"inlet_angle": 0, "outlet_angle": 70, "axial_chord": 0.04, "mean_radius": 5e-324},
     "mean_radius"),
    ("/v1/zweifel", {"inlet_angle": 0, "outlet_angle": 70, "axial_chord": 5e-324, "mean_radius": 0.35},
     "axial_chord"),
    ("/v1/stage-split", {"machine": "compressor", "pressure_ratio": 2, "total_temperature": 1e-300,
                         "total_pressure": 1e5, "stages": 2, "polytropic_efficiency": 0.9}, "total_temperature"),
])
def test_values_outside_the_physical_range_are_refused_naming_the_input(path, body, field):
    # Before: a subnormal chord gave a solidity of 0.5 for 5e-324 / 1e-323; a subnormal blade speed
    # "not a compressor stage"; a subnormal radius one blade and Zw 5e-322; 1e308 m/s a wrong DF.
    status, problem = post(path, body, drawn=False)
    assert status == 422
    assert problem["type"] == "urn:meanline:problem:invalid-input"
    assert [error["pointer"] for error in problem["errors"]] == [f"/{field}"]
    assert "at least" in problem["errors"][0]["detail"] or "less than" in problem["errors"][0]["detail"]


def test_the_issue_example_at_the_largest_accepted_speed():
    # Issue 13: the same angles at 150 m/s give 0.484; at the largest accepted speed the answer is the same.
    body = {"row": "stator", "inlet_angle": 45, "outlet_angle": 15, "solidity": 1.2}
    _, slow = post("/v1/diffusion-factor", {**body, "axial_velocity": 150.0}, drawn=False)
    _, fast = post("/v1/diffusion-factor", {**body, "axial_velocity": SPEED[1]}, drawn=False)
    np.testing.assert_allclose(fast["diffusion_factor"], slow["diffusion_factor"], rtol=RTOL)
    np.testing.assert_allclose(slow["diffusion_factor"], 0.4836, atol=5e-5)  # issue 13's figure
