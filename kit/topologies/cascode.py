"""Cascodes: the four-transistor cascode mirror and the cascoded single-transistor source.

Cascode mirror, NPN sink (PNP source: the mirror image)::

    I_REF --> n3 = Q3 base = Q3 collector (diode)        Q4 base = n3
              Q3 emitter = n1 = Q1 base = Q1 collector   Q4 emitter = n4, collector = out
              Q1 diode, emitter 0;  Q2 base = n1, collector = n4, emitter 0

Q3 and Q4 hold Q2's collector near V_BE, so Q2 copies Q1 at equal V_CE and
Q4 shields it from the load.  Unknowns V_n1, V_n3, V_n4.

Cascoded source, NPN sink::

    V_CC --R1--+-- b1 (Q1 base)    Q1 emitter e1 --R_E-- 0    Q1 collector = m
    0    --R2--+
    Q2 base b2 from its own divider R3 (V_CC) / R4 (0 V), or from a bias voltage
    V_BIAS through R_B2;  Q2 emitter = m, collector = out

The lower stage is the divider-biased degenerated source; Q2 passes its
collector current on, less Q2's base current.  Unknowns V_b1, V_e1, V_m, V_b2.

Closed forms (V_A -> ∞, each transistor its own β, ``a = I_S2/I_S1``; derived
here by KCL at the three nodes)::

    cascode mirror: I_out/I_REF = a β4/(β4+1) / (1 + 1/β1 + a/β2 + a/(β4+1))
                    matched: β²/(β² + 4β + 2) ≈ 1 - 4/β
    cascoded source: I_out = β2/(β2+1) · I_C1, with I_C1 of the lower stage
                     (Wright ω form, as for the divider-biased source)

With the Early effect every β becomes ``β (1 + V_CE/V_A)`` (and ``a`` becomes
``a (1 + V_CE2/V_A2)/(1 + V_CE1/V_A1)``), V_CE estimated from V_BE(on).

Output resistance: cascode mirror about ``β r_o4/2`` (Gray, Hurst, Lewis &
Meyer, ch. 4, from memory; base-current feedback through Q1/Q2 halves the
``β r_o`` of a plain cascode), exact hybrid-π form by nodal analysis here;
cascoded source ``r_o2 [1 + β R_x/(R_x + r_π2 + R_B2)] + R_x || (r_π2 + R_B2)``
with ``R_x`` the lower stage's own output resistance (the emitter-degenerated
result of Sedra & Smith and the UC Berkeley EE105 notes, applied twice).
"""

from __future__ import annotations

import numpy as np

from kit.topologies import mirrors_common as _common
from kit.topologies.base import Simplification, Topology, ValueSpec

SATURATED_VBC_GUESS = 0.55  # V; forward bias of a saturated collector junction
SATURATED_VCE_GUESS = 0.05  # V; collector-emitter voltage of a hard-saturated transistor
LABEL_ROOM = 1.8  # drawing units beside the reference source for its two-line label

# ---------------------------------------------------------------------------
# shared small-signal pieces (kept in this module: the derivation cache is keyed
# by the source of the module that builds the equations)


