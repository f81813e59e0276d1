"""The worst-case specification: its limits, the factors it makes of a design, and bad input.

Checks are against arithmetic done by hand here (limits, margins, factor
ranges) and against the kit's own rule for bad input: a
:class:`kit.errors.ParameterError` that names the parameter at fault and says
what would be valid.  Designs are scenarios invented for these tests.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

import kit
from kit.analysis.spec import Factor, Spec, factors
from kit.errors import ParameterError


def _sink():
    # a 1.4 mA sink from a 12 V rail for a sensor-bridge excitation (our scenario, E24 values:
    # V_TH = 12 V x 12k/48k = 3 V, R_TH = 36k || 12k = 9 kOhm; its current is checked by hand
    # in tests/test_worstcase.py)
    return kit.design("divider_source", "npn", r1=36e3, r2=12e3, r_e=1.6e3, v_supply=12.0, v_load=7.0)


def _mirror():
    # a 2:1 mirror, 350 uA reference (our scenario; the topology's own default values)
    return kit.design("basic_mirror", "npn")


# --------------------------------------------------------------------------------------
# limits and margin: arithmetic by hand

def test_limits_and_margin_by_hand():
    spec = Spec(2e-3, 0.05)
    lo, hi = spec.limits
    # 2 mA +- 5 % -> 1.9 mA ... 2.1 mA (by hand)
    assert lo == pytest.approx(1.9e-3, rel=1e-15)
    assert hi == pytest.approx(2.1e-3, rel=1e-15)
    # [1.95, 2.08] mA: 0.05 mA to spare below, 0.02 mA above -> 0.02/2 = 1 % of the target
    assert spec.margin(1.95e-3, 2.08e-3) == pytest.approx(0.01, rel=1e-12)
    # [1.85, 2.0] mA: 0.05 mA below the lower limit -> -2.5 % of the target
    assert spec.margin(1.85e-3, 2.0e-3) == pytest.approx(-0.025, rel=1e-12)


# --------------------------------------------------------------------------------------
# factors: what the spec varies, in which order, over which range

def test_factors_of_a_full_spec():
    d = _sink()
    spec = Spec(1.4e-3, 0.05, v_load=(4.0, 9.0), v_supply=(11.4, 12.6), temp=(233.15, 358.15),
                beta={"npn": (100.0, 300.0)}, resistor_tolerance=0.01, tolerances={"r_e": 0.001},
                resistor_tcr=50e-6, tcrs={"r_e": 10e-6}, bounds={"Q1.v_a": (60.0, 140.0)})
    got = {f.name: f for f in factors(spec, d)}
    names = [f.name for f in factors(spec, d)]
    # parts first (resistors, TCRs, gain, bounds), then the conditions
    assert names == ["r1", "r2", "r_e", "tcr_r1", "tcr_r2", "tcr_r_e", "Q1.beta_f", "Q1.v_a",
                     "v_supply", "v_load", "temp"]
    assert [got[n].kind for n in names] == ["part"] * 8 + ["condition"] * 3
    # resistor ranges: value (1 -+ tol), the per-resistor override for r_e (by hand)
    assert (got["r1"].low, got["r1"].high) == pytest.approx((35.64e3, 36.36e3), rel=1e-15)
    assert (got["r_e"].low, got["r_e"].high) == pytest.approx((1598.4, 1601.6), rel=1e-15)
    assert got["r_e"].half_range == pytest.approx(1.6, rel=1e-12)  # 1.6 kOhm x 0.1 %
    # TCR bounds are signed-unknown: +- bound; the r_e override applies
    assert (got["tcr_r2"].low, got["tcr_r2"].high) == (-50e-6, 50e-6)
    assert (got["tcr_r_e"].low, got["tcr_r_e"].high) == (-10e-6, 10e-6)
    # gain by polarity, with the spec's distribution; nominal is the device's own beta_F
    assert (got["Q1.beta_f"].low, got["Q1.beta_f"].high) == (100.0, 300.0)
    assert got["Q1.beta_f"].distribution == "log-uniform"
    assert got["Q1.beta_f"].nominal == d.devices["Q1"].beta_f
    assert (got["Q1.v_a"].low, got["Q1.v_a"].high) == (60.0, 140.0)
    # conditions: the spec's range around the design's own value
    assert (got["v_load"].nominal, got["v_load"].low, got["v_load"].high) == (7.0, 4.0, 9.0)
    assert (got["temp"].nominal, got["temp"].low, got["temp"].high) == (d.temp, 233.15, 358.15)
    assert all(f.low <= f.high for f in got.values())


def test_factors_defaults_and_overrides():
    d = _sink()
    # no temperature range: a TCR does nothing, so there is no TCR factor; zero tolerance: no factor
    names = [f.name for f in factors(Spec(1.4e-3, 0.05, resistor_tolerance=0.0, tolerances={"r_e": 0.02}), d)]
    assert names == ["r_e"]
    # a gain range by transistor name wins over the one by polarity
    spec = Spec(1e-3, 0.05, beta={"npn": (100.0, 300.0), "Q2": (150.0, 160.0)},
                beta_distribution="uniform", resistor_tolerance=0.0)
    got = {f.name: f for f in factors(spec, _mirror())}
    assert (got["Q1.beta_f"].low, got["Q1.beta_f"].high) == (100.0, 300.0)
    assert (got["Q2.beta_f"].low, got["Q2.beta_f"].high) == (150.0, 160.0)
    assert got["Q2.beta_f"].distribution == "uniform"


@pytest.mark.parametrize("bounds", [{"r_e": (1.55e3, 1.65e3)}, {"temp": (273.15, 323.15)}],
                         ids=["resistor", "condition"])
def test_a_bounds_entry_for_a_value_already_varied_is_refused(bounds):
    """The corner grid and the Monte Carlo draws are keyed by factor name, so two factors of
    one name would silently become one (and the budget would list the value twice): a bounds
    entry for a value the spec already varies is refused, naming it."""
    spec = Spec(1.4e-3, 0.05, temp=(233.15, 358.15), bounds=bounds)
    with pytest.raises(ParameterError) as caught:
        factors(spec, _sink())
    assert caught.value.parameter == f"bounds.{next(iter(bounds))}"
    assert "already varied" in caught.value.message
    # without the clash the names are unique
    names = [f.name for f in factors(Spec(1.4e-3, 0.05, temp=(233.15, 358.15)), _sink())]
    assert len(names) == len(set(names)), names


# --------------------------------------------------------------------------------------
# bad input: ParameterError naming the parameter, with the valid range

BAD_SPECS = [
    # (keyword arguments, parameter the error must name)
    (dict(i_target=0.0), "i_target"),
    (dict(i_target=-1e-3), "i_target"),
    (dict(i_target=1e3), "i_target"),
    (dict(i_target=float("nan")), "i_target"),
    (dict(i_target=True), "i_target"),
    (dict(tolerance=0.0), "tolerance"),  # zero tolerance cannot be met
    (dict(tolerance=-0.01), "tolerance"),  # negative tolerance
    (dict(tolerance=0.9), "tolerance"),
    (dict(tolerance=float("nan")), "tolerance"),
    (dict(v_load=()), "v_load"),  # empty range
    (dict(v_load=(5.0,)), "v_load"),
    (dict(v_load=(1.0, 2.0, 3.0)), "v_load"),
    (dict(v_load=(9.0, 4.0)), "v_load"),  # min > max
    (dict(v_load=(float("nan"), 4.0)), "v_load"),
    (dict(v_load="4..9"), "v_load"),
    (dict(v_supply=(0.0, 12.0)), "v_supply"),
    (dict(v_supply=(13.0, 11.0)), "v_supply"),
    (dict(temp=(-40.0, 85.0)), "temp"),  # degrees Celsius where kelvin is asked
    (dict(temp=(0.0, 100.0)), "temp"),
    (dict(temp=(358.15, 233.15)), "temp"),
    (dict(temp=(233.15, 1000.0)), "temp"),
    (dict(beta={"npn": (300.0, 100.0)}), "beta.npn"),
    (dict(beta={"npn": (0.5, 100.0)}), "beta.npn"),
    (dict(beta={"Q1": 150.0}), "beta.Q1"),
    (dict(resistor_tolerance=-0.01), "resistor_tolerance"),
    (dict(resistor_tolerance=0.6), "resistor_tolerance"),
    (dict(tolerances={"r_e": -0.001}), "tolerances.r_e"),
    (dict(tolerances={"r_e": "1%"}), "tolerances.r_e"),
    (dict(resistor_tcr=-100e-6), "resistor_tcr"),
    (dict(resistor_tcr=0.1), "resistor_tcr"),
    (dict(tcrs={"r1": -5e-6}), "tcrs.r1"),
    (dict(bounds={"Q1.v_a": (140.0, 60.0)}), "bounds.Q1.v_a"),
    (dict(bounds={"Q1.v_a": (float("nan"), 60.0)}), "bounds.Q1.v_a"),
    (dict(bounds={"Q1.v_a": ()}), "bounds.Q1.v_a"),
    (dict(p_max=0.0), "p_max"),
    (dict(p_max=-0.1), "p_max"),
    (dict(p_max=float("nan")), "p_max"),
    (dict(mismatch=-0.01), "mismatch"),
    (dict(mismatch=0.9), "mismatch"),
    (dict(beta_distribution="normal"), "beta_distribution"),
    (dict(samples=5), "samples"),  # below range
    (dict(samples=2_000_000), "samples"),  # above range
    (dict(samples=100.5), "samples"),  # not a whole number
    (dict(samples=True), "samples"),  # a bool is no count
    (dict(samples=float("nan")), "samples"),
    (dict(samples=float("inf")), "samples"),
    (dict(samples="1000"), "samples"),
    (dict(seed=-1), "seed"),
    (dict(seed=1.5), "seed"),
    (dict(i_target="1 mA"), "i_target"),  # text: the record reader parses units, Spec does not
    (dict(p_max="1 W"), "p_max"),
    (dict(tolerance=np.bool_(True)), "tolerance"),
    (dict(v_load=("4", "9")), "v_load"),
    (dict(v_load=(True, 9.0)), "v_load"),
]


@pytest.mark.parametrize("count", [1e5, 100000.0, np.int64(100_000), np.float32(1e5), np.uint32(100_000)],
                         ids=["1e5", "float", "int64", "float32", "uint32"])
def test_whole_numbers_of_any_type_are_counts(count):
    """The issue's reproducer: Spec(samples=1e5) and NumPy integers were refused as out of range."""
    spec = Spec(1e-3, 0.05, samples=count, seed=np.int64(7))
    assert spec.samples == 100_000 and type(spec.samples) is int
    assert spec.seed == 7 and type(spec.seed) is int


