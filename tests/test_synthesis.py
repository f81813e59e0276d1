"""Synthesis against an independent re-check, the E-series tables and impossible specs.

* The best candidate is re-checked with a fresh, equal spec: the kit's
  worst case and, independently, every corner of the tolerance box plus
  random interior points solved with self-heating, judged here (forward
  active with V_CE above the part's V_CE(sat), junction below its rating,
  current inside the limits).
* Every resistor value is a member of the E-series the synthesis names,
  checked against the `eseries` package's own tables (IEC 60063); 5 % parts
  come from E24 by the customary tolerance of the series (common practice).
* Specs no divider source can meet fail with reasons that name the cause.

The specs are scenarios invented for these tests.
"""

from __future__ import annotations

import itertools
import json
import math
import re

import eseries
import numpy as np
import pytest

from kit import report
from kit.analysis.spec import Spec, factors
from kit.analysis.synthesis import synthesize
from kit.analysis.thermal import junction_temperatures, solve_self_heated
from kit.analysis.worstcase import worst_case
from kit.analysis.evaluation import model_of

# A 3 mA sink for an opto-coupler LED from a 12 V rail: +-25 % over 0 ... 50 degC, load
# 3.5 ... 8 V, gain 120 ... 300, 5 % resistors of 100 ppm/K.
FEASIBLE = dict(i_target=3e-3, tolerance=0.25, v_load=(3.5, 8.0), temp=(273.15, 323.15),
                beta={"npn": (120.0, 300.0)}, resistor_tolerance=0.05)


@pytest.fixture(scope="module")
def feasible():
    spec = Spec(**FEASIBLE)
    return spec, synthesize(spec, topologies=["divider_source"], polarities=["npn"])


@pytest.fixture(scope="module")
def impossible():
    # +-0.5 % with 5 % resistors: any one resistor alone moves a divider source by more
    spec = Spec(1e-3, 0.005, v_load=(2.0, 8.0), resistor_tolerance=0.05)
    return spec, synthesize(spec, topologies=["divider_source"])


def test_best_meets_its_own_spec_when_rechecked(feasible):
    spec, result = feasible
    best = result.best
    assert best is not None and best.passed
    assert best.design.topology.key == "divider_source" and best.design.polarity == "npn"
    fresh = Spec(**FEASIBLE)
    assert fresh is not spec and fresh == spec
    # the kit's own worst case, run again from scratch on the chosen design
    wc = worst_case(best.design, fresh, methods=("extreme-value",))
    assert wc.met
    eva = wc.methods["extreme-value"]
    assert (eva.low, eva.high) == pytest.approx((best.low, best.high), rel=1e-9)
    lo, hi = fresh.limits
    assert lo <= best.low <= best.nominal <= best.high <= hi

    # independent: every corner and 2000 uniform interior points, self-heated, judged here
    d = best.design
    box = factors(fresh, d)
    bits = np.array(list(itertools.product((0.0, 1.0), repeat=len(box))))
    rng = np.random.default_rng(20240611)
    inside = rng.uniform(size=(2000, len(box)))
    unit = np.vstack([bits, inside])
    values = d.parameters() | {f.name: f.low + unit[:, i] * (f.high - f.low) for i, f in enumerate(box)}
    points = solve_self_heated(model_of(d), values)
    q1 = d.devices["Q1"]
    j = points.junctions["Q1"]
    assert points.converged.all()
    assert np.all(j["v_ce"] >= q1.v_ce_sat)  # not saturated anywhere in the box
    assert np.all(j["v_be"] > 0.4)  # conducting
    assert np.all(j["v_ce"] < q1.bv_ceo)
    assert np.all(junction_temperatures(points)["Q1"] <= q1.t_j_max)
    assert np.all((points.i_out >= lo) & (points.i_out <= hi))
    # the kit's bound contains every point solved here
    assert eva.low <= points.i_out.min() * (1 + 1e-9) and points.i_out.max() <= eva.high * (1 + 1e-9)


def test_values_are_standard_values_of_the_named_series(feasible):
    spec, result = feasible
    # 5 % resistors: E24 (customary tolerance of the series, common practice)
    assert result.series == "E24"
    table = eseries.E24
    assert result.candidates
    for candidate in result.candidates:
        d = candidate.design
        for name in d.topology.resistors:
            value = d.values[name]
            members = list(eseries.erange(table, value * 0.98, value * 1.02))
            assert any(math.isclose(value, m, rel_tol=1e-9) for m in members), (name, value, members)
    # ranked by margin, all passing
    margins = [c.margin for c in result.candidates]
    assert margins == sorted(margins, reverse=True)
    assert all(c.passed for c in result.candidates) and result.best is result.candidates[0]


def test_impossible_tolerance_names_the_resistors(impossible):
    spec, result = impossible
    assert result.best is None and result.candidates == []
    assert set(result.infeasible) == {"divider_source/npn", "divider_source/pnp"}
    pattern = re.compile(r"^(r\w*) ±5 % alone moves the current by ([\d.]+)% of the target")  # ±0.05 as a percentage
    for key, reasons in result.infeasible.items():
        named = [pattern.match(r) for r in reasons]
        named = [m for m in named if m]
        assert named, (key, reasons)
        # each named resistor moves the current by more than the +-0.5 % allowed
        assert all(float(m.group(2)) > 0.5 for m in named), reasons
        assert {m.group(1) for m in named} <= {"r1", "r2", "r_e"}


def test_load_range_below_saturation_names_saturation():
    # the whole load range below the part's 0.2 V V_CE(sat): no sink can stay out of saturation
    spec = Spec(1e-3, 0.05, v_load=(0.05, 0.15), resistor_tolerance=0.01)
    result = synthesize(spec, topologies=["divider_source"], polarities=["npn"])
    assert result.best is None
    assert list(result.infeasible) == ["divider_source/npn"]
    assert any("satur" in reason for reason in result.infeasible["divider_source/npn"])


def test_synthesis_to_dict_is_strict_json(feasible, impossible):
    spec, result = feasible
    data = json.loads(json.dumps(result.to_dict(), allow_nan=False))
    assert data["series"] == "E24"
    assert data["candidates"][0]["values"] == dict(result.best.design.values)
    # the result is data; words come from the report layer
    assert not any(hasattr(result, name) for name in ("text", "html", "_repr_html_"))
    assert "PASS" in report.text(result) and "E24" in report.html(result)
    _, bad = impossible
    data = json.loads(json.dumps(bad.to_dict(), allow_nan=False))
    assert set(data["infeasible"]) == {"divider_source/npn", "divider_source/pnp"}
    assert data["candidates"] == []
    assert "cannot meet" in report.text(bad)