def cascode_mirror_output_resistance():
    """Exact hybrid-π R_out of the cascode mirror in placeholder symbols (nodal analysis).

    Returns ``(expression, {transistor: {"g_m", "r_pi", "r_o"} -> symbol})``.
    Node voltages n1, n3, n4 float; the emitter rail is AC ground, the ideal
    reference current an open circuit, and a test voltage drives the output.

    Examples
    --------
    >>> expr, sym = cascode_mirror_output_resistance()
    >>> sorted(sym)
    ['Q1', 'Q2', 'Q3', 'Q4']
    """
    import sympy as sp

    names = ("Q1", "Q2", "Q3", "Q4")
    sym = {n: {k: sp.Symbol(f"{k}_{n}", positive=True) for k in ("g_m", "r_pi", "r_o")}
           for n in names}
    placement = {"Q1": ("n1", "n1", "0"), "Q2": ("n1", "n4", "0"), "Q3": ("n3", "n3", "n1"),
                 "Q4": ("n3", "out", "n4")}
    nodes = ["n1", "n3", "n4"]
    index = {n: k for k, n in enumerate(nodes)}
    g = sp.zeros(3, 3)
    rhs = sp.zeros(3, 1)
    into_out = []  # (coefficient, node or None): current leaving "out" into the devices

    def add(a, b, c, d, value):
        # current value * (v_c - v_d) leaves node a and enters node b
        for node, sign in ((a, 1), (b, -1)):
            for ctrl, csign in ((c, 1), (d, -1)):
                term = sign * csign * value
                if ctrl == "0":
                    continue
                if node in index:
                    if ctrl in index:
                        g[index[node], index[ctrl]] += term
                    else:  # ctrl is the output, held at v_test = 1
                        rhs[index[node]] -= term
                elif node == "out":
                    into_out.append((term, ctrl))

    for n in names:
        base, collector, emitter = placement[n]
        s = sym[n]
        add(base, emitter, base, emitter, 1 / s["r_pi"])
        add(collector, emitter, base, emitter, s["g_m"])
        add(collector, emitter, collector, emitter, 1 / s["r_o"])
    v = g.LUsolve(rhs)
    current = sum((term * (1 if ctrl == "out" else v[index[ctrl]]) for term, ctrl in into_out),
                  sp.Integer(0))
    return 1 / current, sym


def cascode_mirror_ratio(beta_1, beta_2, beta_4, a=1):
    """I_out/I_REF of the cascode mirror (no Early effect); Q3's gain drops out.

    Examples
    --------
    >>> b = 100.0
    >>> abs(cascode_mirror_ratio(b, b, b) - b**2 / (b**2 + 4*b + 2)) < 1e-15
    True
    """
    return a * beta_4 / (beta_4 + 1) / (1 + 1 / beta_1 + a / beta_2 + a / (beta_4 + 1))


def _rails(c, npn):
    c.rail("0", 0)
    c.rail("cc", c.parameter("v_supply"))
    c.rail("out", c.parameter("v_load"))
    c.output("out", 1 if npn else -1)
    return "0" if npn else "cc"


def _height(c, rail, npn):
    """The output's distance from the emitter rail, in the forward sense."""
    return c.voltages["out"] - c.voltages[rail] if npn else c.voltages[rail] - c.voltages["out"]


def _v_be_on(c):
    return c.operating_value(
        "V_BE_on", c.parameter("v_be_on") + c.parameter("v_be_tc") * (c.temp - c.t_ref))


# ---------------------------------------------------------------------------
# cascode mirror

def build_mirror(polarity):
    """Exact equations of the cascode mirror."""
    from kit.circuit import Circuit

    npn = polarity == "npn"
    c = Circuit(polarity)
    rail = _rails(c, npn)
    for node in ("n1", "n3", "n4"):
        c.node(node)
    i_ref = c.operating_value(
        "I_REF", c.parameter("i_ref") * (1 + c.parameter("i_ref_tc") * (c.temp - c.t_ref)))
    c.current_source(*(("cc", "n3") if npn else ("n3", "0")), i_ref)
    q1 = c.transistor("Q1", polarity, "n1", "n1", rail)
    q2 = c.transistor("Q2", polarity, "n1", "n4", rail)
    c.transistor("Q3", polarity, "n3", "n3", "n1")
    q4 = c.transistor("Q4", polarity, "n3", "out", "n4")
    v_on = _v_be_on(c)

    a = q2["I_S"] / q1["I_S"]
    early_1 = 1 + v_on / q1["V_A"]  # V_CE1 = V_BE (diode)
    early_2 = 1 + v_on / q2["V_A"]  # V_CE2 = V_BE1 + V_BE3 - V_BE4 ≈ V_BE
    early_4 = 1 + (_height(c, rail, npn) - v_on) / q4["V_A"]
    closed_forms = {
        "ideal": i_ref,
        "finite_beta": i_ref * cascode_mirror_ratio(q1["beta"], q2["beta"], q4["beta"], a),
        "finite_beta_early": i_ref * cascode_mirror_ratio(
            q1["beta"] * early_1, q2["beta"] * early_2, q4["beta"] * early_4,
            a * early_2 / early_1),
    }
    formula, placeholders = cascode_mirror_output_resistance()
    at_point = {}
    for name in placeholders:
        point = c.small_signal(name)
        at_point.update({placeholders[name][k]: point[k] for k in ("g_m", "r_pi", "r_o")})
    q4_point = c.small_signal("Q4")
    extras = {
        "r_out_hybrid_pi": formula.xreplace(at_point),
        "r_out_beta_ro_half": q4_point["beta"] * q4_point["r_o"] / 2,
    }
    return c.equations(extras=extras, closed_forms=closed_forms,
                       hand_parameters=("v_be_on", "v_be_tc"))


