"""Common-practice defaults of the whole-machine design: complete, inside their ranges, and enough for a design."""

import inspect

import numpy as np
import pytest
from numpy.testing import assert_array_equal

from service.core import flowpath, machine, machine_defaults, zweifel
from tests.core.helpers import reasons

#: Inputs of evaluate_machine_design that are the duty, a choice between methods or a limit of the
#: search, not a blade-sizing input with a designer's default.
NOT_SIZING = {"machine", "mass_flow", "total_temperature", "total_pressure", "pressure_ratio", "shaft_speed",
              "polytropic_efficiency", "stage_isentropic_efficiency", "cp", "gamma", "mean_radius", "hub_radius",
              "tip_radius", "stages", "max_stage_pressure_ratio", "rule", "weights", "inlet_swirl", "outlet_swirl",
              "solidity", "max_stages"}

#: Duties only (the smallest request): a compressor of air and a turbine of combustion products, with the
#: gas presets of DESIGN.md; the numbers are inputs of a run, not check values.
DUTIES = {
    "compressor": dict(mass_flow=20.0, total_temperature=288.15, total_pressure=101325.0, pressure_ratio=4.0,
                       shaft_speed=15000.0, polytropic_efficiency=0.9, cp=1005.0, gamma=1.4, tip_radius=0.3),
    "turbine": dict(mass_flow=20.0, total_temperature=1200.0, total_pressure=1.0e6, pressure_ratio=3.0,
                    shaft_speed=15000.0, polytropic_efficiency=0.9, cp=1148.0, gamma=1.333, mean_radius=0.3),
}


def test_every_blade_sizing_input_has_a_default():
    parameters = set(inspect.signature(machine.evaluate_machine_design).parameters)
    assert set(machine_defaults.DEFAULTS) == parameters - NOT_SIZING
    assert set(machine_defaults.RANGES) == set(machine_defaults.DEFAULTS) == set(machine_defaults.BASIS)


def test_the_defaults_the_core_already_applies_are_the_same_values():
    d = machine_defaults.DEFAULTS
    assert d["zweifel_coefficient"]["turbine"] == zweifel.OPTIMUM_ZWEIFEL_COEFFICIENT == 0.8  # Zweifel (1945)
    assert d["axial_gap"]["compressor"] == d["axial_gap"]["turbine"] == flowpath.DEFAULT_AXIAL_GAP
    assert d["rotor_loss_fraction"]["turbine"] == machine.DEFAULT_ROTOR_LOSS_FRACTION


@pytest.mark.parametrize("field", sorted(machine_defaults.DEFAULTS))
def test_each_default_sits_in_its_textbook_range_and_names_its_basis(field):
    # The ranges: Saravanamuttoo et al. (2017) ch. 5 and 7, Dixon & Hall (2014) ch. 3-5 (from memory).
    basis = machine_defaults.BASIS[field]
    assert "common practice" in basis or "Zweifel" in basis
    for name in ("compressor", "turbine"):
        value, bounds = machine_defaults.DEFAULTS[field][name], machine_defaults.RANGES[field][name]
        assert (value is None) == (bounds is None)
        if value is not None:
            assert bounds[0] <= value <= bounds[1]


def test_a_column_of_machines_takes_each_machine_s_defaults():
    names = np.array(["turbine", "compressor", "compressor"])
    column = machine_defaults.default_values(names)
    for field, values in column.items():
        for case, name in enumerate(names):
            expected = machine_defaults.DEFAULTS[field][name]
            if expected is None:
                assert np.isnan(values[case]), field
            else:
                assert values[case] == expected
    assert set(machine_defaults.default_values("turbine")) == set(machine_defaults.DEFAULTS) - {
        "target_diffusion_factor"}


def test_an_unknown_machine_is_refused_by_name():
    with pytest.raises(ValueError, match="machine must be one of"):
        machine_defaults.default_values("pump")


@pytest.mark.parametrize("name", ["compressor", "turbine"])
def test_the_duty_and_the_defaults_give_a_design_within_the_default_limits(name):
    result = machine.evaluate_machine_design(name, **DUTIES[name], **machine_defaults.default_values(name))
    assert reasons(result) == [None]
    v = result.values
    n = int(v["stage_count"][0])
    assert n >= 1
    limit = machine_defaults.DEFAULTS["max_loading_coefficient"][name]
    loading = v["stage_loading_coefficient"][0, :n]
    assert np.all(loading <= limit * (1 + 1e-9))
    if n > 1:  # the fewest stages: one stage fewer exceeds the limit somewhere
        given = {**machine_defaults.default_values(name), "stages": n - 1}
        del given["max_loading_coefficient"]
        fewer = machine.evaluate_machine_design(name, **DUTIES[name], **given).values
        assert np.nanmax(fewer["stage_loading_coefficient"][0]) > limit
    # Each row sized to the default target and the blade count rounded up: at or below the target.
    target = "row_diffusion_factor" if name == "compressor" else "row_zweifel_coefficient"
    row_target = machine_defaults.DEFAULTS["target_diffusion_factor" if name == "compressor"
                                           else "zweifel_coefficient"][name]
    assert np.all(v[target][0, : 2 * n] <= row_target + 1e-9)
    assert_array_equal(np.isfinite(v["station_total_pressure"][0, : 2 * n + 1]), True)
