"""Op-amp + pass-transistor feedback source with a sense resistor.

Two registered topologies share one loop::

    opamp_bjt_source   BJT pass device (NPN sink / PNP source), base stopper R_B
    opamp_mos_source   MOSFET pass device (NMOS sink / PMOS source)

Sink (NPN / NMOS)::

    V_SET -> op-amp + input;  - input = sense node S;  R_S: S -> 0
    op-amp output o --R_B--> base (BJT)   or   o -> gate (MOSFET)
    emitter/source = S;  collector/drain = out (the load, at V_load)

Source (PNP / PMOS): R_S from V_CC to S, the + input at ``V_CC - V_SET``,
collector/drain into the load to 0 V.  ``V_SET`` is the voltage the loop
puts across R_S in both cases.

Op-amp model (DC): output ``V_o = A (V_+ - V_- + V_OS)``, offset referred to
the + input, bias current ``I_b`` flowing *into* the - input (out of S), no
output resistance.  The output swing ``V_OL <= V_o <= V_OH`` is not part of
the law: it is a compliance limit of part ``U1``, so the report names the
op-amp when the loop runs out of drive.  ``V_o`` is an unknown whose
residual is the gain law (:meth:`kit.circuit.Circuit.driven_node`).

Closed forms (``P`` the + input, ``A`` the gain; sink shown, the source
swaps signs as written in :func:`_closed_forms`):

* ideal op-amp, ``alpha = 1``: ``I_out = V_SET/R_S``;
* fixed V_BE with finite gain, offset, bias current and base current
  (derived here from the loop equations
  ``V_S = [A(V_SET + V_OS) - V_BE - I_B R_B]/(1 + A)``,
  ``I_out = alpha (V_S/R_S + I_b)``, with ``I_B = I_E/(beta+1)`` solved)::

      I_E = [A(V_SET + V_OS) + (1+A) R_S I_b - V_BE(on)] / K,
      K   = (1+A) R_S + R_B/(beta+1),     I_out = alpha I_E

* exponential junction (no Early effect): ``K I_E + V_T ln(alpha I_E/I_S) =
  A(V_SET + V_OS) + (1+A) R_S I_b``, so ``I_E = (V_T/K) omega(C/V_T + ln(K/V_T))``
  with ``C = A(V_SET+V_OS) + (1+A) R_S I_b - V_T ln(alpha/I_S)`` (derived
  here; the Wright omega form of Banwell & Jayakumar, Electron. Lett. 36, 2000);
* MOSFET, square law without channel-length modulation: with
  ``B = (1+A) R_S`` and ``C = A(V_SET+V_OS) + B I_b - V_th``,
  ``I_out = (C/B)(r - 1)/(r + 1)``, ``r = sqrt(1 + 2 K B C)`` (derived here
  from ``I = (K/2) y^2`` with the overdrive ``y = C - B I``).

Small-signal output resistance (hybrid-pi; op-amp + input at AC ground;
derived here by nodal analysis, and re-derived in the tests)::

    BJT:     R_out = {r_o[(A+1)(beta+1)R_S + r_pi + R_B] + R_S (r_pi + R_B)}
                     / [(A+1)R_S + r_pi + R_B]   ->  (beta+1) r_o  as A -> inf
    MOSFET:  R_out = r_o + R_S + (A+1) g_m r_o R_S

A BJT pass device's R_out levels off near ``(beta+1) r_o`` however large the
gain: the loop holds the emitter current, and the base current's share of
it still follows the collector voltage.  A MOSFET has no gate current, so
its R_out grows in proportion to A.
"""

from __future__ import annotations

import numpy as np

from kit.devices import mosfet
from kit.topologies.base import Simplification, Topology, ValueSpec

# ---------------------------------------------------------------------------
# values: scenarios of our own (a 1 mA excitation sink, a 10 mA LED driver)


