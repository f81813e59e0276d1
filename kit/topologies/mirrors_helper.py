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
  error of order ``(V_T/V_A)(V_CE1/V_A)``.  The input drop there is
  ``V_B = V_T ln(1 + I_C1/I_S1)``, the junction law with its "−1": it differs
  from ``V_T ln(I_C1/I_S1)`` by ``V_T I_S1/I_C1`` (1e-10 V_T at the defaults)
  and keeps the helper's predicted current positive when the reference comes
  near I_S (a hot part at a nanoampere reference), where the plain logarithm
  would turn the pull-down current, and with it the helper's, negative.

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

from kit.circuit.blocks import hand_vbe, positive_or, reference_current, wright_omega
from kit.devices.bjt import BASE_CURRENT_NEGLECTED, FORWARD_ACTIVE, KIND as BJT, NO_EARLY, VBE_FIXED
from kit.topologies import common, drawing
from kit.topologies.base import Topology, Value
from kit.words import ISOTHERMAL

# Scenarios of our own: a 0.4 mA output from a 0.1 mA reference on 5 V.
VALUES = (
    common.i_ref(100e-6),
    common.I_REF_TC,
    common.n_area(4.0),
    common.supply(5.0, "supply voltage (helper collector; emitter rail of a PNP mirror)"),
    common.load(2.5),
)
VALUES_PULLDOWN = VALUES[:3] + (
    Value("r_x", "Ω", "pull-down resistor from the base node to the emitter rail", 47e3, 1.0, 1e9, "resistor"),
) + VALUES[3:]

SEDRA = "Sedra & Smith, Microelectronic Circuits, base-current compensation (from memory)"
DERIVED_EARLY = "derived here (Early law; junction voltages from the no-Early solution)"
R_OUT_LABEL = "R_out = r_o2 = (V_A2 + V_CE2)/I_C2 (exact in the hybrid-π model)"


def _build(c, pulldown):
    """The exact circuit, its closed forms and R_out form; ``pulldown`` adds R_x."""
    import sympy as sp

    npn = c.supply_and_load()
    c.node("x")
    c.node("b")
    rail, far = ("0", "cc") if npn else ("cc", "0")
    i_ref = reference_current(c, "x", sink=npn)
    q1 = c.add(BJT, "Q1", b="b", c="x", e=rail)
    q2 = c.add(BJT, "Q2", b="b", c="out", e=rail, scale=c.parameter("n_area"))
    q3 = c.add(BJT, "Q3", b="x", c=far, e="b")
    r_x = c.resistor("R_X", "b", rail, "r_x") if pulldown else None
    c.extra("r_out_ro2", q2.small_signal["r_o"], R_OUT_LABEL)

    m = q2["I_S"] / q1["I_S"]
    s = 1 / q1["beta"] + m / q2["beta"]
    gain = 1 + s / (q3["beta"] + 1)
    v_t1 = q1["V_T"]
    v_cc, v_out = c.voltages["cc"], c.voltages["out"]
    v_ce2 = v_out if npn else v_cc - v_out
    c.closed_form("area_ratio", m * i_ref, "ideal mirror, I_out = N·I_REF",
                  (BASE_CURRENT_NEGLECTED.key, NO_EARLY.key, FORWARD_ACTIVE.key, ISOTHERMAL.key), SEDRA)
    if pulldown:
        v_on = hand_vbe(c)
        slope = v_t1 / (r_x * (q3["beta"] + 1))  # pull-down current through the helper's base
        i_c1 = slope / gain * wright_omega()(i_ref / slope + sp.log(gain * q1["I_S"] / slope))
        c.closed_form("fixed_vbe", m * (i_ref - v_on / (r_x * (q3["beta"] + 1))) / gain,
                      "helper, pull-down current V_BE(on)/R_x", (VBE_FIXED.key, NO_EARLY.key, ISOTHERMAL.key),
                      "hand analysis, common practice")
        c.closed_form("exponential", m * i_c1, "helper and pull-down, exponential junction (Wright ω form)",
                      (NO_EARLY.key, FORWARD_ACTIVE.key, ISOTHERMAL.key), "derived here")
    else:
        i_c1 = i_ref / gain
        c.closed_form("finite_beta", m * i_c1, "helper, N·I_REF/[1 + (1+N)/(β(β+1))]",
                      (NO_EARLY.key, FORWARD_ACTIVE.key, ISOTHERMAL.key), SEDRA)
    # Early effect: junction voltages from the no-Early solution, corrected once for
    # the Early factor of their own transistor, then the exact ratio.  The input
    # drop keeps the junction law's "-1" so that the helper's current below stays
    # positive however close I_C1 comes to I_S1 (see the module docstring).
    v_b0 = v_t1 * sp.log(1 + i_c1 / q1["I_S"])
    # Q3's collector current carries its Early factor, its base current does not.
    beta3 = q3["beta"] * (1 + (v_cc - v_b0) / q3["V_A"]) + 1
    i_e3 = s * i_c1 + (v_b0 / r_x if pulldown else 0)  # both bases and the pull-down
    v_ce1 = v_b0 + q3["V_T"] * sp.log(q3["beta"] * i_e3 / (beta3 * q3["I_S"]))
    v_ce1 -= v_t1 * sp.log(1 + v_ce1 / q1["V_A"])  # Q1 carries I_C1 at a lower V_BE1
    pulled = v_b0 / (r_x * beta3) if pulldown else 0  # its V_B correction is ~1e-6 of I_REF
    ratio = (1 + v_ce2 / q2["V_A"]) / (1 + v_ce1 / q1["V_A"] + s / beta3)
    c.closed_form("early_aware", m * (i_ref - pulled) * ratio,
                  "helper and pull-down with Early effect" if pulldown else "helper with Early effect",
                  (FORWARD_ACTIVE.key, ISOTHERMAL.key), DERIVED_EARLY)
    _start(c, q1, q2, q3, i_ref, i_c1)


