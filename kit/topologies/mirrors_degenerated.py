"""Emitter-degenerated current mirror (NPN sink, PNP source).

NPN sink (the PNP source is its mirror image, emitter resistors to V_CC)::

    I_REF -> node b
    Q1: base = collector = b, emitter = e1,  R_E1: e1 -> 0
    Q2: base = b, collector = out, emitter = e2 (area N),  R_E2: e2 -> 0

Unknowns: V_b, V_e1, V_e2.  Exact KCL at the three nodes; the loop
``V_BE1 + I_E1 R_E1 = V_BE2 + I_E2 R_E2`` follows from them.

Closed forms (``m = I_S2/I_S1``, N for matched parts):

* resistor ratio ``I_out = I_REF R_E1/R_E2`` when both V_BE are equal
  (Gray, Hurst, Lewis & Meyer, *Analysis and Design of Analog ICs*, ch. 4,
  from memory);
* beta, V_A -> inf: ``V_T ln(I_REF/I_S1) + I_REF R_E1 = V_T ln(I/I_S2) + I R_E2``, so
  ``I_out = (V_T/R_E2) W[(m I_REF R_E2/V_T) exp(I_REF R_E1/V_T)]``, written with
  the Wright omega function ``W(u) = omega(ln u)`` so that the exponential never
  overflows (derived here; R_E1 = 0 gives the Widlar law, whose W form is in
  K. Aylward's Widlar-source note).  The kit writes it with each junction's own
  V_T, ``I = (V_T2/R_E2) omega(ln(I_S2 R_E2/V_T2) + (V_T1 ln(I_REF/I_S1) + I_REF R_E1)/V_T2)``,
  which is the same for one temperature and stays exact when Q1 and Q2 differ;
* finite beta: the same law with ``I_C1 = I_REF/(1 + 1/beta_1 + (I_out/I_REF)/beta_2)``
  and ``R_E (1 + 1/beta)`` in place of ``R_E``; it has no closed solution, so the
  closed form takes one correction step from the beta -> inf value (error of
  order 1/beta^2).

Output resistance, hybrid-pi model (base of Q2 returned through the
impedance R_B of the input side; Sedra & Smith form for R_B = 0, with the
r_pi/(r_pi + R_B) factor of the general case, derived here)::

    R_out = r_o2 [1 + beta R_E2/(R_E2 + r_pi2 + R_B)] + R_E2 || (r_pi2 + R_B)
    R_B   = R_E1 + 1/(g_m1 + 1/r_pi1 + 1/r_o1)     (diode-connected Q1 over R_E1)

Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("degenerated_mirror", "npn", i_ref="0.5 mA",
...                              r_e1=680, r_e2=330))
>>> 0.9e-3 < ev.i_out < 1.05e-3, ev.compliance.low.part
(True, 'Q2')
"""

from __future__ import annotations

from kit.circuit.blocks import (degenerated_output_resistance, junction_behind_resistor, positive_or,
                                reference_current)
from kit.devices.bjt import ALPHA_ONE, BASE_CURRENT_NEGLECTED, FORWARD_ACTIVE, KIND as BJT, NO_EARLY
from kit.topologies import common, drawing
from kit.topologies.base import Topology, Value
from kit.words import assumption

# A scenario of our own: a 1 mA bias from a 0.5 mA reference with about
# 0.33 V across each emitter resistor.
VALUES = (
    common.i_ref(0.5e-3),
    common.I_REF_TC,
    common.n_area(1.0),
    Value("r_e1", "Ω", "emitter resistor of the input transistor Q1", 680.0, 1e-2, 1e9, "resistor"),
    Value("r_e2", "Ω", "emitter resistor of the output transistor Q2", 330.0, 1e-2, 1e9, "resistor"),
    common.supply(12.0),
    common.load(6.0),
)

# The hand rule of a degenerated pair: the two junction drops cancel around the
# emitter loop, so the form holds no junction law at all.
EQUAL_VBE = assumption("equal_vbe", "equal V_BE in both halves (the junction drops cancel)",
                       excludes=("I_S_", "V_T_"))

GRAY = "Gray, Hurst, Lewis & Meyer, Analysis and Design of Analog ICs, ch. 4 (from memory)"
R_OUT_LABEL = ("R_out = r_o2[1 + βR_E2/(R_E2 + r_π2 + R_B)] + R_E2‖(r_π2 + R_B), "
               "R_B = R_E1 + 1/(g_m1 + 1/r_π1 + 1/r_o1)")