def _op(model, q):
    index = model.operating_index
    return lambda name: q[index[name]]


def _emitter_rail(model, op):
    npn = model.polarity == "npn"
    rail = 0.0 if npn else op("V_CC")
    h_out = op("V_OUT") - rail if npn else rail - op("V_OUT")
    return rail, h_out, (1.0 if npn else -1.0)


def guess_mirror(model, q):
    """Node voltages from the finite-β closed form (exact for V_A -> inf)."""
    op = _op(model, q)
    rail, h_out, sign = _emitter_rail(model, op)
    with np.errstate(invalid="ignore", divide="ignore"):  # far outside compliance the forms fail
        current = model.closed_forms(q)["finite_beta"]
    current = np.where(np.isfinite(current) & (current > 0), current, op("I_REF"))
    b1, b2, b3, b4 = (op(f"beta_Q{k}") for k in range(1, 5))
    i_c2 = current * (b4 + 1) / b4
    i_c1 = i_c2 * op("I_S_Q1") / op("I_S_Q2")
    i_c3 = (i_c1 * (1 + 1 / b1) + i_c2 / b2) * b3 / (b3 + 1)
    h_1 = op("V_T_Q1") * np.log(i_c1 / op("I_S_Q1"))
    h_3 = h_1 + op("V_T_Q3") * np.log(i_c3 / op("I_S_Q3"))
    # A saturated Q4 pulls the top of the stack towards its collector.
    h_3 = np.minimum(h_3, h_out + SATURATED_VBC_GUESS)
    h_1 = np.minimum(h_1, h_3 - 0.3)
    h_4 = h_3 - op("V_T_Q4") * np.log(current / op("I_S_Q4"))
    h_4 = np.minimum(h_4, np.minimum(h_3 - 0.3, h_out + SATURATED_VCE_GUESS))
    heights = {"V_n1": h_1, "V_n3": h_3, "V_n4": h_4}
    return np.stack([rail + sign * heights[name] for name in model.unknowns])


# ---------------------------------------------------------------------------
# cascoded single-transistor source

