"""Widlar current source: a diode-referenced mirror with emitter degeneration in the output.

NPN sink (PNP source: the mirror image, emitters towards V_CC)::

    reference -> b ----+---------- Q2 base          load -> out = Q2 collector
                       |                            Q2 emitter = e --R_E-- 0
                Q1 diode-connected (base = collector = b), emitter = 0

The reference is an ideal current I_REF (``widlar_source``) or a resistor
R_REF from the supply (``widlar_resistor_reference``).  Q2 has N times Q1's
emitter area.  R_E takes a small V_BE difference, so a small output current
comes from a moderate reference without a large resistor.  Unknowns: V_b,
V_e; the load voltage is imposed at Q2's collector.

Widlar's relation (β, V_A -> ∞; Widlar, IEEE Trans. Circuit Theory CT-12,
1965, from memory)::

    I_out R_E = V_T ln(N I_REF / I_out)

is a junction behind a resistor with no voltage across the pair, so its
explicit solution is ``I_out = (V_T/R_E) ω(ln(N I_REF R_E / V_T))`` with
the Wright omega ``ω(x) = W(e^x)`` (nothing overflows; Corless & Jeffrey,
LNCS 2385, 2002, from memory).  Finite β, derived here from the two KCL
equations::

    V_T ln(N I_C1 / I_C2) = (1 + 1/β2) I_C2 R_E,    I_C1 = β1 (I_REF - I_C2/β2) / (β1 + 1)

First order (Q2's base current dropped from the reference node):
``I_out ≈ [V_T/(R_E (1 + 1/β2))] ω(ln(N I_C1 R_E (1 + 1/β2)/V_T))`` with
``I_C1 = β1 I_REF/(β1 + 1)``.  With the Early effect each β becomes
``β (1 + V_CE/V_A)`` and N becomes ``N (1 + V_CE2/V_A2)/(1 + V_CE1/V_A1)``.
With R_REF the diode current itself is a junction behind a resistor,
``R_REF (1 + 1/β1) I_C1 + V_T ln(I_C1/I_S1) = V_CC``.

Output resistance (hybrid-π): Q2 is a degenerated stage whose base returns
through Q1's diode impedance (and R_REF), ``r_o2 [1 + β R_E/(R_E + r_π2 +
R_B)] + R_E ‖ (r_π2 + R_B)``; with ``R_B = 0`` it is Sedra & Smith's
``r_o2 [1 + g_m2 (R_E ‖ r_π2)] + R_E ‖ r_π2`` (*Microelectronic Circuits*,
Widlar source, from memory).

Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("widlar_source", i_ref="1 mA", r_e="5k6"))
>>> 10e-6 < ev.i_out < 30e-6, ev.compliance.low.part
(True, 'Q2')
"""

from __future__ import annotations

from kit.circuit.blocks import (degenerated_output_resistance, hand_vbe, junction_behind_resistor,
                                parallel, positive_or, reference_current)
from kit.devices.bjt import (ALPHA_ONE, BASE_CURRENT_NEGLECTED, FORWARD_ACTIVE, KIND as BJT,
                             NO_EARLY, VBE_FIXED)
from kit.topologies import common, drawing
from kit.topologies.base import Topology, Value
from kit.words import ISOTHERMAL, assumption

OUTPUT_BASE_LOAD_NEGLECTED = assumption(
    "output_base_load_neglected", "output base current not drawn from the reference node")

WIDLAR = "Widlar, IEEE Trans. Circuit Theory CT-12 (1965), from memory"
LAMBERT = "Lambert-W solution (Wright ω form) derived here"
EARLY_SOURCE = "derived here (Early factor 1 + V_CE/V_A on each collector current)"

SATURATED_VCE_START = 0.05  # V; collector-emitter voltage of a hard-saturated transistor

R_E = Value("r_e", "Ω", "emitter resistor of the output transistor Q2", 4.7e3, 1e-2, 1e9, "resistor")
TAIL = (R_E, common.n_area(1.0), common.supply(12.0, "supply voltage (emitter rail of a PNP source)"),
        common.load(6.0))
VALUES_IDEAL = (common.i_ref(1.2e-3), common.I_REF_TC) + TAIL
VALUES_RESISTOR = (Value("r_ref", "Ω", "reference resistor from the supply to the diode Q1", 10e3, 1.0, 1e9,
                         "resistor"),) + TAIL


