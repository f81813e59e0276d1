"""Basic two-transistor current mirrors (NPN sink, PNP source).

Three registered topologies share one circuit::

    basic_mirror          ideal reference current I_REF into the input node
    basic_mirror_rref     reference set by R_REF from the supply
    multi_output_mirror   ideal I_REF, plus n_extra further outputs at V_X

NPN sink (the PNP source is its mirror image, emitters at V_CC)::

    I_REF (or R_REF from V_CC) -> node b
    Q1: base = collector = b, emitter = 0            (diode-connected input)
    Q2: base = b, collector = out, emitter = 0       (area N, the output)
    Q3: base = b, collector = x (V_X), emitter = 0   (area N; one of n_extra)

Unknown: V_b.  KCL at b, exact: ``I_REF = I_C1 + I_B1 + I_B2 (+ n_extra I_B3)``.
Every extra output is identical, so ``Q3`` stands for one of them and the
other ``n_extra - 1`` add its base current once more each.

Closed forms (``m = I_S2/I_S1``, equal to N for matched parts;
``a = 1 + 1/beta_1 + m/beta_2 (+ n_extra m_3/beta_3)``):

* ideal mirror ``I_out = m I_REF``;
* finite beta ``I_out = m I_REF / a``, which for matched parts is the
  published ``N I_REF / (1 + (1+N)/beta)`` (Gray, Hurst, Lewis & Meyer,
  *Analysis and Design of Analog Integrated Circuits*, ch. 4; Sedra & Smith,
  *Microelectronic Circuits*, current-mirror section; from memory) and, with
  n_extra outputs, ``N I_REF / (1 + (1 + N + n_extra N)/beta)``;
* with the Early law ``I_C = I_S e^{V_BE/V_T} (1 + V_CE/V_A)`` the ratio is
  exactly ``m (1 + V_CE2/V_A2) / (a + V_B/V_A1)`` given the input voltage
  ``V_B`` (derived here).  With an ideal reference the closed form takes ``V_B``
  from the no-Early solution plus one fixed-point step (error of order
  ``(V_T/V_A)^2``); with R_REF it solves the reference loop again with
  ``a + V_B/V_A1`` (error of order ``(V_T/V_A)(V_B/V_A)``);
* resistor reference: ``I_REF R_REF + V_T ln(I_REF/(a I_S1)) = V_CC``, so
  ``I_REF = (V_T/R_REF) omega(V_CC/V_T + ln(a I_S1 R_REF/V_T))`` and
  ``I_out = m I_REF/a`` (derived here; the structure of Banwell & Jayakumar,
  Electron. Lett. 36, 2000); the hand form ``I_REF = (V_CC - V_BE(on))/R_REF``.

All ratios assume Q1 and Q2 at one junction temperature ("isothermal"):
each junction keeps its own V_T in the exact equations, and a warmer Q2
raises the output by several per cent per kelvin.

Output resistance: Q2's base current does not depend on its collector
voltage in this model, so ``R_out = r_o2 = (V_A2 + V_CE2)/I_C2`` exactly in
the hybrid-pi model.
Examples
--------
>>> import kit
>>> ev = kit.evaluate(kit.design("basic_mirror", "npn", i_ref="100 uA", n_area=2))
>>> 1.9 < ev.i_out / 100e-6 < 2.2, ev.compliance.low.transistor
(True, 'Q2')
"""

from __future__ import annotations

from kit.topologies import mirrors_common as common
from kit.topologies.base import Simplification, Topology, ValueSpec

# ---------------------------------------------------------------------------
# values: scenarios of our own (a 0.7 mA bias from a 0.35 mA reference, ...)

VALUES_IDEAL = (
    common.i_ref_spec(350e-6),
    common.I_REF_TC,
    common.n_area_spec(2.0),
    common.supply_spec(9.0),
    common.load_spec(4.5),
)