def _build_source(polarity, bias):
    import sympy as sp

    from kit.circuit import Circuit, degenerated_output_resistance
    from kit.derive import wright_omega_function

    npn = polarity == "npn"
    c = Circuit(polarity)
    rail = _rails(c, npn)
    for node in ("b1", "e1", "m", "b2"):
        c.node(node)
    r1 = c.resistor("R1", "cc", "b1", "r1")
    r2 = c.resistor("R2", "b1", "0", "r2")
    r_e = c.resistor("R_E", "e1", rail, "r_e")
    if bias == "divider":
        r3 = c.resistor("R3", "cc", "b2", "r3")
        r4 = c.resistor("R4", "b2", "0", "r4")
        drive_2 = c.voltages["cc"] * (r4 if npn else r3) / (r3 + r4)
        r_b2 = r3 * r4 / (r3 + r4)
    else:
        v_bias = c.parameter("v_bias")
        c.rail("bias", v_bias if npn else c.parameter("v_supply") - v_bias)
        r_b2 = c.resistor("R_B2", "bias", "b2", "r_b2")
        drive_2 = (c.voltages["bias"] - c.voltages[rail]) * (1 if npn else -1)
    q1 = c.transistor("Q1", polarity, "b1", "m", "e1")
    q2 = c.transistor("Q2", polarity, "b2", "out", "m")
    v_on = _v_be_on(c)

    v_cc = c.voltages["cc"]
    drive_1 = v_cc * (r2 if npn else r1) / (r1 + r2)
    r_th = r1 * r2 / (r1 + r2)
    b1, b2, v_t1 = q1["beta"], q2["beta"], q1["V_T"]
    omega = wright_omega_function()

    def lower_stage(beta, i_s):
        k = (r_th + (beta + 1) * r_e) / beta
        return v_t1 / k * omega(drive_1 / v_t1 + sp.log(i_s * k / v_t1))

    exponential = b2 / (b2 + 1) * lower_stage(b1, q1["I_S"])
    # Early factors with V_CE from V_BE(on): V_CE1 = V_B2 - V_BE2 - I R_E, V_CE2 = V_out - V_M.
    v_m = drive_2 - r_b2 * exponential / b2 - v_on
    early_1 = 1 + (v_m - exponential * r_e) / q1["V_A"]
    early_2 = 1 + (_height(c, rail, npn) - v_m) / q2["V_A"]
    b2_early = b2 * early_2
    closed_forms = {
        "stiff_divider": (drive_1 - v_on) / r_e,
        "fixed_vbe": b2 / (b2 + 1) * b1 * (drive_1 - v_on) / (r_th + (b1 + 1) * r_e),
        "exponential": exponential,
        "exponential_early": b2_early / (b2_early + 1)
        * lower_stage(b1 * early_1, q1["I_S"] * early_1),
    }

    ss1, ss2 = c.small_signal("Q1"), c.small_signal("Q2")
    r_x = degenerated_output_resistance(ss1["r_o"], ss1["beta"], ss1["r_pi"], r_e, r_th)
    extras = {
        "r_out_cascode": degenerated_output_resistance(ss2["r_o"], ss2["beta"], ss2["r_pi"], r_x,
                                                       r_b2),
        "r_out_ceiling": (ss2["beta"] + 1) * ss2["r_o"] + ss2["r_pi"] + r_b2,
        "r_out_lower_stage": r_x,
    }
    return c.equations(extras=extras, closed_forms=closed_forms,
                       hand_parameters=("v_be_on", "v_be_tc"))


def build_source_divider(polarity):
    """Exact equations of the cascoded source with the cascode base on its own divider."""
    return _build_source(polarity, "divider")


def build_source_bias(polarity):
    """Exact equations of the cascoded source with the cascode base on a bias voltage."""
    return _build_source(polarity, "fixed")


def guess_source(model, q):
    """Node voltages from the exponential closed form (exact for V_A -> inf)."""
    op = _op(model, q)
    rail, h_out, sign = _emitter_rail(model, op)
    npn = model.polarity == "npn"
    b1, b2 = op("beta_Q1"), op("beta_Q2")
    with np.errstate(invalid="ignore", divide="ignore"):  # far outside compliance the forms fail
        current = model.closed_forms(q)["exponential"]
    current = np.where(np.isfinite(current) & (current > 0), current, 1e-9)
    i_c1 = current * (b2 + 1) / b2
    h_e1 = i_c1 * (b1 + 1) / b1 * op("R_E")
    h_b1 = h_e1 + op("V_T_Q1") * np.log(i_c1 / op("I_S_Q1"))
    if "R3" in model.operating_index:
        r3, r4, v_cc = op("R3"), op("R4"), op("V_CC")
        drive, r_b = v_cc * (r4 if npn else r3) / (r3 + r4), r3 * r4 / (r3 + r4)
    else:
        drive, r_b = sign * (op("V_BIAS") - rail), op("R_B2")
    h_b2 = drive - r_b * current / b2
    # Saturation of either transistor: each base stays near the collector it is
    # pulled by, each emitter near its collector once saturation is deep.
    h_b2 = np.minimum(h_b2, h_out + SATURATED_VBC_GUESS)
    h_m = h_b2 - op("V_T_Q2") * np.log(current / op("I_S_Q2"))
    h_m = np.minimum(h_m, h_out + SATURATED_VCE_GUESS)
    h_b1 = np.minimum(h_b1, h_m + SATURATED_VBC_GUESS)
    h_e1 = np.minimum(h_e1, h_m + SATURATED_VCE_GUESS)
    heights = {"V_b1": h_b1, "V_e1": h_e1, "V_m": h_m, "V_b2": h_b2}
    return np.stack([rail + sign * heights[name] for name in model.unknowns])


# ---------------------------------------------------------------------------
# schematics

