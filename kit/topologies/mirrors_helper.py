"""Beta-helper (base-current-compensated) current mirror, NPN sink and PNP source.

Two registered topologies, the same circuit with and without a pull-down::

    beta_helper_mirror            no R_x (R_x -> inf)
    beta_helper_mirror_pulldown   R_x from the base node to the emitter rail

NPN sink (the PNP source is its mirror image)::

    I_REF -> node x
    Q1: base = b, collector = x, emitter = 0         (input)
    Q2: base = b, collector = out, emitter = 0       (output, area N)
    Q3: base = x, collector = V_CC, emitter = b      (helper: feeds both bases)
    R_x: b -> 0                                      (optional pull-down)

Unknowns: V_x, V_b.  Exact KCL: ``I_REF = I_C1 + I_B3`` at x and
``I_E3 = I_B1 + I_B2 + V_B/R_x`` at b.

Closed forms (``m = I_S2/I_S1``; ``s = 1/beta_1 + m/beta_2``; ``A = 1 + s/(beta_3 + 1)``):

* no R_x, V_A -> inf: ``I_out = m I_REF / A``, for matched parts the published
  ``N I_REF / [1 + (1+N)/(beta(beta+1))]`` (Sedra & Smith, *Microelectronic
  Circuits*, base-current compensation; from memory);
* with R_x: ``I_REF = A I_C1 + B ln(I_C1/I_S1)`` with ``B = V_T/(R_x(beta_3+1))``, so
  ``I_C1 = (B/A) omega(I_REF/B + ln(A I_S1/B))`` and ``I_out = m I_C1``
  (derived here); the hand form takes ``V_B = V_BE(on)``;
* Early law: given ``V_CE1 = V_B + V_BE3`` the ratio is exactly
  ``m (1 + V_CE2/V_A2) / [1 + V_CE1/V_A1 + s/(beta_3 (1 + V_CE3/V_A3) + 1)]``
  times ``I_REF - V_B/(R_x (beta_3 (1 + V_CE3/V_A3) + 1))`` (derived here); the
  closed form takes the junction voltages from the no-Early solution, an
  error of order ``(V_T/V_A)(V_CE1/V_A)``.

Output resistance: Q2's base current does not depend on its collector
voltage in this model, so ``R_out = r_o2`` exactly in the hybrid-pi model.
Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("beta_helper_mirror", "pnp", i_ref="100 uA", n_area=4))
>>> sorted(ev.regions.values())
['active', 'active', 'active']
"""

from __future__ import annotations

import numpy as np

from kit.topologies import mirrors_common as common
from kit.topologies.base import Simplification, Topology, ValueSpec

# Scenarios of our own: a 0.4 mA output from a 0.1 mA reference on 5 V.
VALUES = (
    common.i_ref_spec(100e-6),
    common.I_REF_TC,
    common.n_area_spec(4.0),
    common.supply_spec(5.0, "supply voltage (helper collector; emitter rail of a PNP mirror)"),
    common.load_spec(2.5),
)
VALUES_PULLDOWN = VALUES[:3] + (
    ValueSpec("r_x", "Ω", "pull-down resistor from the base node to the emitter rail", 47e3, 1.0,
              1e9, "resistor"),
) + VALUES[3:]

SEDRA = "Sedra & Smith, Microelectronic Circuits, base-current compensation (from memory)"
DERIVED_EARLY = "derived here (Early law; junction voltages from the no-Early solution)"

SIMPLIFICATIONS = (
    Simplification("area_ratio", "ideal mirror, I_out = N·I_REF",
                   ("base_current_neglected", "no_early", "forward_active", "isothermal"), SEDRA),
    Simplification("finite_beta", "helper, N·I_REF/[1 + (1+N)/(β(β+1))]",
                   ("no_early", "forward_active", "isothermal"), SEDRA),
    Simplification("early_aware", "helper with Early effect", ("forward_active", "isothermal"),
                   DERIVED_EARLY),
)
SIMPLIFICATIONS_PULLDOWN = (
    SIMPLIFICATIONS[0],
    Simplification("fixed_vbe", "helper, pull-down current V_BE(on)/R_x",
                   ("vbe_fixed", "no_early", "isothermal"), "hand analysis, common practice"),
    Simplification("exponential", "helper and pull-down, exponential junction (Wright ω form)",
                   ("no_early", "forward_active", "isothermal"), "derived here"),
    Simplification("early_aware", "helper and pull-down with Early effect",
                   ("forward_active", "isothermal"), DERIVED_EARLY),
)

EXTRAS = {"r_out_ro2": "R_out = r_o2 = (V_A2 + V_CE2)/I_C2 (exact in the hybrid-π model)"}