def _loop_values(*, r_s, v_set, v_oh, v_ol, v_supply, v_load):
    """Value specs every op-amp source shares (defaults of the scenario)."""
    return (
        ValueSpec("r_s", "Ω", "sense resistor (emitter/source to 0 V; supply to it for a source)",
                  r_s, 1e-3, 1e9, "resistor"),
        ValueSpec("v_set", "V", "set voltage across R_S (op-amp + input above 0 V for a sink, "
                  "below the supply for a source)", v_set, 1e-4, 1000.0),
        ValueSpec("v_set_tc", "1/K", "temperature coefficient of the set voltage", 0.0, -1e-3, 1e-3),
        ValueSpec("a_ol", "", "op-amp open-loop DC gain", 1e5, 1.0, 1e12),
        ValueSpec("v_os", "V", "op-amp input offset voltage, referred to the + input", 0.5e-3,
                  -0.1, 0.1),
        ValueSpec("v_os_tc", "V/K", "op-amp offset drift", 0.0, -1e-4, 1e-4),
        ValueSpec("i_bias", "A", "op-amp input bias current into the − input", 20e-9, -1e-3, 1e-3),
        ValueSpec("v_oh", "V", "highest op-amp output voltage (output swing)", v_oh, -1000.0, 1000.0),
        ValueSpec("v_ol", "V", "lowest op-amp output voltage (output swing)", v_ol, -1000.0, 1000.0),
        ValueSpec("v_supply", "V", "supply voltage (R_S returns to it for a source)", v_supply,
                  0.1, 1000.0, "supply"),
        ValueSpec("v_load", "V", "collector/drain (load) voltage against 0 V", v_load,
                  -1000.0, 1000.0, "load"),
    )


# A 1 mA sensor-excitation sink (or source) on a 12 V rail.
VALUES_BJT = _loop_values(r_s=1e3, v_set=1.0, v_oh=11.0, v_ol=0.2, v_supply=12.0, v_load=6.0)
VALUES_BJT = VALUES_BJT[:1] + (
    ValueSpec("r_b", "Ω", "base stopper from the op-amp output to the base", 220.0, 1e-2, 1e7,
              "resistor"),
) + VALUES_BJT[1:]
# A 10 mA LED-string driver on a 24 V rail.
VALUES_MOS = _loop_values(r_s=50.0, v_set=0.5, v_oh=22.5, v_ol=0.2, v_supply=24.0, v_load=15.0)

DERIVED_LOOP = "derived here from the loop equations (op-amp gain law, KCL at the sense node)"
COMMON_PRACTICE = "hand analysis, common practice (Sedra & Smith, op-amp circuits; from memory)"

SIMPLIFICATIONS_BJT = (
    Simplification("ideal", "ideal op-amp, α = 1: I_out = V_SET/R_S",
                   ("ideal_opamp", "alpha_one"), COMMON_PRACTICE),
    Simplification("fixed_vbe", "finite gain, offset, bias current and β; fixed V_BE",
                   ("vbe_fixed", "no_early"), DERIVED_LOOP),
    Simplification("exponential", "finite gain, offset, bias current and β; exponential "
                   "junction (Wright ω form)", ("no_early", "forward_active"),
                   DERIVED_LOOP + "; cf. Banwell & Jayakumar, Electron. Lett. 36 (2000)"),
)

SIMPLIFICATIONS_MOS = (
    Simplification("ideal", "ideal op-amp: I_out = V_SET/R_S", ("ideal_opamp",), COMMON_PRACTICE),
    Simplification("square_law", "finite gain, offset and bias current; square law",
                   ("no_clm", "square_law"),
                   DERIVED_LOOP + "; square law: Sedra & Smith, MOSFET chapter (from memory)"),
)

EXTRAS_BJT = {"r_out_hybrid_pi": "R_out, hybrid-π: {r_o[(A+1)(β+1)R_S + r_π + R_B] + R_S(r_π + R_B)}"
                                 "/[(A+1)R_S + r_π + R_B]"}
EXTRAS_MOS = {"r_out_small_signal": "R_out = r_o + R_S + (A+1)·g_m·r_o·R_S "
                                    "(square-law small-signal model)"}

# Added to lambda in the R_out form so that lambda = 0 gives a huge finite r_o
# (~1e15/I_D Ω: infinite for practical purposes) instead of 1/0; the change is
# below 1e-9 relative for any lambda above 1e-6 1/V.
LAMBDA_FLOOR = 1e-15  # 1/V