def test_numpy_scalars_are_numbers_in_a_spec():
    spec = Spec(np.float32(1e-3), np.float64(0.05), v_load=(np.float32(4.0), np.int64(9)),
                beta={"npn": (np.int32(100), np.float32(300.0))}, resistor_tolerance=np.float32(0.01),
                resistor_tcr=np.float64(100e-6), p_max=np.float32(0.25), mismatch=np.float32(0.02))
    assert spec.v_load == (4.0, 9.0) and spec.beta["npn"] == (100.0, 300.0)
    for value in (spec.i_target, spec.tolerance, spec.resistor_tolerance, spec.p_max, spec.mismatch, *spec.v_load):
        assert type(value) is float
    assert spec.i_target == pytest.approx(1e-3, rel=1e-7)  # float32 holds about 7 digits


@pytest.mark.parametrize("changes, parameter", BAD_SPECS,
                         ids=[f"{p}={next(iter(c.values()))!r}" for c, p in BAD_SPECS])
def test_bad_spec_names_the_parameter(changes, parameter):
    kwargs = dict(i_target=1e-3, tolerance=0.05) | changes
    with pytest.raises(ParameterError) as info:
        Spec(**kwargs)
    err = info.value
    assert err.parameter == parameter
    assert err.valid, "the error must say what would be valid"
    assert parameter in str(err)


