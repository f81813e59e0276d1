"""Wilson current mirrors: the three-transistor mirror and the improved four-transistor one.

NPN sink (PNP source: the mirror image, emitters at V_CC and I_REF drawn
from the input node to 0 V)::

    I_REF --> x ----+-------- Q3 base             load -> out = Q3 collector
                    |                             Q3 emitter = y
         (4-T: Q4 diode x -> w)
                    |
              Q1 collector (x, or w)   Q1 base = y   Q1 emitter = 0
              Q2 diode-connected: base = collector = y, emitter = 0

Q3 feeds its emitter current into the diode Q2; Q1 copies it and takes it
away from Q3's base — a local negative-feedback loop that cancels the base
current error to second order.  The improved form adds the diode Q4 so that
Q1 sits at V_CE ≈ V_BE like Q2, which removes the Early-effect mismatch
(V_CE1 ≈ 2 V_BE in the three-transistor form).  Unknowns: V_x, V_y (and
V_w); the load voltage is imposed at Q3's collector.

Closed forms (each transistor its own β; ``a = I_S1/I_S2`` so that
``I_C1 = a I_C2`` at V_A → ∞; derived here, and reducing for matched parts to
the ratio of Wilson, IEEE J. Solid-State Circuits SC-3, 1968, as given in
Gray, Hurst, Lewis & Meyer, *Analysis and Design of Analog Integrated
Circuits*, ch. 4, from memory)::

    I_REF / I_out = a (β3 + 1) / (β3 (1 + 1/β2 + a/β1)) + 1/β3
    matched:  I_out / I_REF = β(β+2)/(β² + 2β + 2) = 1 - 2/(β² + 2β + 2)

The same expression holds for the four-transistor form (Q4's gain drops
out: its emitter current is Q1's collector current).  With the Early effect,
every β becomes ``β (1 + V_CE/V_A)`` and ``a`` becomes ``a (1 + V_CE1/V_A1) /
(1 + V_CE2/V_A2)`` (base currents carry no Early factor in this model), with
the V_CE estimated from V_BE(on).

Output resistance: about ``β r_o3 / 2`` (Gray et al., ch. 4, from memory);
the exact hybrid-π expression of this network is derived here by nodal
analysis (:func:`hybrid_pi_output_resistance`).
"""

from __future__ import annotations

import numpy as np

from kit.topologies import mirrors_common as _common
from kit.topologies.base import Simplification, Topology

SATURATED_VBC_GUESS = 0.55  # V; forward bias of a saturated output collector junction
LABEL_ROOM = 1.8  # drawing units left of the reference source for its two-line label

NOTES = (
    "The mirror closes a local feedback loop through Q3 and Q1: with a capacitive load it "
    "can ring or oscillate; check the step response, and add a small capacitor across "
    "Q1's collector–base (or an emitter resistor in Q3) if it does.",
    "The reference current I_REF is ideal here; its own compliance needs about 2 V_BE "
    "plus its headroom below the supply.",
)


def _values(default_i_ref, default_supply, default_load):
    from kit.topologies import mirrors_common as common

    return (common.i_ref_spec(default_i_ref), common.I_REF_TC,
            common.supply_spec(default_supply, "supply voltage feeding the reference current "
                                               "(emitter rail of a PNP mirror)"),
            common.load_spec(default_load))


WILSON_SOURCE = ("Wilson, IEEE J. Solid-State Circuits SC-3 (1968); Gray, Hurst, Lewis & Meyer, "
                 "ch. 4 (from memory); per-transistor form derived here")

SIMPLIFICATIONS = (
    Simplification("ideal", "ideal mirror, I_out = I_REF",
                   ("base_current_neglected", "alpha_one", "no_early"),
                   "hand analysis, common practice"),
    Simplification("finite_beta", "finite β (Wilson ratio, per-transistor β)",
                   ("no_early", "forward_active"), WILSON_SOURCE),
    Simplification("finite_beta_early", "finite β and Early effect, V_CE from V_BE(on)",
                   ("vbe_fixed", "forward_active"),
                   "derived here (Early factor 1 + V_CE/V_A on each collector current)"),
)


def wilson_ratio(beta_1, beta_2, beta_3, a=1):
    """Output-to-reference ratio of a Wilson mirror (no Early effect).

    Parameters
    ----------
    beta_1, beta_2, beta_3 : float or sympy expression
        Current gains I_C/I_B of Q1 (copying), Q2 (diode) and Q3 (output).
    a : float or sympy expression
        ``I_C1 / I_C2`` at equal V_BE (the saturation-current ratio).

    Examples
    --------
    >>> round(wilson_ratio(100, 100, 100), 8)  # 1 - 2/(β² + 2β + 2)
    0.99980396
    """
    return 1 / (a * (beta_3 + 1) / (beta_3 * (1 + 1 / beta_2 + a / beta_1)) + 1 / beta_3)


