"""Reference-biased, emitter-degenerated single-transistor sources (NPN sink, PNP source).

The base is held by a voltage reference fed through ``R_Z`` from the supply;
the emitter resistor ``R_E`` turns the reference minus ``V_BE`` into the
output current.  Three references, one topology each:

``zener_source``
    a zener, piecewise-linear ``V_Z = V_Z0 + r_z I_Z`` with
    ``V_Z0(T) = V_Z0 + TC_Z (T - T_ref)`` (valid for ``I_Z > 0``);
``diode_string_source``
    ``n`` forward diodes, each ``I = I_SD (exp(V/(n_id V_T)) - 1)`` with
    ``I_SD(T) = I_SD (T/T_ref)^(XTI/n_id) exp[E_g/(n_id V_T) (T/T_ref - 1)]``,
    the transistor's ``I_S`` law written for a junction of emission
    coefficient ``n_id`` (so each diode drop follows the same
    ``V(T) = E_g (1 - T/T_ref) + V(T_ref) T/T_ref - XTI V_T ln(T/T_ref)``);
``zener_diode_source``
    a zener in series with one forward diode: ``V_B = V_Z + V_D``, so the
    emitter sits near ``V_Z`` and the diode's drift cancels the ``V_BE``
    drift to first order (Tietze & Schenk, *Electronic Circuits*, zener
    references, from memory).

NPN sink::

    V_CC --R_Z--+-- B (Q1 base)        load -> out = Q1 collector
                |                      Q1 emitter = E --R_E-- 0
                reference (B -> 0)

PNP source: the mirror image, reference from V_CC to B, R_Z from B to 0,
R_E from V_CC to E, the collector drives the load to 0.

Closed forms.  A PWL zener fed by ``R_Z`` is a Thevenin source
``V_TH = (V_CC r_z + V_Z0 R_Z)/(R_Z + r_z)``, ``R_TH = R_Z || r_z`` (across
the reference, either polarity), so the divider-biased forms carry over
exactly (derived here).  A junction reference is linearised at its current
without base-current loading, found in closed form from
``R I + n n_id V_T ln(I/I_SD) = V``, i.e.
``I = (n n_id V_T/R) omega(V/(n n_id V_T) + ln(I_SD R/(n n_id V_T)))``
(derived here; the series-resistance diode solution of Banwell & Jayakumar,
Electron. Lett. 36, 2000); its small-signal resistance then completes
``R_TH``.  The stiff-reference forms are the hand rule
``I = alpha (V_ref - V_BE)/R_E`` (Tietze & Schenk, from memory).

Output resistance: the hybrid-π form of the divider source with the base
returned through ``R_B = R_Z || r_ref`` (``r_ref`` the reference's
small-signal resistance at the exact operating point).

Examples
--------
A 5.6 V zener with 1.5 kΩ in the emitter sinks about (5.6 - 0.68)/1.5k:

>>> import kit
>>> ev = kit.evaluate(kit.design("zener_source", r_e="1k5", v_z0="5.6 V"))
>>> round(ev.i_out * 1e3, 1)
3.3
>>> ev.compliance.low.transistor, ev.compliance.low.cause
('Q1', 'saturation')
"""

from __future__ import annotations

import numpy as np

from kit.errors import ParameterError
from kit.topologies.base import Simplification, Topology, ValueSpec

SATURATED_VBC_GUESS = 0.55  # V; keeps Newton near the right branch when Q1 saturates
SMALLEST_GUESS_CURRENT = 1e-9  # A

# --- values -----------------------------------------------------------------

def _feed(default):
    return ValueSpec("r_feed", "Ω", "feed resistor R_Z from the supply to the reference", default,
                     1e-2, 1e9, "resistor")


def _zener_values(v_z0, r_z, tc_z):
    return (
        ValueSpec("v_z0", "V", "zener voltage at zero current (PWL intercept), at T_ref", v_z0,
                  1.0, 400.0),
        ValueSpec("r_z", "Ω", "zener dynamic resistance", r_z, 0.01, 1e5),
        ValueSpec("tc_z", "V/K", "zener voltage temperature coefficient", tc_z, -0.02, 0.5),
        ValueSpec("i_z_min", "A", "least zener current for the PWL law (above the knee)", 1e-3,
                  1e-7, 1.0),
        ValueSpec("p_z_max", "W", "zener dissipation limit at the design temperature", 0.5,
                  1e-3, 100.0),
    )


