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
>>> 0.9e-3 < ev.i_out < 1.05e-3
True
"""

from __future__ import annotations

import numpy as np

from kit.topologies import mirrors_common as common
from kit.topologies.base import Simplification, Topology, ValueSpec

# A scenario of our own: a 1 mA bias from a 0.5 mA reference with about
# 0.33 V across each emitter resistor.
VALUES = (
    common.i_ref_spec(0.5e-3),
    common.I_REF_TC,
    common.n_area_spec(1.0),
    ValueSpec("r_e1", "Ω", "emitter resistor of the input transistor Q1", 680.0, 1e-2, 1e9, "resistor"),
    ValueSpec("r_e2", "Ω", "emitter resistor of the output transistor Q2", 330.0, 1e-2, 1e9, "resistor"),
    common.supply_spec(12.0),
    common.load_spec(6.0),
)

SIMPLIFICATIONS = (
    Simplification("resistor_ratio", "equal V_BE: I_out = I_REF·R_E1/R_E2",
                   ("base_current_neglected", "alpha_one", "vbe_fixed", "no_early"),
                   "Gray, Hurst, Lewis & Meyer, Analysis and Design of Analog ICs, ch. 4 "
                   "(from memory)"),
    Simplification("lambert_w", "exponential junctions, β → ∞ (Lambert W form)",
                   ("base_current_neglected", "alpha_one", "no_early", "forward_active"),
                   "derived here; R_E1 = 0 is the Widlar law (Widlar 1965; W form: Aylward)"),
    Simplification("w_base_current", "W form with base currents (one correction step)",
                   ("no_early", "forward_active"), "derived here"),
)

EXTRAS = {"r_out_degenerated": "R_out = r_o2[1 + βR_E2/(R_E2 + r_π2 + R_B)] + R_E2‖(r_π2 + R_B), "
                               "R_B = R_E1 + 1/(g_m1 + 1/r_π1 + 1/r_o1)"}


def build(polarity):
    """The exact equations of one polarity."""
    import sympy as sp

    from kit.circuit import Circuit
    from kit.derive import wright_omega_function

    npn = polarity == "npn"
    c = Circuit(polarity)
    c.rail("0", 0)
    c.rail("cc", c.parameter("v_supply"))
    c.rail("out", c.parameter("v_load"))
    c.output("out", 1 if npn else -1)
    c.node("b")
    c.node("e1")
    c.node("e2")
    rail = "0" if npn else "cc"
    i_ref = c.operating_value(
        "I_REF", c.parameter("i_ref") * (1 + c.parameter("i_ref_tc") * (c.temp - c.t_ref)))
    c.current_source(*(("cc", "b") if npn else ("b", "0")), i_ref)
    r_e1 = c.resistor("R_E1", "e1", rail, "r_e1")
    r_e2 = c.resistor("R_E2", "e2", rail, "r_e2")
    q1 = c.transistor("Q1", polarity, "b", "b", "e1")
    q2 = c.transistor("Q2", polarity, "b", "out", "e2", area=c.parameter("n_area"))

    omega = wright_omega_function()
    v_t1, v_t2 = q1["V_T"], q2["V_T"]

    def output_current(i_c1, r_in, r_out):
        # V_T1 ln(I_C1/I_S1) + I_C1 r_in = V_T2 ln(I/I_S2) + I r_out, solved for I; with
        # V_T1 = V_T2 = V_T this is (V_T/r_out) W[(m I_C1 r_out/V_T) exp(I_C1 r_in/V_T)].
        drive = v_t1 * sp.log(i_c1 / q1["I_S"]) + i_c1 * r_in
        return v_t2 / r_out * omega(sp.log(q2["I_S"] * r_out / v_t2) + drive / v_t2)

    beta_limit = output_current(i_ref, r_e1, r_e2)
    # Q2's base current as the beta -> inf current ratio over beta_2; written as a
    # ratio so that I_C1 stays positive when Q2's base would take all of I_REF.
    i_c1 = i_ref / (1 + 1 / q1["beta"] + beta_limit / (i_ref * q2["beta"]))
    corrected = output_current(i_c1, r_e1 * (1 + 1 / q1["beta"]), r_e2 * (1 + 1 / q2["beta"]))
    closed_forms = {
        "resistor_ratio": i_ref * r_e1 / r_e2,
        "lambert_w": beta_limit,
        "w_base_current": corrected,
    }

    j1, j2 = c.transistors["Q1"], c.transistors["Q2"]
    g_m1 = j1["i_c"] / v_t1
    r_pi1 = v_t1 / j1["i_b"]
    r_o1 = (q1["V_A"] + j1["v_ce"]) / j1["i_c"]
    r_b = r_e1 + 1 / (g_m1 + 1 / r_pi1 + 1 / r_o1)
    r_o2 = (q2["V_A"] + j2["v_ce"]) / j2["i_c"]
    r_pi2 = v_t2 / j2["i_b"]
    beta2 = j2["i_c"] / j2["i_b"]
    r_out = (r_o2 * (1 + beta2 * r_e2 / (r_e2 + r_pi2 + r_b))
             + r_e2 * (r_pi2 + r_b) / (r_e2 + r_pi2 + r_b))
    return c.equations(extras={"r_out_degenerated": r_out}, closed_forms=closed_forms)


def guess(model, q):
    """Node voltages from KCL at the base node with both emitter loops solved.

    For a trial base drop ``v`` each emitter loop ``I R_E + V_T ln(I/I_S) = v`` has
    the Wright-omega solution; KCL ``I_E1 + I_E2/(beta_2 + 1) = I_REF`` then rises
    with ``v`` and is bisected (alpha_1 = 1, no Early effect).  This holds in every
    regime, also where Q2's base takes nearly all of I_REF.  The base is then kept
    within a junction drop of the output collector, and the emitters follow it.
    """
    i_ref, beta2, i_s1, i_s2, r_e1, r_e2, v_t1, v_t2 = common.operating(
        model, q, "I_REF", "beta_Q2", "I_S_Q1", "I_S_Q2", "R_E1", "R_E2", "V_T_Q1", "V_T_Q2")

    def emitter_currents(drop):
        return (common.degenerated_junction_current(drop, i_s1, r_e1, v_t1),
                common.degenerated_junction_current(drop, i_s2, r_e2, v_t2))

    def excess(drop):
        i_e1, i_e2 = emitter_currents(drop)
        return i_e1 + i_e2 / (beta2 + 1) - i_ref

    # at drop = I_REF R_E1 + V_T ln(I_REF/I_S1) Q1 alone would carry I_REF: an upper bound
    highest = i_ref * r_e1 + np.maximum(common.junction_drop(i_ref, i_s1, v_t1), 0.0) + 0.1
    drop = common.bisect_increasing(excess, np.zeros_like(highest), highest)
    v_b = common.clamp_to_output(model, q, common.from_emitter_rail(model, q, drop), i_ref)
    if model.polarity == "npn":
        drop = v_b
    else:
        drop = common.operating(model, q, "V_CC")[0] - v_b
    i_e1, i_e2 = emitter_currents(drop)
    # A load past Q2's emitter (V_CE2 < 0) drives Q2 backwards; its emitter then
    # follows the collector, however weakly R_E2 holds it.
    (v_out,) = common.operating(model, q, "V_OUT")
    v_e2 = common.from_emitter_rail(model, q, i_e2 * r_e2)
    v_e2 = np.minimum(v_e2, v_out) if model.polarity == "npn" else np.maximum(v_e2, v_out)
    return common.stack_unknowns(model, {
        "V_b": v_b,
        "V_e1": common.from_emitter_rail(model, q, i_e1 * r_e1),
        "V_e2": v_e2,
    })


def draw(design, d):
    """Schematic with the present values (see :mod:`kit.schematic`)."""
    import schemdraw.elements as elm

    npn = design.polarity == "npn"
    up = common.toward_top(npn)
    q1 = common.transistor(npn, facing_left=True, label="Q1")
    common.emitter_return(design, d, q1.emitter, npn, "r_e1", "R_E1")
    elm.Line().at(q1.base).right(common.GAP)
    q2 = common.transistor(npn, label=f"Q2\nN = {design.values['n_area']:g}").anchor("base")
    common.emitter_return(design, d, q2.emitter, npn, "r_e2", "R_E2")
    common.output_terminal(q2.collector, npn)
    node = getattr(elm.Line().at(q1.collector), up)(common.LEAD * 0.6).end
    elm.Dot()
    elm.Line().at(node).tox(q1.base[0] + 0.8)
    elm.Line().toy(q1.base[1])
    elm.Dot()
    common.reference_feed(design, d, node, npn)


TOPOLOGY = Topology(
    key="degenerated_mirror",
    order=40,
    title="Emitter-degenerated current mirror",
    description=("Mirror with emitter resistors R_E1 (input Q1) and R_E2 (output Q2): the "
                 "current ratio is set mainly by R_E1/R_E2, V_BE mismatch is suppressed and "
                 "the output resistance rises. NPN sinks, PNP sources."),
    polarities=("npn", "pnp"),
    transistors=("Q1", "Q2"),
    output_transistor="Q2",
    values=VALUES,
    simplifications=SIMPLIFICATIONS,
    build=build,
    guess=guess,
    draw=draw,
    limits=common.reference_headroom("b"),
    extras=EXTRAS,
    hand_parameters=(),
    notes=(
        "Degeneration divides the effect of a V_BE mismatch by about 1 + g_m·R_E; "
        "aim for I·R_E of 0.1 V or more with discrete parts.",
        "Compliance starts at I_E2·R_E2 + V_CE(sat), higher than a plain mirror's.",
        "Check Q2's and R_E2's dissipation at the extreme of compliance.",
    ) + common.SAFETY_NOTES,
    budget_labels={"I_REF": "reference current I_REF"},
)