VALUES_RREF = (
    ValueSpec("r_ref", "Ω", "reference resistor from the supply to the input node", 22e3, 1.0, 1e9,
              "resistor"),
    common.n_area_spec(1.0),
    common.supply_spec(12.0, "supply voltage feeding R_REF (and the emitter rail of a PNP mirror)"),
    common.load_spec(6.0),
)

N_EXTRA_RANGE = (1, 64)
VALUES_MULTI = (
    common.i_ref_spec(200e-6),
    common.I_REF_TC,
    common.n_area_spec(1.0),
    ValueSpec("n_extra", "", "number of further identical outputs (whole number)", 3,
              *N_EXTRA_RANGE),
    ValueSpec("v_extra", "V", "collector voltage of the further outputs against 0 V", 5.0,
              -1000.0, 1000.0),
    common.supply_spec(12.0),
    common.load_spec(6.0),
)

GRAY_SEDRA = ("Gray, Hurst, Lewis & Meyer, Analysis and Design of Analog ICs, ch. 4; "
              "Sedra & Smith, Microelectronic Circuits, current mirrors (from memory)")
DERIVED_EARLY = "derived here (Early law I_C = I_S e^(V_BE/V_T)(1 + V_CE/V_A))"

SIMPLIFICATIONS_IDEAL = (
    Simplification("area_ratio", "ideal mirror, I_out = N·I_REF",
                   ("base_current_neglected", "no_early", "forward_active", "isothermal"), GRAY_SEDRA),
    Simplification("finite_beta", "finite β, N·I_REF/(1 + (1+N)/β)",
                   ("no_early", "forward_active", "isothermal"), GRAY_SEDRA),
    Simplification("early_aware", "finite β and Early effect (V_B from the no-Early solution)",
                   ("forward_active", "isothermal"), DERIVED_EARLY),
)

SIMPLIFICATIONS_RREF = (
    Simplification("stiff_hand", "hand analysis, N·(V_CC − V_BE(on))/R_REF",
                   ("base_current_neglected", "vbe_fixed", "no_early", "isothermal"),
                   "hand analysis, common practice"),
    Simplification("fixed_vbe", "fixed V_BE with finite β",
                   ("vbe_fixed", "no_early", "isothermal"), GRAY_SEDRA),
    Simplification("exponential", "exponential junction, finite β (Wright ω form)",
                   ("no_early", "forward_active", "isothermal"),
                   "derived here; cf. Banwell & Jayakumar, Electron. Lett. 36 (2000)"),
    Simplification("early_aware", "ω form with Early effect (V_B from the no-Early solution)",
                   ("forward_active", "isothermal"), DERIVED_EARLY),
)

SIMPLIFICATIONS_MULTI = (
    Simplification("area_ratio", "ideal mirror, I_out = N·I_REF",
                   ("base_current_neglected", "no_early", "forward_active", "isothermal"), GRAY_SEDRA),
    Simplification("finite_beta", "finite β, N·I_REF/(1 + (1 + N + n_extra·N)/β)",
                   ("no_early", "forward_active", "isothermal"),
                   "Sedra & Smith, Microelectronic Circuits, mirror with several outputs "
                   "(from memory)"),
    Simplification("early_aware", "finite β and Early effect (V_B from the no-Early solution)",
                   ("forward_active", "isothermal"), DERIVED_EARLY),
)

EXTRAS = {"r_out_ro2": "R_out = r_o2 = (V_A2 + V_CE2)/I_C2 (exact in the hybrid-π model)"}


# ---------------------------------------------------------------------------
# exact equations