def hybrid_pi_output_resistance(nodes, output, resistors=(), transistors=()):
    """Exact hybrid-π output resistance of a linear network, by nodal analysis (SymPy).

    Every node not in ``nodes`` and not ``output`` is an AC ground (a rail,
    an ideal voltage); ideal current sources are open circuits and are left
    out.  Each transistor is ``(base, collector, emitter, g_m, r_pi, r_o)``
    with ``i_b = v_be/r_pi`` and ``i_c = g_m v_be + v_ce/r_o`` — the same
    form for NPN and PNP.

    Parameters
    ----------
    nodes : sequence of str
        Nodes whose small-signal voltage floats.
    output : str
        The node driven by the test voltage.
    resistors : iterable of (str, str, expression)
    transistors : iterable of (str, str, str, expression, expression, expression)

    Returns
    -------
    sympy.Expr
        ``v_test / i_test``, the resistance seen into ``output``.

    Examples
    --------
    >>> import sympy as sp
    >>> gm, rpi, ro = sp.symbols("g_m r_pi r_o", positive=True)
    >>> sp.simplify(hybrid_pi_output_resistance([], "c", transistors=[("g", "c", "g", gm, rpi, ro)]))
    r_o
    """
    import sympy as sp

    index = {n: k for k, n in enumerate(nodes)}
    conductance = sp.zeros(len(nodes), len(nodes))
    drive = sp.zeros(len(nodes), 1)  # currents forced into the floating nodes by v_test = 1
    test_current = []  # (floating node or None, coefficient) of the current leaving the output

    def stamp(a, b, c, d, g):
        """A current g (v_c - v_d) leaving node a and entering node b."""
        for node, sign in ((a, 1), (b, -1)):
            for ctrl, csign in ((c, 1), (d, -1)):
                value = sign * csign * g
                if node in index and ctrl in index:
                    conductance[index[node], index[ctrl]] += value
                elif node in index and ctrl == output:
                    drive[index[node]] -= value
                elif node == output and (ctrl in index or ctrl == output):
                    test_current.append((ctrl if ctrl in index else None, value))

    for a, b, r in resistors:
        stamp(a, b, a, b, 1 / r)
    for base, collector, emitter, g_m, r_pi, r_o in transistors:
        stamp(base, emitter, base, emitter, 1 / r_pi)
        stamp(collector, emitter, base, emitter, g_m)
        stamp(collector, emitter, collector, emitter, 1 / r_o)
    voltages = conductance.LUsolve(drive) if nodes else []
    current = sum((value * (1 if ctrl is None else voltages[index[ctrl]])
                   for ctrl, value in test_current), sp.Integer(0))
    return 1 / current


def hybrid_pi_symbols(name):
    """Placeholder symbols ``g_m``, ``r_pi``, ``r_o`` of transistor ``name`` (SymPy)."""
    import sympy as sp

    return {k: sp.Symbol(f"{k}_{name}", positive=True) for k in ("g_m", "r_pi", "r_o")}


def output_resistance_formula(four):
    """Exact hybrid-π R_out of the (improved) Wilson mirror in placeholder symbols.

    Returns ``(expression, {transistor: {"g_m", "r_pi", "r_o"} -> symbol})``;
    the emitter rail and the output are the AC grounds, the ideal reference
    current is an open circuit.

    Examples
    --------
    >>> import sympy as sp
    >>> expr, sym = output_resistance_formula(four=False)
    >>> sorted(str(s) for s in expr.free_symbols)[:3]
    ['g_m_Q1', 'g_m_Q2', 'g_m_Q3']
    """
    names = ("Q1", "Q2", "Q3") + (("Q4",) if four else ())
    symbols = {n: hybrid_pi_symbols(n) for n in names}
    placement = {"Q1": ("y", "w" if four else "x", "rail"), "Q2": ("y", "y", "rail"),
                 "Q3": ("x", "out", "y"), "Q4": ("x", "x", "w")}
    network = [placement[n] + (symbols[n]["g_m"], symbols[n]["r_pi"], symbols[n]["r_o"])
               for n in names]
    floating = ["x", "y"] + (["w"] if four else [])
    return hybrid_pi_output_resistance(floating, "out", transistors=network), symbols