def widlar_current(i_c1, r_e, n, v_t, beta_2=None):
    """Output current of Widlar's relation for a given diode current (SymPy).

    ``V_T ln(N I_C1 / I) = (1 + 1/β2) I R_E`` is a junction of saturation
    current ``N I_C1`` behind ``R_E (1 + 1/β2)`` with nothing across the
    pair; ``beta_2=None`` drops the base current (β2 -> ∞).

    Examples
    --------
    >>> import sympy as sp
    >>> i1, r, n, vt = sp.symbols("I_1 R N V_T", positive=True)
    >>> widlar_current(i1, r, n, vt)
    V_T*wright_omega(log(I_1*N*R/V_T))/R
    """
    r_eff = r_e if beta_2 is None else r_e * (1 + 1 / beta_2)
    return junction_behind_resistor(0, r_eff, v_t, n * i_c1)


def _build(c, reference):
    """Rails, the reference, Q1 (diode), Q2 (area N) with R_E; closed forms and R_out forms."""
    npn = c.supply_and_load()
    c.node("b")
    c.node("e")
    rail = "0" if npn else "cc"
    if reference == "ideal":
        i_ref = reference_current(c, "b", sink=npn)
    else:
        r_ref = c.resistor("R_REF", *(("cc", "b") if npn else ("b", "0")), "r_ref")
    q1 = c.add(BJT, "Q1", b="b", c="b", e=rail)
    q2 = c.add(BJT, "Q2", b="b", c="out", e="e", scale=c.parameter("n_area"))
    r_e = c.resistor("R_E", "e", rail, "r_e")
    v_on = hand_vbe(c)

    v_t = q1["V_T"]  # the relation runs through Q1's junction (Q2 at the same temperature)
    v_cc = c.voltages["cc"]
    n = q2["I_S"] / q1["I_S"]  # N times any I_S mismatch
    b1, b2 = q1["beta"], q2["beta"]
    height = c.voltages["out"] if npn else v_cc - c.voltages["out"]  # above Q2's emitter rail

    def early_terms(i_textbook):
        # V_CE1 = V_BE(on); V_CE2 = V_out - I R_E from the textbook current.
        return 1 + v_on / q1["V_A"], 1 + (height - i_textbook * r_e) / q2["V_A"]

    ideal = (BASE_CURRENT_NEGLECTED.key, ALPHA_ONE.key, NO_EARLY.key, FORWARD_ACTIVE.key, ISOTHERMAL.key)
    first_order = (NO_EARLY.key, FORWARD_ACTIVE.key, OUTPUT_BASE_LOAD_NEGLECTED.key, ISOTHERMAL.key)
    early = (VBE_FIXED.key, FORWARD_ACTIVE.key, OUTPUT_BASE_LOAD_NEGLECTED.key, ISOTHERMAL.key)
    if reference == "ideal":
        textbook = widlar_current(i_ref, r_e, n, v_t)
        q_1, q_2 = early_terms(textbook)
        c.closed_form("widlar", textbook, "Widlar's relation (Lambert W)", ideal, f"{WIDLAR}; {LAMBERT}")
        first = c.closed_form("first_order_beta", widlar_current(b1 * i_ref / (b1 + 1), r_e, n, v_t, b2),
                              "first order in base current (Lambert W)", first_order,
                              f"derived here from {WIDLAR}")
        current = positive_or(first)
        diode_current = b1 * (i_ref - current / b2) / (b1 + 1)
        c.closed_form("first_order_beta_early",
                      widlar_current(b1 * q_1 * i_ref / (b1 * q_1 + 1), r_e, n * q_2 / q_1, v_t, b2 * q_2),
                      "first order in base current, Early effect", early, EARLY_SOURCE)
    else:
        textbook = widlar_current((v_cc - v_on) / r_ref, r_e, n, v_t)
        q_1, q_2 = early_terms(textbook)
        # The diode fed through R_REF: R_REF (1 + 1/β1) I_C1 + V_T ln(I_C1/I_S1) = V_CC.
        i_c1 = junction_behind_resistor(v_cc, r_ref * (1 + 1 / b1), v_t, q1["I_S"])
        i_c1_early = junction_behind_resistor(v_cc, r_ref * (1 + 1 / (b1 * q_1)), v_t, q1["I_S"] * q_1)
        c.closed_form("widlar_fixed_vbe", textbook, "Widlar's relation, I_REF = (V_CC - V_BE(on))/R_REF",
                      (BASE_CURRENT_NEGLECTED.key, ALPHA_ONE.key, VBE_FIXED.key, NO_EARLY.key, ISOTHERMAL.key),
                      f"{WIDLAR}; {LAMBERT}")
        first = c.closed_form("first_order_beta", widlar_current(i_c1, r_e, n, v_t, b2),
                              "exponential diode and first order in base current", first_order,
                              f"derived here (Wright ω twice) from {WIDLAR}")
        current, diode_current = positive_or(first), i_c1
        c.closed_form("first_order_beta_early", widlar_current(i_c1_early, r_e, n * q_2 / q_1, v_t, b2 * q_2),
                      "as above with the Early effect", early, EARLY_SOURCE)

    # Q2's base returns through Q1's diode impedance (and R_REF) to an AC ground.
    ss1, ss2 = q1.small_signal, q2.small_signal
    diode = 1 / (ss1["g_m"] + 1 / ss1["r_pi"] + 1 / ss1["r_o"])
    r_base = diode if reference == "ideal" else parallel(diode, r_ref)
    c.extra("r_out_hybrid_pi",
            degenerated_output_resistance(ss2["r_o"], ss2["beta"], ss2["r_pi"], r_e, r_base),
            "R_out, hybrid-π r_o[1 + βR_E/(R_E + r_π + R_B)] + R_E‖(r_π + R_B), R_B = Q1's diode impedance")
    c.extra("r_out_sedra_smith", degenerated_output_resistance(ss2["r_o"], ss2["beta"], ss2["r_pi"], r_e, 0),
            "R_out ≈ r_o[1 + g_m(R_E‖r_π)] + R_E‖r_π (Sedra & Smith, from memory)")
    _start(c, q1, q2, current, diode_current, r_e, height)


