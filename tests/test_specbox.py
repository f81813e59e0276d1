"""Over what a verdict holds: the spec's box, every default the spec applied marked as such.

Common practice, no source: a worst-case statement is only as good as its
stated conditions (load, supply, temperature, gain spread, tolerances); a
reviewer must see which of them the designer wrote and which the tool filled in.
"""

from __future__ import annotations

import kit
from kit.analysis.spec import DEFAULT_RESISTOR_TCR, DEFAULT_RESISTOR_TOLERANCE, Spec
from kit.analysis.specbox import box_entries


def _rows(spec, design, **kw):
    return {r["item"]: r for r in box_entries(spec, design, True, **kw)}


def test_a_tolerance_the_caller_left_out_is_marked_default_even_without_the_written_set():
    d = kit.design("divider_source")
    left_out = _rows(Spec(1e-3, 0.05), d)
    assert left_out["resistor tolerance"]["default"] and left_out["resistor TCR"]["default"]
    assert f"±{100 * DEFAULT_RESISTOR_TOLERANCE:g} %" in left_out["resistor tolerance"]["value"]
    assert f"±{DEFAULT_RESISTOR_TCR * 1e6:g} ppm/K" in left_out["resistor TCR"]["value"]
    # the same value written by the caller is the caller's
    written = _rows(Spec(1e-3, 0.05, resistor_tolerance=DEFAULT_RESISTOR_TOLERANCE), d)
    assert not written["resistor tolerance"]["default"]


def test_bounds_and_mismatch_read_in_units_and_symbols():
    d = kit.design("basic_mirror_rref", "npn")
    spec = Spec(1e-3, 0.05, bounds={"Q1.v_a": (40.0, 80.0)}, matched=(("Q1", "Q2"),),
                mismatch_vbe=2e-3, mismatch_beta=0.05)
    rows = _rows(spec, d)
    assert rows["other bounds"]["value"] == "Q1.v_a 40 V … 80 V"
    assert rows["matching"]["value"] == "Q1, Q2; ΔV_BE ≤ 2 mV, Δβ/β ≤ 5 %"