# ---------------------------------------------------------------------------
# exact equations

def _loop(c, npn):
    """Rails, sense node, R_S, the op-amp and its bias current; returns their symbols."""
    c.rail("0", 0)
    c.rail("cc", c.parameter("v_supply"))
    c.rail("out", c.parameter("v_load"))
    c.output("out", 1 if npn else -1)
    c.node("s")
    s = {"R_S": c.resistor("R_S", "s", "0" if npn else "cc", "r_s")}
    dt = c.temp - c.t_ref
    s["V_SET"] = c.operating_value("V_SET", c.parameter("v_set") * (1 + c.parameter("v_set_tc") * dt))
    s["V_OS"] = c.operating_value("V_OS", c.parameter("v_os") + c.parameter("v_os_tc") * dt)
    s["A"] = c.operating_value("A_OL", c.parameter("a_ol"))
    s["I_b"] = c.operating_value("I_BIAS", c.parameter("i_bias"))
    c.operating_value("V_OH", c.parameter("v_oh"))
    c.operating_value("V_OL", c.parameter("v_ol"))
    s["V_CC"] = c.voltages["cc"]
    s["V_OUT"] = c.voltages["out"]
    plus = s["V_SET"] if npn else s["V_CC"] - s["V_SET"]
    c.driven_node("o", s["A"] * (plus + s["V_OS"] - c.voltages["s"]))
    # The bias current leaves the sense node into the op-amp's - input.
    c.current_source("s", "0", s["I_b"])
    return s


def build_bjt(polarity):
    """Exact equations of the op-amp source with a BJT pass device."""
    import sympy as sp

    from kit.circuit import Circuit
    from kit.derive import wright_omega_function

    npn = polarity == "npn"
    c = Circuit(polarity)
    s = _loop(c, npn)
    c.node("b")
    r_b = c.resistor("R_B", "o", "b", "r_b")
    q1 = c.transistor("Q1", polarity, "b", "out", "s")
    v_on = c.operating_value(
        "V_BE_on", c.parameter("v_be_on") + c.parameter("v_be_tc") * (c.temp - c.t_ref))

    a, r_s = s["A"], s["R_S"]
    beta, i_s, v_t = q1["beta"], q1["I_S"], q1["V_T"]
    alpha = beta / (beta + 1)
    k = (1 + a) * r_s + r_b / (beta + 1)
    drive = _drive(s, npn)  # everything on the right of K I_E + V_BE = drive
    omega = wright_omega_function()
    c_term = drive - v_t * sp.log(alpha / i_s)
    closed_forms = {
        "ideal": s["V_SET"] / r_s,
        "fixed_vbe": alpha * (drive - v_on) / k,
        "exponential": alpha * v_t / k * omega(c_term / v_t + sp.log(k / v_t)),
    }

    j = c.transistors["Q1"]
    r_o = (q1["V_A"] + j["v_ce"]) / j["i_c"]
    r_pi = v_t / j["i_b"]
    beta_ac = j["i_c"] / j["i_b"]
    r_base = r_pi + r_b
    r_out = ((r_o * ((a + 1) * (beta_ac + 1) * r_s + r_base) + r_s * r_base)
             / ((a + 1) * r_s + r_base))
    return c.equations(extras={"r_out_hybrid_pi": r_out}, closed_forms=closed_forms,
                       hand_parameters=("v_be_on", "v_be_tc"))


def _drive(s, npn):
    """Right-hand side of the loop equation ``K I + V_ctrl = drive``.

    Sink: ``A(V_SET + V_OS) + (1+A) R_S I_b``; source:
    ``V_CC + A(V_SET - V_OS) - (1+A) R_S I_b`` (the op-amp output is measured
    from 0 V, the set voltage from the supply).
    """
    a, r_s, i_b = s["A"], s["R_S"], s["I_b"]
    if npn:
        return a * (s["V_SET"] + s["V_OS"]) + (1 + a) * r_s * i_b
    return s["V_CC"] + a * (s["V_SET"] - s["V_OS"]) - (1 + a) * r_s * i_b