def _mirror(polarity, reference, extra_outputs=False):
    """Circuit of the basic mirror; returns (circuit, dict of symbols for closed forms)."""
    from kit.circuit import Circuit

    npn = polarity == "npn"
    c = Circuit(polarity)
    c.rail("0", 0)
    c.rail("cc", c.parameter("v_supply"))
    c.rail("out", c.parameter("v_load"))
    c.output("out", 1 if npn else -1)
    c.node("b")
    emitter_rail = "0" if npn else "cc"
    far_rail = "cc" if npn else "0"
    s = {}
    if reference == "current":
        s["I_REF"] = c.operating_value(
            "I_REF", c.parameter("i_ref") * (1 + c.parameter("i_ref_tc") * (c.temp - c.t_ref)))
        # NPN: into the input node from the supply side; PNP: out of it to 0 V.
        c.current_source(*((far_rail, "b") if npn else ("b", far_rail)), s["I_REF"])
    else:
        s["R_REF"] = c.resistor("R_REF", far_rail, "b", "r_ref")
    area = c.parameter("n_area")
    s["Q1"] = c.transistor("Q1", polarity, "b", "b", emitter_rail)
    s["Q2"] = c.transistor("Q2", polarity, "b", "out", emitter_rail, area=area)
    if extra_outputs:
        c.rail("x", c.parameter("v_extra"))
        s["K"] = c.operating_value("K", c.parameter("n_extra"))
        s["Q3"] = c.transistor("Q3", polarity, "b", "x", emitter_rail, area=area)
        # The other n_extra - 1 identical outputs draw Q3's base current again each.
        base_current = (s["K"] - 1) * c.transistors["Q3"]["i_b"]
        c.current_source(*(("b", "0") if npn else ("0", "b")), base_current)
    v_out, v_cc = c.voltages["out"], c.voltages["cc"]
    s["v_ce2"] = v_out if npn else v_cc - v_out
    s["V_CC"] = v_cc
    return c, s


def _gain_terms(s):
    """``m = I_S2/I_S1`` and the base-loading factor ``a`` (V_A -> inf)."""
    q1, q2 = s["Q1"], s["Q2"]
    m = q2["I_S"] / q1["I_S"]
    a = 1 + 1 / q1["beta"] + m / q2["beta"]
    if "Q3" in s:
        a += s["K"] * (s["Q3"]["I_S"] / q1["I_S"]) / s["Q3"]["beta"]
    return m, a


def _extras(c, s):
    j = c.transistors["Q2"]
    return {"r_out_ro2": (s["Q2"]["V_A"] + j["v_ce"]) / j["i_c"]}


def _ideal_closed_forms(s):
    import sympy as sp

    m, a = _gain_terms(s)
    i_ref, q1, q2 = s["I_REF"], s["Q1"], s["Q2"]
    # Input voltage: the no-Early value, then one fixed-point step of
    # I_REF = I_S1 e^(V_B/V_T) (a + V_B/V_A1).
    v_b = q1["V_T"] * sp.log(i_ref / (a * q1["I_S"]))
    v_b = q1["V_T"] * sp.log(i_ref / ((a + v_b / q1["V_A"]) * q1["I_S"]))
    return {
        "area_ratio": m * i_ref,
        "finite_beta": m * i_ref / a,
        "early_aware": m * i_ref * (1 + s["v_ce2"] / q2["V_A"]) / (a + v_b / q1["V_A"]),
    }


def build_ideal(polarity):
    """Exact equations of the mirror fed by an ideal reference current."""
    c, s = _mirror(polarity, "current")
    return c.equations(extras=_extras(c, s), closed_forms=_ideal_closed_forms(s))


def build_multi(polarity):
    """Exact equations of the mirror with ``n_extra`` further outputs."""
    c, s = _mirror(polarity, "current", extra_outputs=True)
    return c.equations(extras=_extras(c, s), closed_forms=_ideal_closed_forms(s))