def draw_mirror(design, d):
    """Schematic of the cascode mirror with the present values."""
    import schemdraw.elements as elm

    from kit.topologies import mirrors_common as common

    npn = design.polarity == "npn"
    s = 1.0 if npn else -1.0
    q1 = common.transistor(npn, facing_left=True, label="Q1").at((0.0, 0.0)).anchor("base")
    common.emitter_return(design, d, q1.emitter, npn)
    elm.Line().at(q1.base).right(common.GAP)
    q2 = common.transistor(npn, label="Q2").anchor("base")
    common.emitter_return(design, d, q2.emitter, npn)
    # Q1 diode: collector strapped to the lower base line (node n1).
    n1 = (q1.collector[0], q1.collector[1] + s * 0.5)
    elm.Line().at(q1.collector).to(n1)
    elm.Line().at(n1).tox(q1.base[0] + 0.5)
    elm.Line().toy(q1.base[1])
    elm.Dot().at((q1.base[0] + 0.5, q1.base[1]))
    q3 = common.transistor(npn, facing_left=True, label="Q3").anchor("emitter").at(
        (n1[0], n1[1] + s * 0.4))
    elm.Line().at(n1).to(q3.emitter)
    elm.Dot().at(n1)
    elm.Line().at(q3.base).right(common.GAP)
    q4 = common.transistor(npn, label="Q4").anchor("base")
    elm.Line().at(q2.collector).to(q4.emitter)
    common.output_terminal(q4.collector, npn)
    n3 = (q3.collector[0], q3.collector[1] + s * 0.5)
    elm.Line().at(q3.collector).to(n3)
    elm.Line().at(n3).tox(q3.base[0] + 0.5)
    elm.Line().toy(q3.base[1])
    elm.Dot().at((q3.base[0] + 0.5, q3.base[1]))
    elm.Dot().at(n3)
    common.reference_feed(design, d, n3, npn)
    elm.Gap().at((n3[0], n3[1] + s * 1.5)).left(LABEL_ROOM)


def _draw_source(design, d, bias):
    """Q1 over R_E with its divider on the left; cascode Q2 above, its bias on the right.

    The PNP picture is the NPN one mirrored top to bottom.
    """
    import schemdraw.elements as elm

    from kit.quantities import format_quantity
    from kit.schematic import value_label
    from kit.topologies import mirrors_common as common

    npn = design.polarity == "npn"
    s = 1.0 if npn else -1.0
    up, down = common.toward_top(npn), common.toward_emitters(npn)

    def far_rail():
        if npn:
            elm.Vdd().label(common.supply_text(design))
        else:
            elm.Ground()

    def near_rail():
        if npn:
            elm.Ground()
        else:
            elm.Vdd().label(common.supply_text(design))

    q1 = common.transistor(npn, label="Q1").at((0.0, 0.0)).anchor("base")
    common.emitter_return(design, d, q1.emitter, npn, resistor="r_e", designator="R_E")
    # Lower divider on the left: R1 always runs to V_CC, R2 to 0 V.
    elm.Line().at(q1.base).left(1.2)
    b1 = (q1.base[0] - 1.2, q1.base[1])
    elm.Dot().at(b1)
    getattr(elm.Resistor().at(b1), up)().label(value_label(design, "r1" if npn else "r2"), loc="top")
    far_rail()
    getattr(elm.Resistor().at(b1), down)().label(value_label(design, "r2" if npn else "r1"),
                                                   loc="top")
    near_rail()
    # Cascode Q2 (base on the right) on Q1's collector.
    q2 = common.transistor(npn, facing_left=True, label="Q2").anchor("emitter").at(
        (q1.collector[0], q1.collector[1] + s * 0.8))
    elm.Line().at(q1.collector).to(q2.emitter)
    common.output_terminal(q2.collector, npn, side="left")
    elm.Line().at(q2.base).right(1.2)
    b2 = (q2.base[0] + 1.2, q2.base[1])
    if bias == "divider":
        elm.Dot().at(b2)
        getattr(elm.Resistor().at(b2), up)().label(value_label(design, "r3" if npn else "r4"),
                                                   loc="bottom")
        far_rail()
        getattr(elm.Resistor().at(b2), down)().label(value_label(design, "r4" if npn else "r3"),
                                                     loc="bottom")
        near_rail()
    else:
        elm.Resistor().at(b2).right().label(value_label(design, "r_b2", "R_B2"), loc="top")
        where = "above 0 V" if npn else "below V_CC"
        text = f"V_B2\n{format_quantity(design.values['v_bias'], 'V')}\n{where}"
        source = elm.SourceV().label(text, loc="bottom")
        getattr(source.reverse() if npn else source, down)()  # + towards the higher rail
        near_rail()
    # schemdraw underestimates text width: leave room on the right for the labels.
    elm.Gap().at((b2[0] + 2.5, b2[1])).right(LABEL_ROOM + 1.2)