def _build(polarity, four):
    from kit.circuit import Circuit

    npn = polarity == "npn"
    c = Circuit(polarity)
    c.rail("0", 0)
    c.rail("cc", c.parameter("v_supply"))
    c.rail("out", c.parameter("v_load"))
    c.output("out", 1 if npn else -1)
    for node in ("x", "y") + (("w",) if four else ()):
        c.node(node)
    rail = "0" if npn else "cc"
    i_ref = c.operating_value(
        "I_REF", c.parameter("i_ref") * (1 + c.parameter("i_ref_tc") * (c.temp - c.t_ref)))
    if npn:
        c.current_source("cc", "x", i_ref)
    else:
        c.current_source("x", "0", i_ref)
    q1 = c.transistor("Q1", polarity, "y", "w" if four else "x", rail)
    q2 = c.transistor("Q2", polarity, "y", "y", rail)
    q3 = c.transistor("Q3", polarity, "x", "out", "y")
    if four:
        c.transistor("Q4", polarity, "x", "x", "w")
    v_on = c.operating_value(
        "V_BE_on", c.parameter("v_be_on") + c.parameter("v_be_tc") * (c.temp - c.t_ref))

    a = q1["I_S"] / q2["I_S"]
    # Height of the output above the emitter rail (forward sense for either polarity).
    height = c.voltages["out"] - c.voltages[rail] if npn else c.voltages[rail] - c.voltages["out"]
    early_1 = 1 + (1 if four else 2) * v_on / q1["V_A"]  # V_CE1 = V_BE (4-T) or 2 V_BE (3-T)
    early_2 = 1 + v_on / q2["V_A"]
    early_3 = 1 + (height - v_on) / q3["V_A"]
    closed_forms = {
        "ideal": i_ref,
        "finite_beta": i_ref * wilson_ratio(q1["beta"], q2["beta"], q3["beta"], a),
        "finite_beta_early": i_ref * wilson_ratio(q1["beta"] * early_1, q2["beta"] * early_2,
                                                  q3["beta"] * early_3, a * early_1 / early_2),
    }

    names = ("Q1", "Q2", "Q3") + (("Q4",) if four else ())
    formula, placeholders = output_resistance_formula(four)
    at_point = {}
    for name in names:
        ss = c.small_signal(name)
        at_point.update({placeholders[name][k]: ss[k] for k in ("g_m", "r_pi", "r_o")})
    q3_point = c.small_signal("Q3")
    extras = {
        "r_out_hybrid_pi": formula.xreplace(at_point),
        "r_out_beta_ro_half": q3_point["beta"] * q3_point["r_o"] / 2,
    }
    return c.equations(extras=extras, closed_forms=closed_forms,
                       hand_parameters=("v_be_on", "v_be_tc"))


def build_wilson(polarity):
    """Exact equations of the three-transistor Wilson mirror."""
    return _build(polarity, four=False)


def build_improved(polarity):
    """Exact equations of the improved (four-transistor) Wilson mirror."""
    return _build(polarity, four=True)


def guess(model, q):
    """Node voltages from the finite-β closed form (exact for V_A -> inf)."""
    index = model.operating_index

    def op(name):
        return q[index[name]]

    npn = model.polarity == "npn"
    with np.errstate(invalid="ignore", divide="ignore"):  # far outside compliance the forms fail
        current = model.closed_forms(q)["finite_beta"]
    current = np.where(np.isfinite(current) & (current > 0), current, op("I_REF"))
    b1, b2, b3 = op("beta_Q1"), op("beta_Q2"), op("beta_Q3")
    a = op("I_S_Q1") / op("I_S_Q2")
    i_c2 = current * (b3 + 1) / b3 / (1 + 1 / b2 + a / b1)
    h_y = op("V_T_Q2") * np.log(i_c2 / op("I_S_Q2"))
    h_x = h_y + op("V_T_Q3") * np.log(current / op("I_S_Q3"))
    rail = 0.0 if npn else op("V_CC")
    h_out = op("V_OUT") - rail if npn else rail - op("V_OUT")
    # A saturated Q3 clamps the input node a junction drop beyond its collector;
    # once the output falls below node y, Q3 drags y down with it.
    h_x = np.minimum(h_x, h_out + SATURATED_VBC_GUESS)
    h_y = np.minimum(h_y, np.minimum(h_x - 0.3, h_out))
    heights = {"V_x": h_x, "V_y": h_y}
    if "V_w" in model.unknowns:
        i_c4 = a * i_c2 * op("beta_Q4") / (op("beta_Q4") + 1)
        heights["V_w"] = h_x - op("V_T_Q4") * np.log(i_c4 / op("I_S_Q4"))
    sign = 1.0 if npn else -1.0
    return np.stack([rail + sign * heights[name] for name in model.unknowns])


# ---------------------------------------------------------------------------
# schematic