def _build(polarity, pulldown):
    import sympy as sp

    from kit.circuit import Circuit
    from kit.derive import wright_omega_function

    npn = polarity == "npn"
    c = Circuit(polarity)
    c.rail("0", 0)
    c.rail("cc", c.parameter("v_supply"))
    c.rail("out", c.parameter("v_load"))
    c.output("out", 1 if npn else -1)
    c.node("x")
    c.node("b")
    rail, far = ("0", "cc") if npn else ("cc", "0")
    i_ref = c.operating_value(
        "I_REF", c.parameter("i_ref") * (1 + c.parameter("i_ref_tc") * (c.temp - c.t_ref)))
    c.current_source(*((far, "x") if npn else ("x", far)), i_ref)
    q1 = c.transistor("Q1", polarity, "b", "x", rail)
    q2 = c.transistor("Q2", polarity, "b", "out", rail, area=c.parameter("n_area"))
    q3 = c.transistor("Q3", polarity, "x", far, "b")
    r_x = c.resistor("R_X", "b", rail, "r_x") if pulldown else None

    m = q2["I_S"] / q1["I_S"]
    s = 1 / q1["beta"] + m / q2["beta"]
    gain = 1 + s / (q3["beta"] + 1)
    v_t1 = q1["V_T"]
    v_cc, v_out = c.voltages["cc"], c.voltages["out"]
    v_ce2 = v_out if npn else v_cc - v_out
    closed_forms = {"area_ratio": m * i_ref}
    if pulldown:
        v_on = c.operating_value(
            "V_BE_on", c.parameter("v_be_on") + c.parameter("v_be_tc") * (c.temp - c.t_ref))
        omega = wright_omega_function()
        slope = v_t1 / (r_x * (q3["beta"] + 1))  # pull-down current through the helper's base
        i_c1 = slope / gain * omega(i_ref / slope + sp.log(gain * q1["I_S"] / slope))
        closed_forms["fixed_vbe"] = m * (i_ref - v_on / (r_x * (q3["beta"] + 1))) / gain
        closed_forms["exponential"] = m * i_c1
    else:
        i_c1 = i_ref / gain
        closed_forms["finite_beta"] = m * i_c1
    # Early effect: junction voltages from the no-Early solution, corrected once for
    # the Early factor of their own transistor, then the exact ratio.  With the
    # pull-down, V_B0 = V_T1 ln(I_C1/I_S1) = (I_REF - A I_C1) R_x (beta_3 + 1) exactly.
    v_b0 = ((i_ref - gain * i_c1) * r_x * (q3["beta"] + 1) if pulldown
            else v_t1 * sp.log(i_c1 / q1["I_S"]))
    # Q3's collector current carries its Early factor, its base current does not.
    beta3 = q3["beta"] * (1 + (v_cc - v_b0) / q3["V_A"]) + 1
    i_b3 = (i_ref - i_c1) * (q3["beta"] + 1) / beta3
    v_ce1 = v_b0 + q3["V_T"] * sp.log(q3["beta"] * i_b3 / q3["I_S"])
    v_ce1 -= v_t1 * sp.log(1 + v_ce1 / q1["V_A"])  # Q1 carries I_C1 at a lower V_BE1
    pulled = v_b0 / (r_x * beta3) if pulldown else 0  # its V_B correction is ~1e-6 of I_REF
    closed_forms["early_aware"] = (m * (i_ref - pulled) * (1 + v_ce2 / q2["V_A"])
                                   / (1 + v_ce1 / q1["V_A"] + s / beta3))
    j2 = c.transistors["Q2"]
    extras = {"r_out_ro2": (q2["V_A"] + j2["v_ce"]) / j2["i_c"]}
    return c.equations(extras=extras, closed_forms=closed_forms,
                       hand_parameters=("v_be_on", "v_be_tc") if pulldown else ())


def build(polarity):
    """Exact equations without the pull-down."""
    return _build(polarity, pulldown=False)


def build_pulldown(polarity):
    """Exact equations with the pull-down R_x."""
    return _build(polarity, pulldown=True)


HELPER_SATURATION_GUESS = 0.1  # V of V_CE3 below which the guess treats Q3 as saturated


def _guess_from(key):
    def guess(model, q):
        """Base node from the closed form, kept near the output collector; x a V_BE3 further."""
        i_out = model.closed_forms(q)[key]
        i_ref, i_s1, i_s2, i_s3, beta3, v_t1, v_t3 = common.operating(
            model, q, "I_REF", "I_S_Q1", "I_S_Q2", "I_S_Q3", "beta_Q3", "V_T_Q1", "V_T_Q3")
        i_c1 = common.positive_current(i_out * i_s1 / i_s2)
        v_b = common.clamp_to_output(
            model, q, common.from_emitter_rail(model, q, common.junction_drop(i_c1, i_s1, v_t1)),
            i_ref)
        v_be3 = common.junction_drop(beta3 * common.positive_current(i_ref - i_c1, 1e-12), i_s3, v_t3)
        # On a low supply the helper saturates: its emitter (the base node) then sits at
        # its collector (V_CC for NPN, 0 V for PNP), and I_REF flows through its
        # base-collector junction, a junction drop above (below) it.
        (v_cc,) = common.operating(model, q, "V_CC")
        through_bc = common.junction_drop(i_ref, i_s3, v_t3)
        if model.polarity == "npn":
            helper_saturated = v_cc - v_b < HELPER_SATURATION_GUESS
            v_b = np.where(helper_saturated, np.minimum(v_b, v_cc), v_b)
            v_x = np.where(helper_saturated, v_b + through_bc, v_b + v_be3)
        else:
            helper_saturated = v_b < HELPER_SATURATION_GUESS
            v_b = np.where(helper_saturated, np.maximum(v_b, 0.0), v_b)
            v_x = np.where(helper_saturated, v_b - through_bc, v_b - v_be3)
        return common.stack_unknowns(model, {"V_x": v_x, "V_b": v_b})
    return guess