def draw_source_divider(design, d):
    """Schematic of the cascoded source (cascode base on a divider) with the present values."""
    _draw_source(design, d, "divider")


def draw_source_bias(design, d):
    """Schematic of the cascoded source (cascode base on a bias voltage) with the present values."""
    _draw_source(design, d, "fixed")


# ---------------------------------------------------------------------------
# registry entries

def _mirror_values():
    from kit.topologies import mirrors_common as common

    return (common.i_ref_spec(400e-6), common.I_REF_TC,
            common.supply_spec(9.0, "supply voltage feeding the reference current "
                                    "(emitter rail of a PNP mirror)"),
            common.load_spec(4.0))


def _source_values(bias):
    head = (
        ValueSpec("r1", "Ω", "lower divider resistor from the supply to Q1's base", 100e3, 1e-2,
                  1e9, "resistor"),
        ValueSpec("r2", "Ω", "lower divider resistor from Q1's base to 0 V", 10e3, 1e-2, 1e9,
                  "resistor"),
        ValueSpec("r_e", "Ω", "emitter resistor of Q1", 1.5e3, 1e-2, 1e9, "resistor"),
    )
    if bias == "divider":
        cascode = (
            ValueSpec("r3", "Ω", "cascode divider resistor from the supply to Q2's base", 47e3,
                      1e-2, 1e9, "resistor"),
            ValueSpec("r4", "Ω", "cascode divider resistor from Q2's base to 0 V", 9.1e3, 1e-2,
                      1e9, "resistor"),
        )
    else:
        cascode = (
            ValueSpec("v_bias", "V", "cascode bias voltage V_B2: above 0 V (NPN) or below the "
                                     "supply (PNP)", 3.9, 0.0, 1000.0),
            ValueSpec("r_b2", "Ω", "source resistance of the cascode bias", 1e3, 1e-2, 1e9,
                      "resistor"),
        )
    return head + cascode + (
        ValueSpec("v_supply", "V", "supply voltage", 24.0, 1.0, 1000.0, "supply"),
        ValueSpec("v_load", "V", "output (load) voltage against 0 V", 12.0, -1000.0, 1000.0,
                  "load"),
    )


MIRROR_SIMPLIFICATIONS = (
    Simplification("ideal", "ideal mirror, I_out = I_REF",
                   ("base_current_neglected", "alpha_one", "no_early"),
                   "hand analysis, common practice"),
    Simplification("finite_beta", "finite β, β²/(β² + 4β + 2) for matched parts",
                   ("no_early", "forward_active"),
                   "derived here (per-transistor β); ≈ 1 - 4/β as in Gray, Hurst, Lewis & Meyer, "
                   "ch. 4 (from memory)"),
    Simplification("finite_beta_early", "finite β and Early effect, V_CE from V_BE(on)",
                   ("vbe_fixed", "forward_active"),
                   "derived here (Early factor 1 + V_CE/V_A on each collector current)"),
)

SOURCE_SIMPLIFICATIONS = (
    Simplification("stiff_divider", "stiff divider, fixed V_BE, α = 1",
                   ("base_current_neglected", "alpha_one", "vbe_fixed", "no_early"),
                   "hand analysis, common practice"),
    Simplification("fixed_vbe", "fixed V_BE with base currents, × α of the cascode",
                   ("vbe_fixed", "no_early"),
                   "Sedra & Smith, Microelectronic Circuits, BJT biasing (from memory); "
                   "cascode α derived here"),
    Simplification("exponential", "exponential junction (Wright ω form) × α of the cascode",
                   ("no_early", "forward_active"),
                   "derived here; cf. Banwell & Jayakumar, Electron. Lett. 36 (2000)"),
    Simplification("exponential_early", "as above with the Early effect, V_CE from V_BE(on)",
                   ("vbe_fixed", "forward_active"),
                   "derived here (Early factor 1 + V_CE/V_A on each collector current)"),
)

