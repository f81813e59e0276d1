"""Part classes (kit.devices.part_classes): facts of the trade, records naming a class, ``biasbook parts``."""

from __future__ import annotations

import json
import math
import re

import pytest
from scipy.constants import Boltzmann, elementary_charge

from kit.cli import main
from kit.devices.part_classes import CLASSES, GENERIC, classes_for, get
from kit.errors import ParameterError, RecordError
from kit.record import parse_record

BIPOLAR = [c.key for c in CLASSES.values() if c.kind == "bjt"]


def v_be_at(model, i_c, temp, v_ce=5.0, t_ref=298.15):
    """V_BE of the kind's law in forward active at ``i_c`` (reverse terms below 1e-30 at 5 V).

    I_C = I_S(T) exp(V_BE/V_T)(1 + V_CE/V_A), I_S(T) = I_S (T/T0)^m exp[(E_g/V_T)(T/T0 - 1)]
    (kit/devices/bjt.py; Getreu 1976), V_T = kT/q from scipy.constants (CODATA).
    """
    v_t = Boltzmann * temp / elementary_charge
    ratio = temp / t_ref
    i_s = model.i_s * ratio ** model.i_s_temp_exponent * math.exp(model.e_g / v_t * (ratio - 1))
    return v_t * math.log(i_c / (i_s * (1 + v_ce / model.v_a)))


def test_at_least_the_classes_a_bias_design_needs():
    kinds = {(c.kind, c.polarity) for c in CLASSES.values()}
    assert len(CLASSES) >= 8
    assert {("bjt", "npn"), ("bjt", "pnp"), ("mos", "nmos"), ("mos", "pmos"), ("opamp", "op-amp"),
            ("zener", "zener")} <= kinds
    for key in ("npn-small-signal", "pnp-small-signal", "dual-npn-matched", "npn-medium-power",
                "pnp-medium-power", "nmos-small-signal", "nmos-logic-power", "ic-npn", "ic-pnp", "ic-nmos",
                "ic-pmos", "opamp-general", "opamp-precision", "zener-6v2", "reference-2v5"):
        assert key in CLASSES


def test_every_class_says_it_is_generic_and_names_no_part():
    # Our own numbers: the label says so, and no text carries a part-number-like token
    # (letters followed by three or more digits).
    part_number = re.compile(r"\b[A-Za-z]{1,5}\d{3,}")
    for c in CLASSES.values():
        assert GENERIC in c.label and c.describe()["source"] == GENERIC
        assert not part_number.search(c.key + " " + c.title)


@pytest.mark.parametrize("key", BIPOLAR)
def test_bipolar_class_v_be_and_its_tempco(key):
    # V_BE at 1 mA within 0.6 ... 0.7 V and dV_BE/dT near -2 mV/K (facts of the trade, from
    # memory; e.g. Horowitz & Hill, The Art of Electronics, ch. 2: "about -2.1 mV/degC").
    model = get(key).convert().model
    assert 0.6 <= v_be_at(model, 1e-3, 298.15) <= 0.7
    slope = (v_be_at(model, 1e-3, 308.15) - v_be_at(model, 1e-3, 288.15)) / 20.0
    assert -2.5e-3 <= slope <= -1.5e-3


@pytest.mark.parametrize("key", BIPOLAR)
def test_bipolar_class_saturation_and_early_voltage_are_of_the_trade(key):
    # V_CE(sat) 0.1 ... 0.35 V at the stated forced gain of 10, V_A tens of volts (from memory).
    model = get(key).convert().model
    assert 0.1 <= model.v_ce_sat <= 0.35
    assert 10.0 <= model.v_a <= 200.0


def test_h_fe_spread_becomes_the_beta_range_below_h_fe():
    # With the Early factor, beta_F = h_FE/(1 + V_CE/V_A) at the test point (kit/devices/bjt.py):
    # 100 ... 400 at 5 V with V_A = 100 V is beta_F 95.2 ... 381.
    part = get("npn-small-signal").convert()
    assert part.ranges["beta_f"] == pytest.approx((100 / 1.05, 400 / 1.05), rel=1e-6)