def _supply_and_load(v_supply, v_load):
    return (ValueSpec("v_supply", "V", "supply voltage", v_supply, 0.1, 1000.0, "supply"),
            ValueSpec("v_load", "V", "collector (load) voltage against 0 V", v_load, -1000.0,
                      1000.0, "load"))


def _emitter(default):
    return ValueSpec("r_e", "Ω", "emitter resistor", default, 1e-2, 1e9, "resistor")


DIODE_VALUES = (
    ValueSpec("i_sd", "A", "diode saturation current at T_ref", 2e-9, 1e-20, 1e-3),
    ValueSpec("n_id", "", "diode emission coefficient", 1.8, 0.8, 3.0),
    ValueSpec("xti_d", "", "temperature exponent of I_SD", 3.0, -10.0, 10.0),
    ValueSpec("e_g_d", "eV", "activation energy of I_SD", 1.11, 0.5, 2.0),
)

N_DIODES = ValueSpec("n_diodes", "", "number of diodes in the string (whole number)", 2.0, 2.0, 8.0)

# --- simplifications ----------------------------------------------------------

SOURCE_HAND = "Tietze & Schenk, Electronic Circuits, zener-referenced sources (from memory)"
SOURCE_THEVENIN = ("derived here: Thevenin of the PWL zener into the divider form of "
                   "Sedra & Smith, Microelectronic Circuits, BJT biasing (from memory)")
SOURCE_OMEGA = "derived here; cf. Banwell & Jayakumar, Electron. Lett. 36 (2000)"
SOURCE_LINEARISED = ("derived here: reference linearised at its unloaded current "
                     "(Banwell & Jayakumar ω form), then the divider form")


def _simplifications(stiff_label, thevenin_source, linearised):
    extra = ("reference_linearised",) if linearised else ()
    return (
        Simplification("stiff_reference", stiff_label, ("stiff_reference", "vbe_fixed", "no_early"),
                       SOURCE_HAND),
        Simplification("fixed_vbe", "fixed V_BE, reference loaded by the base current",
                       ("vbe_fixed", "no_early") + extra, thevenin_source),
        Simplification("exponential", "exponential junction (Wright ω form)",
                       ("no_early", "forward_active") + extra, SOURCE_OMEGA if not linearised
                       else SOURCE_LINEARISED),
    )


# --- equations ------------------------------------------------------------------

def _parts(polarity):
    """The parts every reference topology shares: rails, R_Z, R_E, Q1 and V_BE(on)."""
    from kit.circuit import Circuit

    npn = polarity == "npn"
    c = Circuit(polarity)
    c.rail("0", 0)
    c.rail("cc", c.parameter("v_supply"))
    c.rail("out", c.parameter("v_load"))
    c.output("out", 1 if npn else -1)
    c.node("b")
    c.node("e")
    if npn:
        r_feed = c.resistor("R_Z", "cc", "b", "r_feed")
        r_e = c.resistor("R_E", "e", "0", "r_e")
        top, bottom = "b", "0"
    else:
        r_feed = c.resistor("R_Z", "b", "0", "r_feed")
        r_e = c.resistor("R_E", "cc", "e", "r_e")
        top, bottom = "cc", "b"
    q1 = c.transistor("Q1", polarity, "b", "out", "e")
    v_on = c.operating_value(
        "V_BE_on", c.parameter("v_be_on") + c.parameter("v_be_tc") * (c.temp - c.t_ref))
    return {"c": c, "top": top, "bottom": bottom, "r_feed": r_feed, "r_e": r_e, "q1": q1,
            "v_on": v_on}


def _zener_law(c):
    """Operating symbols of the PWL zener: ``(V_Z0(T), r_z)``."""
    v_z0 = c.operating_value("V_Z0", c.parameter("v_z0") + c.parameter("tc_z") * (c.temp - c.t_ref))
    r_z = c.operating_value("r_z", c.parameter("r_z"))
    c.parameter("i_z_min")  # ratings: parameters of the limits, not of the equations
    c.parameter("p_z_max")
    return v_z0, r_z


def _zener(c, top, bottom, v_z0, r_z):
    """PWL zener from ``top`` (cathode) to ``bottom``; returns ``(I_Z, V_Z)`` expressions.

    The current goes in as two terms, ``V/r_z`` and ``-V_Z0/r_z``: the same
    law, but the convergence scale at the node then sees the size of the
    parts that cancel, so a starved zener (tiny I_Z) is not failed on
    floating-point noise.
    """
    across = c.voltages[top] - c.voltages[bottom]
    c.current_source(top, bottom, across / r_z)
    c.current_source(top, bottom, -v_z0 / r_z)
    return (across - v_z0) / r_z, across