NOTES_MIRROR = (
    "The input needs about 2 V_BE plus the reference's own headroom, and the output "
    "stays in compliance only above about V_BE + V_CE(sat).",
    "Q1–Q2 and Q3–Q4 should be matched pairs at one temperature.",
)

NOTES_SOURCE = (
    "The cascode base must sit at least V_CE(sat) + V_BE above Q1's emitter, or Q1 "
    "saturates; V_BE rises when cold, so leave margin over the temperature range.",
    "A base stopper (tens to hundreds of Ω) in series with Q2's base helps against "
    "parasitic oscillation with capacitive loads or long leads.",
)

TOPOLOGIES = (
    Topology(
        key="cascode_mirror",
        order=80,
        title="Cascode current mirror (four transistors)",
        description=("Diode stacks Q1/Q3 and the mirror Q2 with cascode Q4: Q2 copies Q1 at equal "
                     "V_CE and Q4 shields it from the load, raising R_out to about β r_o/2. "
                     "Ideal reference current."),
        polarities=("npn", "pnp"),
        transistors=("Q1", "Q2", "Q3", "Q4"),
        output_transistor="Q4",
        values=_mirror_values(),
        simplifications=MIRROR_SIMPLIFICATIONS,
        build=build_mirror,
        guess=guess_mirror,
        draw=draw_mirror,
        extras={
            "r_out_hybrid_pi": "R_out, exact hybrid-π nodal analysis of the mirror (derived here)",
            "r_out_beta_ro_half": "R_out ≈ β r_o4 / 2 (Gray et al., ch. 4, from memory)",
        },
        notes=NOTES_MIRROR,
        limits=_common.reference_headroom('n3'),
        budget_labels={"I_REF": "reference current I_REF"},
    ),
    Topology(
        key="cascoded_source",
        order=85,
        title="Cascoded divider-biased source (cascode base on its own divider)",
        description=("A divider-biased, emitter-degenerated transistor Q1 under a cascode Q2 whose "
                     "base sits on a second divider: Q1 works at a fixed V_CE and R_out rises "
                     "towards β r_o2."),
        polarities=("npn", "pnp"),
        transistors=("Q1", "Q2"),
        output_transistor="Q2",
        values=_source_values("divider"),
        simplifications=SOURCE_SIMPLIFICATIONS,
        build=build_source_divider,
        guess=guess_source,
        draw=draw_source_divider,
        extras={
            "r_out_cascode": ("R_out = r_o2[1 + βR_x/(R_x + r_π2 + R_B2)] + R_x‖(r_π2 + R_B2), "
                              "R_x = lower stage, R_B2 = R3‖R4"),
            "r_out_ceiling": "R_x → ∞ ceiling (β+1) r_o2 + r_π2 + R_B2",
            "r_out_lower_stage": "R_x, the lower stage alone (what the cascode multiplies)",
        },
        notes=NOTES_SOURCE,
    ),
    Topology(
        key="cascoded_source_fixed_bias",
        order=86,
        title="Cascoded divider-biased source (cascode base on a bias voltage)",
        description=("The cascoded source with Q2's base held by a bias voltage V_B2 through its "
                     "source resistance R_B2 (a zener, a reference or a shared bias line)."),
        polarities=("npn", "pnp"),
        transistors=("Q1", "Q2"),
        output_transistor="Q2",
        values=_source_values("fixed"),
        simplifications=SOURCE_SIMPLIFICATIONS,
        build=build_source_bias,
        guess=guess_source,
        draw=draw_source_bias,
        extras={
            "r_out_cascode": ("R_out = r_o2[1 + βR_x/(R_x + r_π2 + R_B2)] + R_x‖(r_π2 + R_B2), "
                              "R_x = lower stage"),
            "r_out_ceiling": "R_x → ∞ ceiling (β+1) r_o2 + r_π2 + R_B2",
            "r_out_lower_stage": "R_x, the lower stage alone (what the cascode multiplies)",
        },
        notes=NOTES_SOURCE,
    ),
)