def build_mos(polarity):
    """Exact equations of the op-amp source with a MOSFET pass device."""
    import sympy as sp

    from kit.circuit import Circuit

    npn = polarity == "npn"
    c = Circuit(polarity)
    s = _loop(c, npn)
    m1 = c.mosfet("M1", polarity, "o", "out", "s")

    a, r_s = s["A"], s["R_S"]
    k, v_th, lam = m1["K"], m1["V_th"], m1["lambda"]
    b = (1 + a) * r_s
    c_term = _drive(s, npn) - v_th
    # I = (K/2) y², y = C - B I  =>  I = (C/B)(r - 1)/(r + 1), r = sqrt(1 + 2KBC); the |.|
    # only matters for a loop with no drive at all (C < 0), where it keeps NaN out.
    root = sp.sqrt(sp.Abs(1 + 2 * k * b * c_term))
    closed_forms = {
        "ideal": s["V_SET"] / r_s,
        "square_law": c_term / b * (root - 1) / (root + 1),
    }

    j = c.transistors["M1"]
    # Square-law small-signal model in saturation, written with the plain overdrive
    # (not the piecewise law, whose every branch numpy would evaluate and divide by):
    # g_m = dI_D/dV_GS = K V_ov (1 + λV_DS), r_o = 1/(dI_D/dV_DS) = 2/(λ K V_ov²).
    v_ov = j["v_ov"]
    g_m = k * v_ov * (1 + lam * j["v_ds"])
    r_o = 2 / ((lam + LAMBDA_FLOOR) * k * v_ov ** 2)
    r_out = r_o + r_s + (a + 1) * g_m * r_o * r_s
    return c.equations(extras={"r_out_small_signal": r_out}, closed_forms=closed_forms,
                       hand_parameters=())


# ---------------------------------------------------------------------------
# starting points: the closed form, then the loop closed exactly around the
# guessed control voltage, so that the stiff gain law starts satisfied.

FORCED_VDS = 1e-6  # V: what is left across a channel whose gate the loop drives to the limit


def _named(model, q, *names):
    index = model.operating_index
    return [q[index[name]] for name in names]


def _loop_nodes(model, q, control):
    """Sense-node voltage and op-amp output for a control voltage (V_BE + I_B R_B or V_GS)."""
    (a,) = _named(model, q, "A_OL")
    plus = _plus_input(model, q)
    if model.polarity == "npn":
        v_s = (a * plus - control) / (1 + a)
        return v_s, v_s + control
    v_s = (a * plus + control) / (1 + a)
    return v_s, v_s - control


def _plus_input(model, q):
    """The op-amp's + input plus its offset (the set point it compares S with)."""
    v_set, v_os, v_cc = _named(model, q, "V_SET", "V_OS", "V_CC")
    return (v_set if model.polarity == "npn" else v_cc - v_set) + v_os


def _positive(current, fallback=1e-9):
    current = np.asarray(current, dtype=float)
    return np.where(np.isfinite(current) & (current > 0), current, fallback)


def guess_bjt(model, q):
    """Node voltages from the exponential closed form, corrected for V_CE.

    The loop holds the emitter current near its closed-form value whatever
    the collector does, so V_BE follows from the Ebers–Moll emitter current
    at the guessed V_CE; near saturation that is what keeps the guess (and
    the op-amp output it implies) on the right branch.
    """
    i_out = _positive(model.closed_forms(q)["exponential"])
    beta, beta_r, i_s, v_t, v_a, r_b, v_out = _named(
        model, q, "beta_Q1", "betaR_Q1", "I_S_Q1", "V_T_Q1", "V_A_Q1", "R_B", "V_OUT")
    sign = 1 if model.polarity == "npn" else -1
    v_be = v_t * np.log(i_out / i_s)
    v_s, _ = _loop_nodes(model, q, v_be + r_b * i_out / beta)
    i_e = i_out * (beta + 1) / beta
    v_ce = np.maximum(sign * (v_out - v_s), 0.0)
    # Emitter current per I_S e^(V_BE/V_T): transport share plus the base share.
    per_unit = -np.expm1(-v_ce / v_t) * (1 + v_ce / v_a) + 1 / beta
    v_be = v_t * np.log(i_e / (i_s * per_unit))
    v_bc = v_be - v_ce
    i_c = (i_s * (np.exp(v_be / v_t) - np.exp(v_bc / v_t)) * (1 + v_ce / v_a)
           - i_s / beta_r * np.expm1(v_bc / v_t))
    v_s, v_o = _loop_nodes(model, q, v_be + r_b * (i_e - i_c))
    named = {"V_s": v_s, "V_b": v_s + sign * v_be, "V_o": v_o}
    return np.stack([named[name] for name in model.unknowns])