def _diode_law(c):
    """Operating symbols of the diode law: ``(I_SD(T), n_id)``."""
    import sympy as sp

    n_id = c.operating_value("n_id", c.parameter("n_id"))
    ratio = c.temp / c.t_ref
    v_t = c.operating[c.v_t]  # k T / q in the parameters
    i_sd = c.operating_value(
        "I_SD", c.parameter("i_sd") * ratio ** (c.parameter("xti_d") / c.parameter("n_id"))
        * sp.exp(c.parameter("e_g_d") / (c.parameter("n_id") * v_t) * (ratio - 1)))
    return i_sd, n_id


def _junction_reference_current(total_resistance, voltage, slope_voltage, i_sd):
    """Current of ``R I + slope ln(I/I_SD) = V`` (junction reference fed by R), ω form."""
    import sympy as sp

    from kit.derive import wright_omega_function

    omega = wright_omega_function()
    return slope_voltage / total_resistance * omega(
        voltage / slope_voltage + sp.log(i_sd * total_resistance / slope_voltage))


def _transistor_forms(parts, drive, r_th, stiff_drive):
    """The three closed forms for a Thevenin drive ``drive`` behind ``r_th``."""
    import sympy as sp

    from kit.derive import wright_omega_function

    q1, r_e, v_on = parts["q1"], parts["r_e"], parts["v_on"]
    beta, i_s, v_t = q1["beta"], q1["I_S"], q1["V_T"]  # Q1 at its own junction temperature
    k = (r_th + (beta + 1) * r_e) / beta
    omega = wright_omega_function()
    return {
        "stiff_reference": beta / (beta + 1) * (stiff_drive - v_on) / r_e,
        "fixed_vbe": beta * (drive - v_on) / (r_th + (beta + 1) * r_e),
        "exponential": v_t / k * omega(drive / v_t + sp.log(i_s * k / v_t)),
    }


def _r_out(parts, r_base):
    """Hybrid-π R_out with the base returned through ``r_base`` (divider form)."""
    c, r_e = parts["c"], parts["r_e"]
    j = c.transistors["Q1"]
    r_o = (parts["q1"]["V_A"] + j["v_ce"]) / j["i_c"]
    r_pi = parts["q1"]["V_T"] / j["i_b"]
    beta_ac = j["i_c"] / j["i_b"]
    return (r_o * (1 + beta_ac * r_e / (r_e + r_pi + r_base))
            + r_e * (r_pi + r_base) / (r_e + r_pi + r_base))


def _parallel(a, b):
    return a * b / (a + b)


def build_zener(polarity):
    """Exact equations of the zener-referenced source."""
    parts = _parts(polarity)
    c, top, bottom, r_feed = parts["c"], parts["top"], parts["bottom"], parts["r_feed"]
    v_z0, r_z = _zener_law(c)
    i_zener, across = _zener(c, top, bottom, v_z0, r_z)
    v_cc = c.voltages["cc"]
    drive = (v_cc * r_z + v_z0 * r_feed) / (r_feed + r_z)
    closed = _transistor_forms(parts, drive, _parallel(r_feed, r_z), v_z0)
    extras = {"r_out_hybrid_pi": _r_out(parts, _parallel(r_feed, r_z)),
              "i_zener": i_zener, "v_zener": across}
    return c.equations(extras=extras, closed_forms=closed, hand_parameters=("v_be_on", "v_be_tc"))


def build_diode_string(polarity):
    """Exact equations of the diode-string-referenced source."""
    import sympy as sp

    parts = _parts(polarity)
    c, top, bottom, r_feed = parts["c"], parts["top"], parts["bottom"], parts["r_feed"]
    i_sd, n_id = _diode_law(c)
    count = c.operating_value("N_diodes", c.parameter("n_diodes"))
    slope = count * n_id * c.v_t  # the string is one junction of emission coefficient n n_id
    across = c.voltages[top] - c.voltages[bottom]
    c.current_source(top, bottom, i_sd * (sp.exp(across / slope) - 1))
    v_cc = c.voltages["cc"]
    unloaded = _junction_reference_current(r_feed, v_cc, slope, i_sd)
    r_string = slope / unloaded
    drive = v_cc - r_feed * unloaded
    closed = _transistor_forms(parts, drive, _parallel(r_feed, r_string),
                               count * parts["v_on"])
    r_string_exact = slope / (i_sd * sp.exp(across / slope))
    extras = {"r_out_hybrid_pi": _r_out(parts, _parallel(r_feed, r_string_exact)),
              "v_string": across}
    return c.equations(extras=extras, closed_forms=closed, hand_parameters=("v_be_on", "v_be_tc"))