def test_zener_and_reference_tempcos_are_of_the_trade():
    # A zener above about 6 V has a positive tempco of a few mV/K (avalanche); a shunt
    # reference holds tens of ppm/K (from memory; kit/devices/zener.py says the same).
    zener = get("zener-6v2").convert()
    assert 1e-3 <= zener.model.tc_z <= 4e-3
    reference = get("reference-2v5").convert()
    assert max(abs(t) for t in reference.ranges["tc_z"]) <= 100e-6 * 2.5


def test_logic_level_mosfet_conducts_at_its_drive():
    # Full drive at 4.5 V: the class's threshold is well below it (a logic-level part, from memory).
    part = get("nmos-logic-power").convert()
    assert part.ranges["v_th"][1] < 3.0 and part.model.k_prime * part.model.w_over_l > 1.0


def test_classes_for_and_unknown_class():
    assert [c.key for c in classes_for("bjt", "pnp")] == ["pnp-small-signal", "pnp-medium-power", "ic-pnp"]
    with pytest.raises(ParameterError) as err:
        get("npn-imaginary")
    assert err.value.parameter == "class" and "npn-small-signal" in err.value.valid


# --- records ----------------------------------------------------------------------------------

HEAD = '''
biasbook_record = 2
title = "Class record"
[circuit]
topology = "divider_source"
polarity = "{polarity}"
[values]
r1 = "33k"
r2 = "10k"
r_e = "2k2"
v_supply = "12 V"
v_load = "{v_load}"
'''


def record(body, polarity="npn", v_load="8 V"):
    return parse_record(HEAD.format(polarity=polarity, v_load=v_load) + body)


def test_record_names_a_class_and_overrides_fields():
    r = record('''
[devices.Q1]
class = "npn-small-signal"
bv_ceo = "30 V"
[devices.Q1.datasheet]
h_fe = { min = 120, max = 360 }
v_a = "60 V"
[spec]
current = "1 mA"
tolerance = "10 %"
''')
    q1 = r.design.devices["Q1"]
    assert q1.bv_ceo == 30.0 and q1.v_a == 60.0
    assert "npn-small-signal" in q1.label and GENERIC in q1.label
    # typ 200 of the class stays; min and max are the record's; all at V_CE = 5 V with V_A = 60 V
    assert q1.beta_f == pytest.approx(200 / (1 + 5 / 60), rel=1e-6)
    assert r.spec.beta["Q1"] == pytest.approx((120 / (1 + 5 / 60), 360 / (1 + 5 / 60)), rel=1e-6)
    assert r.spec_from_parts and r.spec_from_parts[0].startswith("spec.beta.Q1")
    again = parse_record(r.to_toml())
    assert again.content_hash() == r.content_hash()


def test_a_class_model_equals_the_class_conversion():
    r = record('[devices.Q1]\nclass = "npn-medium-power"\n')
    assert r.design.devices["Q1"].numbers() == get("npn-medium-power").convert().model.numbers()
    assert r.spec is None


def test_the_spec_range_the_user_wrote_wins():
    r = record('''
[devices.Q1]
class = "npn-small-signal"
[spec]
current = "1 mA"
tolerance = "10 %"
beta = { npn = [150, 250] }
''')
    assert "Q1" not in r.spec.beta and r.spec.beta["npn"] == (150.0, 250.0)
    assert r.spec_from_parts == ()


def test_a_datasheet_table_without_a_class():
    r = record('''
[devices.Q1]
[devices.Q1.datasheet]
h_fe = { min = 80, typ = 160, max = 320, i_c = "1 mA", v_ce = "10 V" }
v_be = { value = "650 mV", i_c = "1 mA", v_ce = "10 V" }
output_conductance = { value = "8 uS", i_c = "1 mA", v_ce = "10 V" }
p_tot = { value = "0.5 W", t_derate = "25 degC", t_j_max = "150 degC" }
''', polarity="pnp", v_load="3 V")
    q1 = r.design.devices["Q1"]
    assert q1.v_a == pytest.approx(1e-3 / 8e-6 - 10.0)
    assert q1.theta_ja == pytest.approx(250.0) and q1.polarity == "pnp"