def _draw(design, d, pulldown):
    """Q1 (facing left) and Q2 on the base line; the helper Q3 between them, above it."""
    import schemdraw.elements as elm

    npn = design.polarity == "npn"
    up = common.toward_top(npn)
    q1 = common.transistor(npn, facing_left=True, label="Q1")
    common.emitter_return(design, d, q1.emitter, npn)
    elm.Line().at(q1.base).right(common.GAP + 1.0)
    q2 = common.transistor(npn, label=f"Q2\nN = {design.values['n_area']:g}").anchor("base")
    common.emitter_return(design, d, q2.emitter, npn)
    common.output_terminal(q2.collector, npn)
    # Node x: Q1's collector, fed by the reference, drives the helper's base.
    x = getattr(elm.Line().at(q1.collector), up)(common.LEAD * 1.2).end
    elm.Dot()
    common.reference_feed(design, d, x, npn)
    elm.Line().at(x).right(1.2)
    q3 = common.transistor(npn, label="Q3").anchor("base")
    # Helper emitter down (NPN) to the base line; collector to the far rail.
    elm.Line().at(q3.emitter).toy(q1.base[1])
    joint = elm.Dot().center
    getattr(elm.Line().at(q3.collector), up)(common.LEAD * 0.5)
    if npn:
        elm.Vdd().label(common.supply_text(design))
    else:
        elm.Ground()
    if pulldown:
        elm.Line().at(joint).right(0.9)
        elm.Dot()
        common.emitter_return(design, d, d.here, npn, "r_x", "R_x")


def draw(design, d):
    """Schematic with the present values (see :mod:`kit.schematic`)."""
    _draw(design, d, pulldown=False)


def draw_pulldown(design, d):
    """Schematic with the present values (see :mod:`kit.schematic`)."""
    _draw(design, d, pulldown=True)


NOTES = (
    "The input node sits at two V_BE: allow the reference source that headroom.",
    "V_CE1 ≈ 2·V_BE: Q1 and Q2 see equal Early factors near V_out ≈ 2·V_BE.",
    "Check Q2's dissipation at the extreme of compliance against its package rating.",
) + common.SAFETY_NOTES

TOPOLOGIES = (
    Topology(
        key="beta_helper_mirror",
        order=50,
        title="Beta-helper current mirror",
        description=("Mirror whose bases are fed by an emitter follower Q3 from the input "
                     "node, dividing the base-current error by about β. NPN sinks, PNP sources."),
        polarities=("npn", "pnp"),
        transistors=("Q1", "Q2", "Q3"),
        output_transistor="Q2",
        values=VALUES,
        simplifications=SIMPLIFICATIONS,
        build=build,
        guess=_guess_from("finite_beta"),
        draw=draw,
        limits=common.reference_headroom("x"),
        extras=EXTRAS,
        hand_parameters=(),
        notes=NOTES + ("Without a pull-down the helper carries only the base currents, about "
                       "(1 + N)·I_REF/β²: the base node is slow to discharge, and at sub-µA "
                       "references the helper is nearly off (leakage rules). Add R_x.",),
        budget_labels={"I_REF": "reference current I_REF"},
    ),
    Topology(
        key="beta_helper_mirror_pulldown",
        order=51,
        title="Beta-helper current mirror with base pull-down",
        description=("Beta-helper mirror with a resistor R_x from the base node to the emitter "
                     "rail: the helper runs at a defined current and the base node settles "
                     "faster, at the cost of a base-current error V_BE/(R_x(β+1))."),
        polarities=("npn", "pnp"),
        transistors=("Q1", "Q2", "Q3"),
        output_transistor="Q2",
        values=VALUES_PULLDOWN,
        simplifications=SIMPLIFICATIONS_PULLDOWN,
        build=build_pulldown,
        guess=_guess_from("exponential"),
        draw=draw_pulldown,
        limits=common.reference_headroom("x"),
        extras=EXTRAS,
        notes=NOTES,
        budget_labels={"I_REF": "reference current I_REF"},
    ),
)