def _start(c, q1, q2, current, diode_current, r_e, height):
    """Node voltages from the first-order form: Q1's drop and the drop across R_E.

    Source stepping from 0 V finds no point with Q2's collector beyond its
    emitter rail and leaves a third of a PNP Monte-Carlo run unconverged.
    A saturated Q2 pulls its base towards its collector, and in deep
    saturation its emitter follows too.
    """
    import sympy as sp

    diode_current = sp.Max(diode_current, current / 1000)
    h_b = sp.Min(BJT.start(q1.sense, diode_current, q1.symbols), height + common.SATURATED_VBC_START)
    h_e = sp.Min(current * (1 + 1 / q2["beta"]) * r_e, height + SATURATED_VCE_START)
    if c.sense == "n":
        c.start("b", h_b)
        c.start("e", h_e)
    else:
        c.start("b", c.voltages["cc"] - h_b)
        c.start("e", c.voltages["cc"] - h_e)


def build_ideal(c):
    """The Widlar source fed by an ideal reference current."""
    _build(c, "ideal")


def build_resistor(c):
    """The Widlar source fed through R_REF from the supply."""
    _build(c, "resistor")


# ---------------------------------------------------------------------------
# schematics

def _draw(sheet, d, resistor=None):
    """Q1 (diode, facing left) and Q2 on one base line; R_E under Q2; the reference above Q1.

    The PNP picture is the NPN one mirrored top to bottom.
    """
    import schemdraw.elements as elm

    npn = sheet.sink
    q1 = drawing.transistor(npn, facing_left=True, label="Q1")
    drawing.emitter_return(sheet, q1.emitter, npn)
    elm.Line().at(q1.base).right(drawing.GAP)
    q2 = drawing.transistor(npn, label=f"Q2\nN = {sheet['n_area']:g}").anchor("base")
    drawing.emitter_return(sheet, q2.emitter, npn, resistor="r_e", designator="R_E")
    drawing.output_terminal(q2.collector, npn)
    # Diode connection: Q1's collector strapped to the base line.
    node = drawing.diode_strap(q1.collector, q1.base, npn)
    drawing.reference_feed(sheet, node, npn, resistor=resistor)


def draw_ideal(sheet, d):
    """Schematic with the present values."""
    _draw(sheet, d)


def draw_resistor(sheet, d):
    """Schematic with the present values."""
    _draw(sheet, d, resistor="r_ref")


NOTES = ("The output current depends on the diode Q1 and the output transistor Q2 sharing one "
         "temperature: keep them thermally coupled (a matched pair or an array).",) + common.SAFETY_NOTES

TOPOLOGIES = (
    Topology(
        key="widlar_source",
        order=70,
        title="Widlar current source (ideal reference current)",
        description=("Diode Q1 carries the reference current; Q2 (N times the area) has an "
                     "emitter resistor that takes up the V_BE difference, so the output current "
                     "is a small, roughly PTAT fraction of the reference."),
        values=VALUES_IDEAL,
        build=build_ideal,
        draw=draw_ideal,
        notes=NOTES,
    ),
    Topology(
        key="widlar_resistor_reference",
        order=71,
        title="Widlar current source (reference resistor from the supply)",
        description=("The Widlar source with its diode fed through R_REF from the supply: the "
                     "output current follows the supply through (V_CC - V_BE)/R_REF, softened by "
                     "the logarithm of Widlar's relation."),
        values=VALUES_RESISTOR,
        build=build_resistor,
        draw=draw_resistor,
        notes=NOTES,
    ),
)