def build_zener_diode(polarity):
    """Exact equations of the zener-plus-diode-referenced source."""
    import sympy as sp

    npn = polarity == "npn"
    parts = _parts(polarity)
    c, r_feed = parts["c"], parts["r_feed"]
    v_z0, r_z = _zener_law(c)
    i_sd, n_id = _diode_law(c)
    c.node("m")  # between the zener and the diode
    v = c.voltages
    # NPN: B -diode-> m -zener-> 0.  PNP: V_CC -zener-> m -diode-> B (mirror image).
    if npn:
        diode_drop = v["b"] - v["m"]
        c.current_source("b", "m", i_sd * (sp.exp(diode_drop / (n_id * c.v_t)) - 1))
        i_zener, zener_drop = _zener(c, "m", "0", v_z0, r_z)
    else:
        diode_drop = v["m"] - v["b"]
        i_zener, zener_drop = _zener(c, "cc", "m", v_z0, r_z)
        c.current_source("m", "b", i_sd * (sp.exp(diode_drop / (n_id * c.v_t)) - 1))
    slope = n_id * c.v_t
    unloaded = _junction_reference_current(r_feed + r_z, v["cc"] - v_z0, slope, i_sd)
    r_reference = r_z + slope / unloaded
    drive = v["cc"] - r_feed * unloaded
    # Stiff: the diode drops V_BE(on) and cancels Q1's V_BE, leaving I = alpha V_Z0 / R_E.
    closed = _transistor_forms(parts, drive, _parallel(r_feed, r_reference),
                               v_z0 + parts["v_on"])
    r_reference_exact = r_z + slope / (i_sd * sp.exp(diode_drop / slope))
    extras = {"r_out_hybrid_pi": _r_out(parts, _parallel(r_feed, r_reference_exact)),
              "i_zener": i_zener, "v_zener": zener_drop}
    return c.equations(extras=extras, closed_forms=closed, hand_parameters=("v_be_on", "v_be_tc"))


# --- starting point, limits -----------------------------------------------------

def _q(model, q, name):
    return q[model.operating_index[name]]


def _base_and_emitter(model, q):
    """Q1 base and emitter voltages from the exponential closed form."""
    current = model.closed_forms(q)["exponential"]
    current = np.where(np.isfinite(current) & (current > 0), current, SMALLEST_GUESS_CURRENT)
    beta, i_s, v_t = (_q(model, q, n) for n in ("beta_Q1", "I_S_Q1", "V_T_Q1"))
    v_be = v_t * np.log(current / i_s)
    v_re = current * (beta + 1) / beta * _q(model, q, "R_E")
    v_out = _q(model, q, "V_OUT")
    if model.polarity == "npn":
        v_b = np.minimum(v_re + v_be, v_out + SATURATED_VBC_GUESS)
        return v_b, v_b - v_be, current
    v_b = np.maximum(_q(model, q, "V_CC") - v_re - v_be, v_out - SATURATED_VBC_GUESS)
    return v_b, v_b + v_be, current


def guess(model, q):
    """Node voltages (in the order of ``model.unknowns``) from the exponential closed form."""
    v_b, v_e, current = _base_and_emitter(model, q)
    order = {"V_b": v_b, "V_e": v_e}
    if "V_m" in model.unknowns:
        npn = model.polarity == "npn"
        v_cc = _q(model, q, "V_CC")
        feed = (v_cc - v_b) / _q(model, q, "R_Z") if npn else v_b / _q(model, q, "R_Z")
        i_d = np.maximum(feed - current / _q(model, q, "beta_Q1"), SMALLEST_GUESS_CURRENT)
        v_d = _q(model, q, "n_id") * _q(model, q, "V_T") * np.log1p(i_d / _q(model, q, "I_SD"))
        order["V_m"] = v_b - v_d if npn else v_b + v_d
    return np.stack([order[name] for name in model.unknowns])