def test_temperature_error_says_kelvin():
    with pytest.raises(ParameterError) as info:
        Spec(1e-3, 0.05, temp=(-40.0, 85.0))
    assert "K" in info.value.valid


def test_unknown_bounds_name_is_refused():
    spec = Spec(1.4e-3, 0.05, bounds={"v_zz": (1.0, 2.0)})
    with pytest.raises(ParameterError) as info:
        factors(spec, _sink())
    assert info.value.parameter == "bounds.v_zz"
    assert "r_e" in info.value.valid  # the valid names are listed
    # the same spec through the worst case: same error, before any solve
    from kit.analysis.worstcase import worst_case
    with pytest.raises(ParameterError) as info:
        worst_case(_sink(), spec, self_heating=False, methods=("extreme-value",))
    assert info.value.parameter == "bounds.v_zz"


# A name the design does not have, silently dropped, would give a worst case without the
# tolerance the engineer asked for (an optimistic answer): each is a ParameterError naming
# the entry, as an unknown bounds name is.
UNKNOWN_NAMES = [
    (dict(beta={"NPN": (100.0, 300.0)}), "beta.NPN", _sink),
    (dict(beta={"Q7": (100.0, 300.0)}), "beta.Q7", _sink),
    (dict(tolerances={"r_x": 0.001}), "tolerances.r_x", _sink),
    (dict(tcrs={"r_x": 10e-6}, temp=(273.15, 323.15)), "tcrs.r_x", _sink),
    (dict(matched=(("Q1", "Q9"),), beta={"npn": (100.0, 300.0)}), "matched", _mirror),
]