@pytest.mark.parametrize("body, field", [
    ('[devices.Q1]\nclass = "pnp-small-signal"\n', "devices.Q1.class"),
    ('[devices.Q1]\nclass = "nmos-small-signal"\n', "devices.Q1.class"),
    ('[devices.Q1]\nclass = "no-such-class"\n', "devices.Q1.class"),
    ('[devices.Q1]\nclass = 3\n', "devices.Q1.class"),
    ('[devices.Q1.datasheet]\nh_fe = { min = 100, max = 300, i_c = "1 mA" }\n', "devices.Q1.datasheet.h_fe.v_ce"),
    ('[devices.Q1.datasheet]\nh_fe = { min = 100, max = 300, i_c = "1 V", v_ce = "5 V" }\n',
     "devices.Q1.datasheet.h_fe.i_c"),
    ('[devices.Q1.datasheet]\nv_gs_th = 2\n', "devices.Q1.datasheet.v_gs_th"),
    ('[devices.Q1.datasheet]\nv_a = "__import__(\'os\')"\n', "devices.Q1.datasheet.v_a.value"),
    ('[devices.Q1]\nclass = "npn-small-signal"\n[devices.Q1.datasheet]\nh_fe = { min = 500 }\n',
     "devices.Q1.datasheet.h_fe.min"),
])
def test_bad_class_or_datasheet_names_the_field(body, field):
    with pytest.raises(RecordError) as err:
        record(body)
    assert err.value.parameter == field and err.value.valid


def test_opamp_class_swing_follows_the_records_supply():
    text = '''
biasbook_record = 2
title = "Op-amp class"
[circuit]
topology = "opamp_bjt_source"
polarity = "npn"
[values]
r_s = "1k"
r_b = "220"
v_set = "1 V"
v_set_tc = 0
v_supply = "{supply}"
v_load = "6 V"
[devices.U1]
class = "opamp-precision"
[spec]
current = "1 mA"
tolerance = "5 %"
v_supply = ["{supply}", "{supply}"]
'''
    for supply in (12.0, 24.0):
        r = parse_record(text.replace("{supply}", f"{supply:g} V"))
        u1 = r.design.devices["U1"]
        assert u1.v_oh == pytest.approx(supply - 1.2) and u1.v_ol == pytest.approx(1.2)
        # 110 dB of rejection, |V_S - 15 V| away from the test supply (20 log10, the decibel)
        widen = abs(supply - 15.0) * 10 ** (-110 / 20)
        assert r.spec.bounds["U1.v_os"] == pytest.approx((-75e-6 - widen, 75e-6 + widen))


# --- the command ----------------------------------------------------------------------------------

def test_parts_command_lists_every_class(capsys):
    assert main(["parts"]) == 0
    out = capsys.readouterr().out
    for key in CLASSES:
        assert f"{key}: " in out
    assert out.count(GENERIC) == len(CLASSES)


def test_parts_command_json(capsys):
    assert main(["parts", "--json"]) == 0
    listing = json.loads(capsys.readouterr().out)
    assert [d["class"] for d in listing] == list(CLASSES)
    small = listing[0]
    assert small["source"] == GENERIC and small["ranges"]["beta_f"][0] == pytest.approx(100 / 1.05, rel=1e-6)
    assert all(d["label"].endswith(f"{GENERIC})") for d in listing)


def test_matched_pair_class_gives_its_mismatch_to_a_matched_group():
    # The class states |dV_BE| <= 1 mV and |d beta/beta| <= 10 % between its two transistors
    # (generic, from memory); a spec that matches Q1 and Q2 and states no mismatch takes them.
    text = '''
biasbook_record = 2
title = "Matched pair by class"
[circuit]
topology = "basic_mirror"
polarity = "npn"
[values]
i_ref = "0.5 mA"
i_ref_tc = 0
n_area = 1
v_supply = "9 V"
v_load = "4 V"
[devices.Q1]
class = "dual-npn-matched"
[devices.Q2]
class = "dual-npn-matched"
[spec]
current = "0.5 mA"
tolerance = "10 %"
matched = [["Q1", "Q2"]]
'''
    r = parse_record(text)
    assert r.spec.mismatch_vbe == pytest.approx(1e-3) and r.spec.mismatch_beta == pytest.approx(0.1)
    assert r.spec.beta["Q1"] == r.spec.beta["Q2"]
    own = parse_record(text.replace('matched = [["Q1", "Q2"]]', 'matched = [["Q1", "Q2"]]\nmismatch_vbe = "2 mV"'))
    assert own.spec.mismatch_vbe == pytest.approx(2e-3) and own.spec.mismatch_beta == pytest.approx(0.1)