def guess_string(model, q):
    """As :func:`guess`, after checking that the number of diodes is whole."""
    count = _q(model, q, "N_diodes")
    if not np.all(count == np.round(count)):
        bad = float(count[count != np.round(count)][0])
        raise ParameterError("must be a whole number of diodes", parameter="n_diodes", value=bad,
                             valid=f"{N_DIODES.low:g}, {N_DIODES.low + 1:g}, … {N_DIODES.high:g}")
    return guess(model, q)


def zener_limits(points):
    """Margins of the zener: current above its knee (A), dissipation below its limit (W)."""
    model = points.model
    extras = model.extras(points.x, points.q)
    i_zener, v_zener = extras["i_zener"], extras["v_zener"]
    i_z_min = points.p[model.parameter_index["i_z_min"]]
    p_z_max = points.p[model.parameter_index["p_z_max"]]
    # A point that did not converge is judged by the solver's own margin, not here.
    return {("D1", "zener_current"): np.nan_to_num(i_zener - i_z_min, nan=np.inf),
            ("D1", "power"): np.nan_to_num(p_z_max - v_zener * i_zener, nan=np.inf)}


# --- schematic ---------------------------------------------------------------------

def _draw(design, d, reference):
    """Schematic with present values; ``reference()`` draws the reference leg downwards."""
    import schemdraw.elements as elm

    from kit.quantities import format_quantity
    from kit.schematic import value_label

    npn = design.polarity == "npn"
    supply = format_quantity(design.values["v_supply"], "V")
    rail = elm.Vdd().label(f"V_CC {supply}")
    elm.Line().right(UNIT_WIDTH)
    elm.Line().left(UNIT_WIDTH).at(rail.start)
    if npn:
        elm.Resistor().down().label(value_label(design, "r_feed", "R_Z"))
    else:
        reference()
    d.push()
    elm.Line().right(1.0)
    if npn:
        q = elm.BjtNpn(circle=True).anchor("base").label("Q1", loc="right")
        elm.Resistor().down().at(q.emitter).label(value_label(design, "r_e", "R_E"), loc="bottom")
        elm.Ground()
        elm.Line().up(0.8).at(q.collector)
        elm.Dot(open=True).label("load (sink)", loc="right")
    else:
        q = elm.BjtPnp(circle=True).anchor("base").label("Q1", loc="right")
        elm.Resistor().up().at(q.emitter).toy(rail.start).label(value_label(design, "r_e", "R_E"),
                                                                loc="bottom")
        elm.Line().down(0.8).at(q.collector)
        elm.Dot(open=True).label("load (source)", loc="right")
    d.pop()
    if npn:
        reference()
    else:
        elm.Resistor().down().label(value_label(design, "r_feed", "R_Z"))
    elm.Ground()


UNIT_WIDTH = 3.0
DIODE_LENGTH = 1.5  # schemdraw units; a string of up to 8 stays on the page


def _draw_zener(design):
    import schemdraw.elements as elm

    from kit.quantities import format_quantity

    # Drawn cathode up: in breakdown the zener conducts from the upper node downwards.
    elm.Zener().down().reverse().label(
        f"D1\n{format_quantity(design.values['v_z0'], 'V')}\n"
        f"r_z {format_quantity(design.values['r_z'], 'Ω')}")


def _draw_diodes(design, first, count):
    import schemdraw.elements as elm

    from kit.quantities import format_quantity

    saturation = format_quantity(design.values["i_sd"], "A")
    names = f"D{first}" if count == 1 else f"D{first}…D{first + count - 1}"
    for k in range(count):
        diode = elm.Diode().down().length(DIODE_LENGTH)
        if k == 0:
            diode.label(f"{names}\nI_SD {saturation}\nn {design.values['n_id']:g}")


def draw_zener(design, d):
    """Schematic of the zener-referenced source."""
    _draw(design, d, lambda: _draw_zener(design))


def draw_diode_string(design, d):
    """Schematic of the diode-string-referenced source (every diode drawn)."""
    _draw(design, d, lambda: _draw_diodes(design, 1, int(round(design.values["n_diodes"]))))


def draw_zener_diode(design, d):
    """Schematic of the zener-plus-diode-referenced source (diode next to the base)."""
    def reference():
        if design.polarity == "npn":
            _draw_diodes(design, 2, 1)
            _draw_zener(design)
        else:
            _draw_zener(design)
            _draw_diodes(design, 2, 1)

    _draw(design, d, reference)