def build(c):
    """The exact circuit: reference into the strapped input, both emitters degenerated."""
    import sympy as sp

    npn = c.supply_and_load()
    c.node("b")
    c.node("e1")
    c.node("e2")
    rail = "0" if npn else "cc"
    i_ref = reference_current(c, "b", sink=npn)
    r_e1 = c.resistor("R_E1", "e1", rail, "r_e1")
    r_e2 = c.resistor("R_E2", "e2", rail, "r_e2")
    q1 = c.add(BJT, "Q1", b="b", c="b", e="e1")
    q2 = c.add(BJT, "Q2", b="b", c="out", e="e2", scale=c.parameter("n_area"))

    def output_current(i_c1, r_in, r_out):
        # V_T1 ln(I_C1/I_S1) + I_C1 r_in = V_T2 ln(I/I_S2) + I r_out, solved for I: Q2's
        # junction behind r_out across the drop of Q1's side.
        drive = q1["V_T"] * sp.log(i_c1 / q1["I_S"]) + i_c1 * r_in
        return junction_behind_resistor(drive, r_out, q2["V_T"], q2["I_S"])

    c.closed_form("resistor_ratio", i_ref * r_e1 / r_e2, "equal V_BE: I_out = I_REF·R_E1/R_E2",
                  (BASE_CURRENT_NEGLECTED.key, ALPHA_ONE.key, EQUAL_VBE.key, NO_EARLY.key), GRAY)
    beta_limit = c.closed_form(
        "lambert_w", output_current(i_ref, r_e1, r_e2), "exponential junctions, β → ∞ (Lambert W form)",
        (BASE_CURRENT_NEGLECTED.key, ALPHA_ONE.key, NO_EARLY.key, FORWARD_ACTIVE.key),
        "derived here; R_E1 = 0 is the Widlar law (Widlar 1965; W form: Aylward)")
    # Q2's base current as the beta -> inf current ratio over beta_2; written as a
    # ratio so that I_C1 stays positive when Q2's base would take all of I_REF.
    i_c1 = i_ref / (1 + 1 / q1["beta"] + beta_limit / (i_ref * q2["beta"]))
    c.closed_form("w_base_current",
                  output_current(i_c1, r_e1 * (1 + 1 / q1["beta"]), r_e2 * (1 + 1 / q2["beta"])),
                  "W form with base currents (one correction step)",
                  (NO_EARLY.key, FORWARD_ACTIVE.key), "derived here")

    s1, s2 = q1.small_signal, q2.small_signal
    r_b = r_e1 + 1 / (s1["g_m"] + 1 / s1["r_pi"] + 1 / s1["r_o"])
    c.extra("r_out_degenerated", degenerated_output_resistance(s2["r_o"], s2["beta"], s2["r_pi"], r_e2, r_b),
            R_OUT_LABEL)
    _start(c, q1, q2, r_e1, r_e2, i_ref, i_c1)


def _start(c, q1, q2, r_e1, r_e2, i_ref, i_c1):
    """Base drop from the base-current-corrected input current, kept within a junction
    drop of the output collector; each emitter then at its own junction's current
    behind its resistor across that drop."""
    import sympy as sp

    npn = c.sense == "n"
    v_cc, v_out = c.voltages["cc"], c.voltages["out"]
    i_c1 = positive_or(i_c1)
    drop = BJT.start(q1.sense, i_c1, q1.symbols) + i_c1 * (1 + 1 / q1["beta"]) * r_e1
    # In saturation Q2's collector-base junction carries up to the reference; the
    # drop that passes it follows temperature and I_S.
    clamp = sp.Max(BJT.start(q2.sense, i_ref, q2.symbols), common.LEAST_SATURATED_VBC)
    v_b = sp.Min(drop, v_out + clamp) if npn else sp.Max(v_cc - drop, v_out - clamp)
    drop = v_b if npn else v_cc - v_b
    v_e1 = r_e1 * junction_behind_resistor(drop, r_e1, q1["V_T"], q1["I_S"])
    v_e2 = r_e2 * junction_behind_resistor(drop, r_e2, q2["V_T"], q2["I_S"])
    c.start("b", v_b)
    if npn:
        c.start("e1", v_e1)
        # A load past Q2's emitter drives Q2 backwards: its emitter then follows the
        # collector, however weakly R_E2 holds it.
        c.start("e2", sp.Min(v_e2, v_out))
    else:
        c.start("e1", v_cc - v_e1)
        c.start("e2", sp.Max(v_cc - v_e2, v_out))


def draw(sheet, d):
    """Q1 (input, facing left) and Q2 (output) on one base line, each over its emitter resistor."""
    import schemdraw.elements as elm

    npn = sheet.sink
    q1 = drawing.transistor(npn, facing_left=True, label="Q1")
    drawing.emitter_return(sheet, q1.emitter, npn, "r_e1", "R_E1")
    elm.Line().at(q1.base).right(drawing.GAP)
    q2 = drawing.transistor(npn, label=f"Q2\nN = {sheet['n_area']:g}").anchor("base")
    drawing.emitter_return(sheet, q2.emitter, npn, "r_e2", "R_E2")
    drawing.output_terminal(q2.collector, npn)
    # Diode connection: Q1's collector strapped to the shared base line.
    node = drawing.diode_strap(q1.collector, q1.base, npn)
    drawing.reference_feed(sheet, node, npn)


TOPOLOGY = Topology(
    key="degenerated_mirror",
    order=40,
    title="Emitter-degenerated current mirror",
    description=("Mirror with emitter resistors R_E1 (input Q1) and R_E2 (output Q2): the "
                 "current ratio is set mainly by R_E1/R_E2, V_BE mismatch is suppressed and "
                 "the output resistance rises. NPN sinks, PNP sources."),
    values=VALUES,
    build=build,
    draw=draw,
    notes=(
        "Degeneration divides the effect of a V_BE mismatch by about 1 + g_m·R_E; "
        "aim for I·R_E of 0.1 V or more with discrete parts.",
        "Compliance starts at I_E2·R_E2 + V_CE(sat), higher than a plain mirror's.",
        "Check Q2's and R_E2's dissipation at the extreme of compliance.",
    ) + common.SAFETY_NOTES,
)