def _draw(design, d, four):
    """Q1 (facing left) and diode Q2 on one base line, Q3 above Q2, I_REF above Q1.

    The PNP picture is the NPN one mirrored top to bottom (``s`` = -1).
    """
    import schemdraw.elements as elm

    from kit.topologies import mirrors_common as common

    npn = design.polarity == "npn"
    s = 1.0 if npn else -1.0
    q1 = common.transistor(npn, facing_left=True, label="Q1").at((0.0, 0.0)).anchor("base")
    common.emitter_return(design, d, q1.emitter, npn)
    elm.Line().at(q1.base).right(common.GAP)
    q2 = common.transistor(npn, label="Q2").anchor("base")
    common.emitter_return(design, d, q2.emitter, npn)
    # Q2 diode: collector strapped to the base line; this is node y.
    y_node = (q2.collector[0], q2.collector[1] + s * 0.5)
    elm.Line().at(q2.collector).to(y_node)
    strap = (q2.base[0] - 0.6, y_node[1])
    elm.Line().at(y_node).to(strap)
    elm.Line().at(strap).toy(q2.base[1])
    elm.Dot().at((strap[0], q2.base[1]))
    elm.Dot().at(y_node)
    # Q3 above node y; its emitter comes down to y.
    q3 = common.transistor(npn, label="Q3").anchor("emitter").at(
        (y_node[0], y_node[1] + s * 1.4))
    elm.Line().at(q3.emitter).to(y_node)
    common.output_terminal(q3.collector, npn)
    top = q1.collector
    if four:
        # Q4 diode between Q1's collector (w) and the input node x, strapped on its left.
        q4 = common.transistor(npn, label="Q4").anchor("emitter").at(
            (q1.collector[0], q1.collector[1] + s * 0.5))
        elm.Line().at(q1.collector).to(q4.emitter)
        top = (q4.collector[0], q3.base[1])
        elm.Line().at(q4.collector).to(top)
        knee = (q4.base[0] - 0.4, q4.base[1])
        elm.Line().at(q4.base).to(knee)
        elm.Line().at(knee).toy(top[1] - s * 0.3)
        elm.Line().tox(top[0])
        elm.Dot().at((top[0], top[1] - s * 0.3))
    else:
        top = (q1.collector[0], q3.base[1])
        elm.Line().at(q1.collector).to(top)
    elm.Dot().at(top)
    elm.Line().at(top).to(q3.base)
    common.reference_feed(design, d, top, npn)
    # schemdraw underestimates text width: leave room for the I_REF label.
    elm.Gap().at((top[0], top[1] + s * 1.5)).left(LABEL_ROOM)


def draw_wilson(design, d):
    """Schematic of the three-transistor mirror with the present values."""
    _draw(design, d, four=False)


def draw_improved(design, d):
    """Schematic of the four-transistor mirror with the present values."""
    _draw(design, d, four=True)


EXTRAS = {
    "r_out_hybrid_pi": "R_out, exact hybrid-π nodal analysis of the mirror (derived here)",
    "r_out_beta_ro_half": "R_out ≈ β r_o3 / 2 (Gray et al., ch. 4, from memory)",
}

BUDGET_LABELS = {"I_REF": "reference current I_REF"}

TOPOLOGIES = (
    Topology(
        key="wilson_mirror",
        order=60,
        title="Wilson current mirror (three transistors)",
        description=("Diode Q2 and copying transistor Q1 under output transistor Q3, whose base is "
                     "the input node: local feedback makes the base-current error second order "
                     "in 1/β and raises R_out to about β r_o/2. Ideal reference current."),
        polarities=("npn", "pnp"),
        transistors=("Q1", "Q2", "Q3"),
        output_transistor="Q3",
        values=_values(750e-6, 15.0, 7.5),
        simplifications=SIMPLIFICATIONS,
        build=build_wilson,
        guess=guess,
        draw=draw_wilson,
        extras=EXTRAS,
        notes=NOTES,
        limits=_common.reference_headroom('x'),
        budget_labels=BUDGET_LABELS,
    ),
    Topology(
        key="improved_wilson_mirror",
        order=65,
        title="Improved Wilson current mirror (four transistors)",
        description=("The Wilson mirror with diode Q4 in Q1's collector, so that Q1 and Q2 both "
                     "sit at V_CE ≈ V_BE: the Early-effect mismatch of the three-transistor form "
                     "goes away. Ideal reference current."),
        polarities=("npn", "pnp"),
        transistors=("Q1", "Q2", "Q3", "Q4"),
        output_transistor="Q3",
        values=_values(2e-3, 12.0, 5.0),
        simplifications=SIMPLIFICATIONS,
        build=build_improved,
        guess=guess,
        draw=draw_improved,
        extras=EXTRAS,
        notes=NOTES,
        limits=_common.reference_headroom('x'),
        budget_labels=BUDGET_LABELS,
    ),
)