def _start(c, q1, q2, q3, i_ref, i_c1):
    """Base node from the closed form's input current, kept within a junction drop of
    the output collector and inside the rails; x a V_BE3 (at the helper's current) beyond it."""
    import sympy as sp

    v_cc, v_out = c.voltages["cc"], c.voltages["out"]
    i_c1 = positive_or(i_c1)
    drop = BJT.start(q1.sense, i_c1, q1.symbols)
    # In saturation Q2's collector-base junction carries up to the reference.
    clamp = sp.Max(BJT.start(q2.sense, i_ref, q2.symbols), common.LEAST_SATURATED_VBC)
    v_be3 = BJT.start(q3.sense, q3["beta"] * positive_or(i_ref - i_c1, 1e-12), q3.symbols)
    # On a low supply the helper saturates and its emitter, the base node, reaches
    # its collector rail (V_CC for NPN, 0 V for PNP) but not beyond.
    if c.sense == "n":
        v_b = sp.Min(drop, v_out + clamp, v_cc)
        c.start("x", v_b + v_be3)
    else:
        v_b = sp.Max(v_cc - drop, v_out - clamp, 0)
        c.start("x", v_b - v_be3)
    c.start("b", v_b)


def build(c):
    """The circuit without the pull-down."""
    _build(c, pulldown=False)


def build_pulldown(c):
    """The circuit with the pull-down R_x."""
    _build(c, pulldown=True)


def _draw(sheet, d, pulldown):
    """Q1 (facing left) and Q2 on the base line; the helper Q3 between them, above it."""
    import schemdraw.elements as elm

    npn = sheet.sink
    up = drawing.toward_top(npn)
    q1 = drawing.transistor(npn, facing_left=True, label="Q1")
    drawing.emitter_return(sheet, q1.emitter, npn)
    elm.Line().at(q1.base).right(drawing.GAP + 1.0)
    q2 = drawing.transistor(npn, label=f"Q2\nN = {sheet['n_area']:g}").anchor("base")
    drawing.emitter_return(sheet, q2.emitter, npn)
    drawing.output_terminal(q2.collector, npn)
    # Node x: Q1's collector, fed by the reference, drives the helper's base.
    x = getattr(elm.Line().at(q1.collector), up)(drawing.LEAD * 1.2).end
    elm.Dot()
    drawing.reference_feed(sheet, x, npn)
    elm.Line().at(x).right(1.2)
    q3 = drawing.transistor(npn, label="Q3").anchor("base")
    # Helper emitter down (NPN) to the base line; collector to the far rail.
    elm.Line().at(q3.emitter).toy(q1.base[1])
    joint = elm.Dot().center
    getattr(elm.Line().at(q3.collector), up)(drawing.LEAD * 0.5)
    if npn:
        elm.Vdd().label(sheet.supply())
    else:
        elm.Ground()
    if pulldown:
        elm.Line().at(joint).right(0.9)
        elm.Dot()
        drawing.emitter_return(sheet, d.here, npn, "r_x", "R_x")


def draw(sheet, d):
    """Schematic with the present values."""
    _draw(sheet, d, pulldown=False)


def draw_pulldown(sheet, d):
    """Schematic with the present values."""
    _draw(sheet, d, pulldown=True)


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
        values=VALUES,
        build=build,
        draw=draw,
        notes=NOTES + ("Without a pull-down the helper carries only the base currents, about "
                       "(1 + N)·I_REF/β²: the base node is slow to discharge, and at sub-µA "
                       "references the helper is nearly off (leakage rules). Add R_x.",),
    ),
    Topology(
        key="beta_helper_mirror_pulldown",
        order=51,
        title="Beta-helper current mirror with base pull-down",
        description=("Beta-helper mirror with a resistor R_x from the base node to the emitter "
                     "rail: the helper runs at a defined current and the base node settles "
                     "faster, at the cost of a base-current error V_BE/(R_x(β+1))."),
        values=VALUES_PULLDOWN,
        build=build_pulldown,
        draw=draw_pulldown,
        notes=NOTES,
    ),
)