def build_rref(polarity):
    """Exact equations of the mirror fed through R_REF from the supply."""
    import sympy as sp

    from kit.derive import wright_omega_function

    c, s = _mirror(polarity, "resistor")
    v_on = c.operating_value(
        "V_BE_on", c.parameter("v_be_on") + c.parameter("v_be_tc") * (c.temp - c.t_ref))
    m, a = _gain_terms(s)
    omega = wright_omega_function()
    r_ref, v_cc, q1, q2 = s["R_REF"], s["V_CC"], s["Q1"], s["Q2"]
    v_t = q1["V_T"]  # the reference loop runs through Q1's junction

    def reference_current(gain):
        # I R_REF + V_T ln(I/(gain I_S1)) = V_CC, solved with the Wright omega function
        return v_t / r_ref * omega(v_cc / v_t + sp.log(gain * q1["I_S"] * r_ref / v_t))

    i_ref = reference_current(a)
    # Early: the input transistor carries (a + V_B/V_A1) I_S1 e^(V_B/V_T); take V_B
    # from the no-Early solution and solve the reference loop again with it.
    # (the no-Early input voltage V_T ln(I_REF/(a I_S1)) is V_CC - I_REF R_REF exactly)
    a_early = a + (v_cc - i_ref * r_ref) / q1["V_A"]
    i_ref_early = reference_current(a_early)
    closed_forms = {
        "stiff_hand": m * (v_cc - v_on) / r_ref,
        "fixed_vbe": m * (v_cc - v_on) / (r_ref * a),
        "exponential": m * i_ref / a,
        "early_aware": m * i_ref_early * (1 + s["v_ce2"] / q2["V_A"]) / a_early,
    }
    return c.equations(extras=_extras(c, s), closed_forms=closed_forms,
                       hand_parameters=("v_be_on", "v_be_tc"))


# ---------------------------------------------------------------------------
# starting points

def _input_current(model, q, key):
    """Q1's collector current from a closed form of I_out (I_C1 = I_out I_S1/I_S2)."""
    i_out = model.closed_forms(q)[key]
    i_s1, i_s2 = common.operating(model, q, "I_S_Q1", "I_S_Q2")
    return common.positive_current(i_out * i_s1 / i_s2)


def _guess_from(key):
    def guess(model, q):
        """Input node from the finite-beta closed form, kept near the output collector."""
        i_s1, v_t = common.operating(model, q, "I_S_Q1", "V_T_Q1")
        if "K" in model.operating_index:
            (count,) = common.operating(model, q, "K")
            common.require_whole_count(count, "n_extra", *N_EXTRA_RANGE)
        i_c1 = _input_current(model, q, key)
        drop = common.junction_drop(i_c1, i_s1, v_t)
        v_b = common.clamp_to_output(model, q, common.from_emitter_rail(model, q, drop), i_c1)
        return common.stack_unknowns(model, {"V_b": v_b})
    return guess


# ---------------------------------------------------------------------------
# schematics

def _draw(design, d, *, resistor=None, extra=False):
    """Q1 (input, facing left) and Q2 (output) side by side on one base line.

    Further outputs (``extra``) sit left of Q1, fed from the strapped input
    node, so that no wire passes through a transistor symbol.
    """
    import schemdraw.elements as elm

    from kit.quantities import format_quantity

    npn = design.polarity == "npn"
    up = common.toward_top(npn)
    n_text = f"N = {design.values['n_area']:g}"
    q1 = common.transistor(npn, facing_left=True, label="Q1")
    common.emitter_return(design, d, q1.emitter, npn)
    elm.Line().at(q1.base).right(common.GAP)
    q2 = common.transistor(npn, label=f"Q2\n{n_text}").anchor("base")
    common.emitter_return(design, d, q2.emitter, npn)
    common.output_terminal(q2.collector, npn)
    # Diode connection: Q1's collector strapped to the shared base line.
    node = getattr(elm.Line().at(q1.collector), up)(common.LEAD * 0.6).end
    elm.Dot()
    elm.Line().at(node).tox(q1.base[0] + 0.8)
    elm.Line().toy(q1.base[1])
    elm.Dot()
    common.reference_feed(design, d, node, npn, resistor=resistor)
    if extra:
        elm.Line().at(node).left(common.GAP)
        q3 = common.transistor(npn, facing_left=True, label=f"Q3\n{n_text}").anchor("base")
        common.emitter_return(design, d, q3.emitter, npn)
        count = int(design.values["n_extra"])
        common.output_terminal(q3.collector, npn,
                               f"{count} output{'s' if count > 1 else ''} like Q3\n"
                               f"at V_X {format_quantity(design.values['v_extra'], 'V')}",
                               side="left")