def guess_mos(model, q):
    """Node voltages from the square-law closed form; triode and weak inversion handled."""
    current = _positive(model.closed_forms(q)["square_law"])
    k, v_th, lam, n, v_t, r_s, i_b, v_out, v_cc = _named(
        model, q, "K_M1", "Vth_M1", "lambda_M1", "nsub_M1", "V_T_M1", "R_S", "I_BIAS", "V_OUT", "V_CC")
    if model.polarity == "npn":
        v_ds = v_out - r_s * (current - i_b)
    else:
        v_ds = (v_cc - r_s * (current + i_b)) - v_out
    v_gs = v_th + mosfet.overdrive_for_current(current, v_ds, k, lam, 2 * n * v_t)
    v_s, v_o = _loop_nodes(model, q, v_gs)
    # Load at or beyond the sense node: the loop drives the gate as hard as its gain
    # allows and V_DS shrinks to a sliver; start there (far outside compliance, but a
    # converged point lets the report name the op-amp's swing rather than fail).
    hard = v_ds <= FORCED_VDS
    if np.any(hard):
        (a,), plus = _named(model, q, "A_OL"), _plus_input(model, q)
        sign = 1 if model.polarity == "npn" else -1
        forced_s = v_out - sign * FORCED_VDS
        forced_o = a * (plus - forced_s)
        v_s, v_o = np.where(hard, forced_s, v_s), np.where(hard, forced_o, v_o)
    named = {"V_s": v_s, "V_o": v_o}
    return np.stack([named[name] for name in model.unknowns])


# ---------------------------------------------------------------------------
# hooks

def limits(points):
    """Op-amp output swing: ``min(V_OH - V_o, V_o - V_OL)`` (>= 0 inside), part ``U1``."""
    model = points.model
    v_o = points.x[model.unknowns.index("V_o")]
    v_oh, v_ol = _named(model, points.q, "V_OH", "V_OL")
    return {("U1", "output_swing"): np.minimum(v_oh - v_o, v_o - v_ol)}


# ---------------------------------------------------------------------------
# schematic

def _draw(design, d, mos):
    """Op-amp driving the pass device; R_S at the emitter/source; load at the collector/drain.

    Sink: the + input on top takes V_SET, the feedback from the sense node
    below reaches the - input from below.  Source: the picture flipped, the
    sense node above the device and the feedback from above.
    """
    import schemdraw.elements as elm

    from kit.quantities import format_quantity
    from kit.schematic import value_label

    npn = design.polarity == "npn"
    set_text = format_quantity(design.values["v_set"], "V")
    op = elm.Opamp(leads=True)
    op = (op.flip() if npn else op).label("U1", loc="center", ofst=(-0.35, 0))
    plus, minus = op.in2, op.in1
    elm.Line().at(plus).left(1.8)
    reference = f"V_SET\n{set_text}" if npn else f"V_CC − V_SET\n(V_SET {set_text})"
    source = elm.SourceV().down().reverse().label(reference, loc="top")
    elm.Ground()
    elm.Gap().at(source.center).left(3.2)  # room for the label (schemdraw underestimates text)
    elm.Line().at(op.out).right(0.5)
    if not mos:
        elm.Resistor().right().label(value_label(design, "r_b", "R_B"), loc="top")
    device = _pass_device(npn, mos).anchor("gate" if mos else "base")
    emitter = device.source if mos else device.emitter
    collector = device.drain if mos else device.collector
    toward_rail = "down" if npn else "up"
    getattr(elm.Line().at(emitter), toward_rail)(1.0)
    node = elm.Dot()
    getattr(elm.Resistor(), toward_rail)().label(value_label(design, "r_s", "R_S"), loc="bottom")
    if npn:
        elm.Ground()
    else:
        elm.Vdd().label(_supply(design))
    # Feedback from the sense node to the - input, clear of the reference wire.
    elm.Line().at(node.center).tox(minus[0] - 0.5)
    elm.Line().toy(minus)
    elm.Line().tox(minus)
    getattr(elm.Line().at(collector), "up" if npn else "down")(0.8)
    elm.Dot(open=True).label("load (sink)" if npn else "load (source)", loc="right")
    elm.Gap().right(2.2)  # room for the label (schemdraw underestimates text width)