# --- the topologies ------------------------------------------------------------------

ZENER_NOTES = (
    "Check the zener and R_Z dissipation at the highest supply: P_Z = V_Z I_Z, P_RZ = (V_CC - V_Z)^2/R_Z.",
    "Zener avalanche noise is far above resistor noise; RC-filter the base for low-noise work.",
    "The PWL zener law holds above its knee current only (i_z_min); compliance ends where I_Z falls below it.",
)

DIODE_NOTES = (
    "A diode string tracks the supply through R_Z (poor line rejection unless R_Z is a current source); "
    "its drop falls about 2 mV/K per diode, so the output current falls with temperature.",
)

TOPOLOGIES = (
    Topology(
        key="zener_source",
        order=20,
        title="Zener-referenced emitter-degenerated source",
        description=("One transistor with an emitter resistor, its base held by a zener fed through "
                     "R_Z from the supply (PWL zener, base-current loading included). NPN sinks, "
                     "PNP sources."),
        polarities=("npn", "pnp"),
        transistors=("Q1",),
        output_transistor="Q1",
        # default: a 3.3 mA sink from 15 V, 5.6 V zener (illustrative values of our own)
        values=((_feed(2.7e3), _emitter(1.5e3)) + _zener_values(5.6, 15.0, 0.5e-3)
                + _supply_and_load(15.0, 7.5)),
        simplifications=_simplifications("stiff zener, fixed V_BE: α(V_Z0 − V_BE)/R_E",
                                         SOURCE_THEVENIN, linearised=False),
        build=build_zener,
        guess=guess,
        draw=draw_zener,
        limits=zener_limits,
        notes=ZENER_NOTES,
        budget_labels={"V_Z0": "zener voltage TC_Z"},
        extras={"r_out_hybrid_pi": "R_out, hybrid-π form with R_B = R_Z ‖ r_z"},
    ),
    Topology(
        key="diode_string_source",
        order=21,
        title="Diode-string-referenced emitter-degenerated source",
        description=("One transistor with an emitter resistor, its base held by a string of n forward "
                     "diodes fed through R_Z (exponential diode law with its own temperature law). "
                     "NPN sinks, PNP sources."),
        polarities=("npn", "pnp"),
        transistors=("Q1",),
        output_transistor="Q1",
        # default: about 2 mA from 12 V with two diodes
        values=(_feed(10e3), _emitter(330.0), N_DIODES) + DIODE_VALUES + _supply_and_load(12.0, 6.0),
        simplifications=_simplifications("stiff string, each drop V_BE(on): α(n − 1)V_BE/R_E",
                                         SOURCE_LINEARISED, linearised=True),
        build=build_diode_string,
        guess=guess_string,
        draw=draw_diode_string,
        notes=DIODE_NOTES,
        budget_labels={"I_SD": "diode saturation current I_SD"},
        extras={"r_out_hybrid_pi": "R_out, hybrid-π form with R_B = R_Z ‖ r_string"},
    ),
    Topology(
        key="zener_diode_source",
        order=22,
        title="Zener-plus-diode-referenced emitter-degenerated source",
        description=("One transistor with an emitter resistor, its base held by a zener in series "
                     "with one forward diode, fed through R_Z: the diode's drift cancels V_BE's to "
                     "first order. NPN sinks, PNP sources."),
        polarities=("npn", "pnp"),
        transistors=("Q1",),
        output_transistor="Q1",
        # default: about 2 mA from 24 V, a 5.6 V zener plus one diode
        values=((_feed(3.3e3), _emitter(2.7e3)) + _zener_values(5.6, 20.0, 0.2e-3) + DIODE_VALUES
                + _supply_and_load(24.0, 12.0)),
        simplifications=_simplifications("stiff reference, diode cancels V_BE: αV_Z0/R_E",
                                         SOURCE_LINEARISED, linearised=True),
        build=build_zener_diode,
        guess=guess,
        draw=draw_zener_diode,
        limits=zener_limits,
        notes=ZENER_NOTES + (
            "First-order V_BE cancellation needs the diode and Q1 at the same temperature; "
            "mount them together.",),
        budget_labels={"V_Z0": "zener voltage TC_Z", "I_SD": "diode saturation current I_SD"},
        extras={"r_out_hybrid_pi": "R_out, hybrid-π form with R_B = R_Z ‖ (r_z + r_d)"},
    ),
)