def draw_ideal(design, d):
    """Schematic with the present values (see :mod:`kit.schematic`)."""
    _draw(design, d)


def draw_rref(design, d):
    """Schematic with the present values (see :mod:`kit.schematic`)."""
    _draw(design, d, resistor="r_ref")


def draw_multi(design, d):
    """Schematic with the present values (see :mod:`kit.schematic`)."""
    _draw(design, d, extra=True)


# ---------------------------------------------------------------------------
# registry entries

NOTES = (
    "The output current follows the output voltage through Q2's Early effect "
    "(R_out = r_o2); best match where V_CE2 ≈ V_BE.",
    "Discrete parts: unselected transistors differ by several mV in V_BE; "
    "use a matched (monolithic) pair or emitter degeneration.",
    "Thermal coupling: keep Q1 and Q2 at one temperature; a 1 K difference moves "
    "the ratio by about 8 % when undegenerated.",
    "Check Q2's dissipation at the highest load voltage against its package rating.",
) + common.SAFETY_NOTES

TOPOLOGIES = (
    Topology(
        key="basic_mirror",
        order=30,
        title="Basic current mirror",
        description=("Diode-connected input transistor Q1 fed by an ideal reference current; "
                     "output transistor Q2 of N times the emitter area. NPN sinks, PNP sources."),
        polarities=("npn", "pnp"),
        transistors=("Q1", "Q2"),
        output_transistor="Q2",
        values=VALUES_IDEAL,
        simplifications=SIMPLIFICATIONS_IDEAL,
        build=build_ideal,
        guess=_guess_from("finite_beta"),
        draw=draw_ideal,
        limits=common.reference_headroom("b"),
        extras=EXTRAS,
        hand_parameters=(),
        notes=NOTES,
        budget_labels={"I_REF": "reference current I_REF"},
    ),
    Topology(
        key="basic_mirror_rref",
        order=31,
        title="Basic current mirror with reference resistor",
        description=("Basic mirror whose reference current is set by R_REF from the supply "
                     "into the diode-connected Q1; Q2 of N times the area. NPN sinks, PNP sources."),
        polarities=("npn", "pnp"),
        transistors=("Q1", "Q2"),
        output_transistor="Q2",
        values=VALUES_RREF,
        simplifications=SIMPLIFICATIONS_RREF,
        build=build_rref,
        guess=_guess_from("exponential"),
        draw=draw_rref,
        extras=EXTRAS,
        notes=NOTES + ("The output follows the supply almost one to one "
                       "(S_VCC ≈ V_CC/(V_CC − V_BE)); regulate the supply or use a reference.",),
    ),
    Topology(
        key="multi_output_mirror",
        order=32,
        title="Current mirror with several outputs",
        description=("Basic mirror with the output Q2 and n_extra further identical outputs "
                     "(collectors at V_X) whose base currents all load the input node."),
        polarities=("npn", "pnp"),
        transistors=("Q1", "Q2", "Q3"),
        output_transistor="Q2",
        values=VALUES_MULTI,
        simplifications=SIMPLIFICATIONS_MULTI,
        build=build_multi,
        guess=_guess_from("finite_beta"),
        draw=draw_multi,
        limits=common.reference_headroom("b"),
        extras=EXTRAS,
        hand_parameters=(),
        notes=NOTES + (
            "Q3 stands for one of the n_extra further outputs; its dissipation is per transistor.",
            "Every further output adds N/β to the base loading: with many outputs use a "
            "β-helper mirror.",
        ),
        budget_labels={"I_REF": "reference current I_REF"},
    ),
)

__all__ = ["TOPOLOGIES", "build_ideal", "build_rref", "build_multi"]
