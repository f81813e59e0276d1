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

has the explicit solution ``I_out = (V_T/R_E) W(N I_REF R_E / V_T)``, written
here as ``(V_T/R_E) ω(ln(N I_REF R_E / V_T))`` with the Wright omega
``ω(x) = W(e^x)`` so nothing overflows (Corless et al., Adv. Comput. Math. 5,
1996, from memory).  Finite β, derived here from the two KCL equations::

    V_T ln(N I_C1 / I_C2) = (1 + 1/β2) I_C2 R_E,    I_C1 = β1 (I_REF - I_C2/β2) / (β1 + 1)

First order (Q2's base current dropped from the reference node):
``I_out ≈ [V_T/(R_E (1 + 1/β2))] ω(ln(N I_C1 R_E (1 + 1/β2)/V_T))`` with
``I_C1 = β1 I_REF/(β1 + 1)``.  With the Early effect each β becomes
``β (1 + V_CE/V_A)`` and N becomes ``N (1 + V_CE2/V_A2)/(1 + V_CE1/V_A1)``.

Output resistance (hybrid-π; Sedra & Smith, *Microelectronic Circuits*,
Widlar source, from memory): ``R_out ≈ r_o2 [1 + g_m2 (R_E || r_π2)] +
R_E || r_π2``; the exact form returns Q2's base through Q1's diode
impedance (and R_REF).
"""

from __future__ import annotations

import numpy as np

from kit.topologies import mirrors_common as _common
from kit.topologies.base import Simplification, Topology, ValueSpec

SATURATED_VBC_GUESS = 0.55  # V; forward bias of a saturated output collector junction
SATURATED_VCE_GUESS = 0.05  # V; collector-emitter voltage of a hard-saturated transistor
LABEL_ROOM = 1.8  # drawing units beside the reference for its two-line label

WIDLAR = "Widlar, IEEE Trans. Circuit Theory CT-12 (1965), from memory"
LAMBERT = "Lambert-W solution (Wright ω form) derived here"


def _values(reference):
    from kit.topologies import mirrors_common as common

    head = ((common.i_ref_spec(1.2e-3), common.I_REF_TC) if reference == "ideal" else
            (ValueSpec("r_ref", "Ω", "reference resistor from the supply to the diode Q1", 10e3,
                       1.0, 1e9, "resistor"),))
    return head + (
        ValueSpec("r_e", "Ω", "emitter resistor of the output transistor Q2", 4.7e3, 1e-2, 1e9,
                  "resistor"),
        common.n_area_spec(1.0),
        common.supply_spec(12.0, "supply voltage (emitter rail of a PNP source)"),
        common.load_spec(6.0),
    )


SIMPLIFICATIONS_IDEAL = (
    Simplification("widlar", "Widlar's relation (Lambert W)",
                   ("base_current_neglected", "alpha_one", "no_early", "forward_active"),
                   f"{WIDLAR}; {LAMBERT}"),
    Simplification("first_order_beta", "first order in base current (Lambert W)",
                   ("no_early", "forward_active", "output_base_load_neglected"),
                   f"derived here from {WIDLAR}"),
    Simplification("first_order_beta_early", "first order in base current, Early effect",
                   ("vbe_fixed", "forward_active", "output_base_load_neglected"),
                   "derived here (Early factor 1 + V_CE/V_A on each collector current)"),
)

SIMPLIFICATIONS_RESISTOR = (
    Simplification("widlar_fixed_vbe", "Widlar's relation, I_REF = (V_CC - V_BE(on))/R_REF",
                   ("base_current_neglected", "alpha_one", "vbe_fixed", "no_early"),
                   f"{WIDLAR}; {LAMBERT}"),
    Simplification("first_order_beta", "exponential diode and first order in base current",
                   ("no_early", "forward_active", "output_base_load_neglected"),
                   f"derived here (Wright ω twice) from {WIDLAR}"),
    Simplification("first_order_beta_early", "as above with the Early effect",
                   ("vbe_fixed", "forward_active", "output_base_load_neglected"),
                   "derived here (Early factor 1 + V_CE/V_A on each collector current)"),
)


def widlar_current(i_c1, r_e, n, v_t, beta_2=None):
    """Output current of Widlar's relation for a given diode current (SymPy).

    Solves ``V_T ln(N I_C1 / I) = (1 + 1/β2) I R_E`` for ``I`` with the Wright
    omega; ``beta_2=None`` drops the base current (β2 -> ∞).

    Examples
    --------
    >>> import sympy as sp
    >>> i1, r, n, vt = sp.symbols("I_1 R N V_T", positive=True)
    >>> widlar_current(i1, r, n, vt)
    V_T*wright_omega(log(I_1*N*R/V_T))/R
    """
    import sympy as sp

    from kit.derive import wright_omega_function

    omega = wright_omega_function()
    r_eff = r_e if beta_2 is None else r_e * (1 + 1 / beta_2)
    return v_t / r_eff * omega(sp.log(n * i_c1 * r_eff / v_t))


def diode_current(v_drive, r_series, i_s, v_t):
    """Collector current of a diode-connected transistor fed through ``r_series``.

    ``r_series`` already includes the (1 + 1/β) of the diode's own base
    current: ``K I + V_T ln(I/I_S) = V_drive`` gives
    ``I = (V_T/K) ω(V_drive/V_T + ln(I_S K/V_T))`` (same structure as
    Banwell & Jayakumar, Electron. Lett. 36, 2000).
    """
    import sympy as sp

    from kit.derive import wright_omega_function

    omega = wright_omega_function()
    return v_t / r_series * omega(v_drive / v_t + sp.log(i_s * r_series / v_t))


def _build(polarity, reference):
    from kit.circuit import Circuit, degenerated_output_resistance

    npn = polarity == "npn"
    c = Circuit(polarity)
    c.rail("0", 0)
    c.rail("cc", c.parameter("v_supply"))
    c.rail("out", c.parameter("v_load"))
    c.output("out", 1 if npn else -1)
    c.node("b")
    c.node("e")
    rail = "0" if npn else "cc"
    if reference == "ideal":
        i_ref = c.operating_value(
            "I_REF", c.parameter("i_ref") * (1 + c.parameter("i_ref_tc") * (c.temp - c.t_ref)))
        c.current_source(*(("cc", "b") if npn else ("b", "0")), i_ref)
    else:
        r_ref = c.resistor("R_REF", *(("cc", "b") if npn else ("b", "0")), "r_ref")
    q1 = c.transistor("Q1", polarity, "b", "b", rail)
    q2 = c.transistor("Q2", polarity, "b", "out", "e", area=c.parameter("n_area"))
    r_e = c.resistor("R_E", "e", rail, "r_e")
    v_on = c.operating_value(
        "V_BE_on", c.parameter("v_be_on") + c.parameter("v_be_tc") * (c.temp - c.t_ref))

    v_t = c.v_t
    v_cc = c.voltages["cc"]
    n = q2["I_S"] / q1["I_S"]  # N A_E-ratio times any I_S mismatch
    b1, b2 = q1["beta"], q2["beta"]
    height = c.voltages["out"] - c.voltages[rail] if npn else c.voltages[rail] - c.voltages["out"]

    def early_terms(i_textbook):
        # V_CE1 = V_BE(on); V_CE2 = V_out - I R_E from the textbook current.
        q_1 = 1 + v_on / q1["V_A"]
        q_2 = 1 + (height - i_textbook * r_e) / q2["V_A"]
        return q_1, q_2

    if reference == "ideal":
        textbook = widlar_current(i_ref, r_e, n, v_t)
        q_1, q_2 = early_terms(textbook)
        closed_forms = {
            "widlar": textbook,
            "first_order_beta": widlar_current(b1 * i_ref / (b1 + 1), r_e, n, v_t, b2),
            "first_order_beta_early": widlar_current(
                b1 * q_1 * i_ref / (b1 * q_1 + 1), r_e, n * q_2 / q_1, v_t, b2 * q_2),
        }
    else:
        textbook = widlar_current((v_cc - v_on) / r_ref, r_e, n, v_t)
        q_1, q_2 = early_terms(textbook)
        i_c1 = diode_current(v_cc, r_ref * (1 + 1 / b1), q1["I_S"], v_t)
        i_c1_early = diode_current(v_cc, r_ref * (1 + 1 / (b1 * q_1)), q1["I_S"] * q_1, v_t)
        closed_forms = {
            "widlar_fixed_vbe": textbook,
            "first_order_beta": widlar_current(i_c1, r_e, n, v_t, b2),
            "first_order_beta_early": widlar_current(i_c1_early, r_e, n * q_2 / q_1, v_t, b2 * q_2),
        }

    ss1, ss2 = c.small_signal("Q1"), c.small_signal("Q2")
    diode = 1 / (ss1["g_m"] + 1 / ss1["r_pi"] + 1 / ss1["r_o"])
    r_base = diode if reference == "ideal" else diode * r_ref / (diode + r_ref)
    extras = {
        "r_out_hybrid_pi": degenerated_output_resistance(ss2["r_o"], ss2["beta"], ss2["r_pi"],
                                                         r_e, r_base),
        "r_out_sedra_smith": degenerated_output_resistance(ss2["r_o"], ss2["beta"], ss2["r_pi"],
                                                           r_e, 0),
    }
    return c.equations(extras=extras, closed_forms=closed_forms,
                       hand_parameters=("v_be_on", "v_be_tc"))


def build_ideal(polarity):
    """Exact equations of the Widlar source fed by an ideal reference current."""
    return _build(polarity, "ideal")


def build_resistor(polarity):
    """Exact equations of the Widlar source fed through R_REF from the supply."""
    return _build(polarity, "resistor")


def guess(model, q):
    """Node voltages from the first-order closed form."""
    from scipy.special import wrightomega

    index = model.operating_index

    def op(name):
        return q[index[name]]

    npn = model.polarity == "npn"
    v_t, b1, b2 = op("V_T"), op("beta_Q1"), op("beta_Q2")
    with np.errstate(invalid="ignore", divide="ignore"):  # far outside compliance the forms fail
        current = model.closed_forms(q)["first_order_beta"]
    if "I_REF" in index:
        i_ref = op("I_REF")
        current = np.where(np.isfinite(current) & (current > 0), current, 1e-3 * i_ref)
        i_c1 = b1 * (i_ref - current / b2) / (b1 + 1)
    else:
        k = op("R_REF") * (1 + 1 / b1)
        v_cc = op("V_CC")
        i_c1 = v_t / k * np.real(wrightomega(v_cc / v_t + np.log(op("I_S_Q1") * k / v_t)))
        current = np.where(np.isfinite(current) & (current > 0), current, 1e-3 * i_c1)
    i_c1 = np.maximum(i_c1, 1e-3 * current)
    h_b = op("V_T_Q1") * np.log(i_c1 / op("I_S_Q1"))
    h_e = current * (1 + 1 / b2) * op("R_E")
    rail = 0.0 if npn else op("V_CC")
    h_out = op("V_OUT") - rail if npn else rail - op("V_OUT")
    # A saturated Q2 pulls its base towards its collector, and in deep saturation
    # its emitter follows the collector too.
    h_b = np.minimum(h_b, h_out + SATURATED_VBC_GUESS)
    h_e = np.minimum(h_e, h_out + SATURATED_VCE_GUESS)
    sign = 1.0 if npn else -1.0
    heights = {"V_b": h_b, "V_e": h_e}
    return np.stack([rail + sign * heights[name] for name in model.unknowns])


# ---------------------------------------------------------------------------
# schematic

def _draw(design, d, reference):
    """Q1 (diode, facing left) and Q2 on one base line; R_E under Q2; the reference above Q1.

    The PNP picture is the NPN one mirrored top to bottom.
    """
    import schemdraw.elements as elm

    from kit.topologies import mirrors_common as common

    npn = design.polarity == "npn"
    s = 1.0 if npn else -1.0
    q1 = common.transistor(npn, facing_left=True, label="Q1").at((0.0, 0.0)).anchor("base")
    common.emitter_return(design, d, q1.emitter, npn)
    elm.Line().at(q1.base).right(common.GAP)
    q2 = common.transistor(npn, label=f"Q2\nN = {design.values['n_area']:g}").anchor("base")
    common.emitter_return(design, d, q2.emitter, npn, resistor="r_e", designator="R_E")
    common.output_terminal(q2.collector, npn)
    # Diode connection: Q1's collector strapped to the base line.
    node = (q1.collector[0], q1.collector[1] + s * 0.6)
    elm.Line().at(q1.collector).to(node)
    elm.Dot().at(node)
    elm.Line().at(node).tox(q1.base[0] + 0.8)
    elm.Line().toy(q1.base[1])
    elm.Dot()
    common.reference_feed(design, d, node, npn, resistor="r_ref" if reference != "ideal" else None)
    # schemdraw underestimates text width: leave room for the reference's label.
    elm.Gap().at((node[0], node[1] + s * 1.5)).left(LABEL_ROOM)


def draw_ideal(design, d):
    """Schematic with the present values."""
    _draw(design, d, "ideal")


def draw_resistor(design, d):
    """Schematic with the present values."""
    _draw(design, d, "resistor")


EXTRAS = {
    "r_out_hybrid_pi": ("R_out, hybrid-π r_o[1 + βR_E/(R_E + r_π + R_B)] + R_E‖(r_π + R_B), "
                        "R_B = Q1's diode impedance"),
    "r_out_sedra_smith": "R_out ≈ r_o[1 + g_m(R_E‖r_π)] + R_E‖r_π (Sedra & Smith, from memory)",
}

NOTES = ("The output current depends on the diode Q1 and the output transistor Q2 sharing one "
         "temperature: keep them thermally coupled (a matched pair or an array).",)

TOPOLOGIES = (
    Topology(
        key="widlar_source",
        order=70,
        title="Widlar current source (ideal reference current)",
        description=("Diode Q1 carries the reference current; Q2 (N times the area) has an "
                     "emitter resistor that takes up the V_BE difference, so the output current "
                     "is a small, roughly PTAT fraction of the reference."),
        polarities=("npn", "pnp"),
        transistors=("Q1", "Q2"),
        output_transistor="Q2",
        values=_values("ideal"),
        simplifications=SIMPLIFICATIONS_IDEAL,
        build=build_ideal,
        guess=guess,
        draw=draw_ideal,
        limits=_common.reference_headroom('b'),
        extras=EXTRAS,
        notes=NOTES,
        budget_labels={"I_REF": "reference current I_REF"},
    ),
    Topology(
        key="widlar_resistor_reference",
        order=71,
        title="Widlar current source (reference resistor from the supply)",
        description=("The Widlar source with its diode fed through R_REF from the supply: the "
                     "output current follows the supply through (V_CC - V_BE)/R_REF, softened by "
                     "the logarithm of Widlar's relation."),
        polarities=("npn", "pnp"),
        transistors=("Q1", "Q2"),
        output_transistor="Q2",
        values=_values("resistor"),
        simplifications=SIMPLIFICATIONS_RESISTOR,
        build=build_resistor,
        guess=guess,
        draw=draw_resistor,
        extras=EXTRAS,
        notes=NOTES,
    ),
)