@pytest.mark.parametrize("changes, parameter, make", UNKNOWN_NAMES, ids=[p for _, p, _ in UNKNOWN_NAMES])
def test_unknown_names_are_refused(changes, parameter, make):
    spec = Spec(1e-3, 0.05, **changes)
    with pytest.raises(ParameterError) as info:
        factors(spec, make())
    assert info.value.parameter.startswith(parameter)


def test_bounds_outside_the_value_range_are_refused():
    spec = Spec(1.4e-3, 0.05, resistor_tolerance=0.0, bounds={"r_e": (-100.0, 1.7e3)})
    with pytest.raises(ParameterError) as info:
        factors(spec, _sink())
    assert info.value.parameter == "bounds.r_e"


# --------------------------------------------------------------------------------------
# the spec as plain data

def test_spec_to_dict_is_strict_json_and_round_trips():
    spec = Spec(1.4e-3, 0.05, v_load=(4.0, 9.0), temp=(233.15, 358.15), beta={"npn": (100.0, 300.0)},
                tolerances={"r_e": 0.001}, bounds={"Q1.v_a": (60.0, 140.0)}, matched=(("Q1", "Q2"),),
                p_max=0.25)
    text = json.dumps(spec.to_dict(), allow_nan=False)
    back = json.loads(text)
    assert back["beta"] == {"npn": [100.0, 300.0]}
    assert back["tolerances"] == {"r_e": 0.001}
    # the plain data rebuilds an equal spec (tuples come back as lists)
    again = Spec(**(back | {"v_load": tuple(back["v_load"]), "temp": tuple(back["temp"]),
                            "matched": tuple(tuple(g) for g in back["matched"])}))
    assert again.limits == spec.limits
    assert json.dumps(again.to_dict(), sort_keys=True) == json.dumps(spec.to_dict(), sort_keys=True)


def test_factor_half_range():
    f = Factor("r_e", 1600.0, 1584.0, 1616.0, "part")  # 1.6 kOhm +- 1 %
    assert f.half_range == pytest.approx(16.0, rel=1e-15)
    assert math.isclose(Factor("temp", 298.15, 233.15, 358.15, "condition").half_range, 62.5)