def _pass_device(npn, mos):
    """Pass transistor with its control terminal facing the op-amp (left)."""
    import schemdraw.elements as elm

    if mos:
        kind = elm.AnalogNFet if npn else elm.AnalogPFet
        part = kind(offset_gate=False, source_arrow=True).theta(0).reverse()
        return part.label("M1", loc="right")
    part = (elm.BjtNpn(circle=True) if npn else elm.BjtPnp(circle=True)).theta(0)
    return part.label("Q1", loc="right")


def _supply(design):
    from kit.quantities import format_quantity

    return f"V_CC {format_quantity(design.values['v_supply'], 'V')}"


def draw_bjt(design, d):
    """Schematic with the present values (see :mod:`kit.schematic`)."""
    _draw(design, d, mos=False)


def draw_mos(design, d):
    """Schematic with the present values (see :mod:`kit.schematic`)."""
    _draw(design, d, mos=True)


# ---------------------------------------------------------------------------
# registry entries

NOTES = (
    "Stability: the loop contains a follower driving R_S; use a base/gate stopper (tens to "
    "hundreds of Ω) and check the phase margin with the load and cable capacitance at S — "
    "a MOSFET's gate capacitance makes it worse. This DC model says nothing about it.",
    "The pass device dissipates (V_load − V_S)·I_out (a sink at its highest load voltage, a "
    "source at its lowest): a power pass device on a high supply can run hot — check its SOA, "
    "heatsink and junction temperature.",
    "The op-amp's input common-mode range must include its + input: V_SET above 0 V for a sink "
    "(single-supply op-amp), V_SET below the supply for a source (rail-to-rail or high-side input).",
    "Output swing V_OL … V_OH is the op-amp's at this load current; its output current limit "
    "and its own supply are not modelled.",
)

TOPOLOGIES = (
    Topology(
        key="opamp_bjt_source",
        order=90,
        title="Op-amp feedback source, BJT pass device",
        description=("An op-amp holds V_SET across the sense resistor R_S at the emitter of a "
                     "pass BJT (base stopper R_B); finite gain, offset and bias current included. "
                     "NPN sinks, PNP sources."),
        polarities=("npn", "pnp"),
        transistors=("Q1",),
        output_transistor="Q1",
        values=VALUES_BJT,
        simplifications=SIMPLIFICATIONS_BJT,
        build=build_bjt,
        guess=guess_bjt,
        draw=draw_bjt,
        limits=limits,
        extras=EXTRAS_BJT,
        notes=NOTES + ("The base current leaves through the emitter and the collector carries "
                       "only α of it (−1/(β+1)); use a MOSFET or a Darlington where that matters.",),
        budget_labels={"V_SET": "set voltage V_SET", "V_OS": "op-amp offset V_OS"},
    ),
    Topology(
        key="opamp_mos_source",
        order=91,
        title="Op-amp feedback source, MOSFET pass device",
        description=("An op-amp holds V_SET across the sense resistor R_S at the source of a pass "
                     "MOSFET (square law with channel-length modulation); finite gain, offset and "
                     "bias current included. NMOS sinks, PMOS sources."),
        polarities=("npn", "pnp"),
        transistors=("M1",),
        output_transistor="M1",
        values=VALUES_MOS,
        simplifications=SIMPLIFICATIONS_MOS,
        build=build_mos,
        guess=guess_mos,
        draw=draw_mos,
        limits=limits,
        extras=EXTRAS_MOS,
        hand_parameters=(),
        kinds={"M1": "mos"},
        notes=NOTES,
        budget_labels={"V_SET": "set voltage V_SET", "V_OS": "op-amp offset V_OS"},
    ),
)
