"""Reference-biased, emitter-degenerated single-transistor sources (NPN sink, PNP source).

The base is held by a voltage reference fed through ``R_Z`` from the supply;
the emitter resistor ``R_E`` turns the reference minus ``V_BE`` into the
output current.  Three references, one topology each, every reference a
part with its own law (:mod:`kit.devices.zener`, :mod:`kit.devices.diode`):

``zener_source``
    a zener ``D1``, piecewise linear ``V_Z = V_Z0 + r_z I_Z`` above its knee;
``diode_string_source``
    a string ``D1`` of ``count`` equal forward diodes, one junction of
    emission coefficient ``count n``;
``zener_diode_source``
    a zener ``D1`` in series with a forward diode ``D2``: ``V_B = V_Z + V_D``,
    so the emitter sits near ``V_Z`` and the diode's drift cancels the
    ``V_BE`` drift to first order (Tietze & Schenk, *Electronic Circuits*,
    zener references, from memory).

NPN sink::

    V_CC --R_Z--+-- B (Q1 base)        load -> out = Q1 collector
                |                      Q1 emitter = E --R_E-- 0
                reference (B -> 0)

PNP source: the mirror image, reference from V_CC to B, R_Z from B to 0,
R_E from V_CC to E, the collector drives the load to 0.  Unknowns: V_B,
V_E (and V_M between zener and diode).

Closed forms.  A PWL zener fed by ``R_Z`` is a Thevenin source
``V_TH = (V_CC r_z + V_Z0 R_Z)/(R_Z + r_z)``, ``R_TH = R_Z || r_z`` (across
the reference, either polarity), so the divider-biased forms carry over
exactly (derived here).  A junction reference is linearised at its current
without base-current loading, found in closed form from
``R I + count n V_T ln(I/I_S) = V``
(:func:`kit.circuit.blocks.junction_behind_resistor`; derived here, the
series-resistance diode solution of Banwell & Jayakumar, Electron. Lett. 36,
2000); its small-signal resistance then completes ``R_TH``.  The
stiff-reference forms are the hand rule ``I = alpha (V_ref - V_BE)/R_E``
with every junction drop at ``V_BE(on)`` (Tietze & Schenk, from memory).

Output resistance: the hybrid-π form of the divider source with the base
returned through ``R_B = R_Z || r_ref`` (``r_ref`` the reference's
small-signal resistance at the exact operating point).

Examples
--------
A 5.6 V zener with 1.5 kΩ in the emitter sinks about (5.6 - 0.68)/1.5k:

>>> import kit
>>> ev = kit.evaluate(kit.design("zener_source", r_e="1k5", devices={"D1": {"v_z0": "5.6 V"}}))
>>> round(ev.i_out * 1e3, 1)
3.3
>>> ev.compliance.low.part, ev.compliance.low.cause
('Q1', 'saturation')
"""

from __future__ import annotations

from kit.circuit.blocks import (degenerated_output_resistance, hand_vbe, junction_behind_resistor, parallel,
                                positive_or)
from kit.devices.bjt import FORWARD_ACTIVE, KIND as BJT, NO_EARLY, VBE_FIXED
from kit.devices.diode import KIND as DIODE
from kit.devices.zener import KIND as ZENER, STIFF_REFERENCE
from kit.topologies import common
from kit.topologies.base import Topology, Value
from kit.topologies.drawing import UNIT_WIDTH, make_room
from kit.words import ISOTHERMAL, assumption

REFERENCE_LINEARISED = assumption(
    "reference_linearised", "junction reference linearised at its current without base-current loading")

SOURCE_HAND = "Tietze & Schenk, Electronic Circuits, zener-referenced sources (from memory)"
SOURCE_THEVENIN = ("derived here: Thevenin of the PWL zener into the divider form of "
                   "Sedra & Smith, Microelectronic Circuits, BJT biasing (from memory)")
SOURCE_OMEGA = "derived here; cf. Banwell & Jayakumar, Electron. Lett. 36 (2000)"
SOURCE_LINEARISED = ("derived here: reference linearised at its unloaded current "
                     "(Banwell & Jayakumar ω form), then the divider form")


# --- values -------------------------------------------------------------------

def _values(r_feed, r_e, v_supply, v_load):
    return (
        Value("r_feed", "Ω", "feed resistor R_Z from the supply to the reference", r_feed, 1e-2, 1e9,
              "resistor"),
        Value("r_e", "Ω", "emitter resistor", r_e, 1e-2, 1e9, "resistor"),
        Value("v_supply", "V", "supply voltage", v_supply, 0.1, 1000.0, "supply"),
        Value("v_load", "V", "collector (load) voltage against 0 V", v_load, -1000.0, 1000.0, "load"),
    )


# This topology's own defaults for its parts (illustrative values of our own).
ZENER_TYPICAL = dict(v_z0=5.6, r_z=15.0, tc_z=0.5e-3, i_z_min=1e-3, p_z_max=0.5)
DIODE_TYPICAL = dict(i_s=2e-9, n=1.8, count=1.0, i_s_temp_exponent=3.0, e_g=1.11)
PAIRED_ZENER_TYPICAL = ZENER_TYPICAL | dict(r_z=20.0, tc_z=0.2e-3)


# --- the circuit -----------------------------------------------------------------

def _source(c):
    """Rails, R_Z, R_E, Q1 and V_BE(on); returns the pieces and the reference's upper and lower node."""
    npn = c.supply_and_load()
    c.node("b")
    c.node("e")
    if npn:
        r_feed = c.resistor("R_Z", "cc", "b", "r_feed")
        r_e = c.resistor("R_E", "e", "0", "r_e")
    else:
        r_feed = c.resistor("R_Z", "b", "0", "r_feed")
        r_e = c.resistor("R_E", "cc", "e", "r_e")
    q1 = c.add(BJT, "Q1", b="b", c="out", e="e")
    s = {"r_feed": r_feed, "r_e": r_e, "q1": q1, "v_on": hand_vbe(c)}
    return s, ("b", "0") if npn else ("cc", "b")


def _slope(diode):
    """``count n V_T`` of a diode part: its string is one junction of that emission coefficient."""
    return diode["N"] * diode["n"] * diode["V_T"]


def _forms(c, s, drive, r_th, r_reference, stiff_drive, stiff, linearised=False):
    """The three closed forms for a Thevenin drive ``drive`` behind ``r_th``, and the hybrid-π R_out.

    ``r_reference`` is the reference's exact small-signal resistance; ``stiff``
    is ``(label, extra assumptions)`` of the stiff-reference form.
    """
    q1, r_e, v_on = s["q1"], s["r_e"], s["v_on"]
    beta = q1["beta"]
    k = (r_th + (beta + 1) * r_e) / beta
    extra = (REFERENCE_LINEARISED.key,) if linearised else ()
    c.closed_form("stiff_reference", beta / (beta + 1) * (stiff_drive - v_on) / r_e, stiff[0],
                  (STIFF_REFERENCE.key, VBE_FIXED.key, NO_EARLY.key) + stiff[1], SOURCE_HAND)
    c.closed_form("fixed_vbe", beta * (drive - v_on) / (r_th + (beta + 1) * r_e),
                  "fixed V_BE, reference loaded by the base current", (VBE_FIXED.key, NO_EARLY.key) + extra,
                  SOURCE_LINEARISED if linearised else SOURCE_THEVENIN)
    # Q1 at its own junction temperature, so the form holds with self-heating too.
    exponential = c.closed_form(
        "exponential", junction_behind_resistor(drive, k, q1["V_T"], q1["I_S"]),
        "exponential junction (Wright ω form)", (NO_EARLY.key, FORWARD_ACTIVE.key) + extra,
        SOURCE_LINEARISED if linearised else SOURCE_OMEGA)
    point = q1.small_signal
    r_base = parallel(s["r_feed"], r_reference)
    c.extra("r_out_hybrid_pi",
            degenerated_output_resistance(point["r_o"], point["beta"], point["r_pi"], r_e, r_base),
            "R_out, hybrid-π form r_o[1 + βR_E/(R_E + r_π + R_B)] + R_E‖(r_π + R_B), "
            "R_B = R_Z ‖ r_reference")
    return exponential


def _start(c, s, current):
    """Start at Q1's base and emitter from a closed form of its current (clamped in saturation)."""
    return common.start_behind_emitter_resistor(c, s["q1"], current, s["r_e"])


def build_zener(c):
    """The zener-referenced source."""
    s, (top, bottom) = _source(c)
    d1 = c.add(ZENER, "D1", k=top, a=bottom, typical=ZENER_TYPICAL)
    v_z0, r_z, r_feed = d1["V_Z0"], d1["r_z"], s["r_feed"]
    drive = (c.voltages["cc"] * r_z + v_z0 * r_feed) / (r_feed + r_z)
    exponential = _forms(c, s, drive, parallel(r_feed, r_z), d1.small_signal["r_z"], v_z0,
                         ("stiff zener, fixed V_BE: α(V_Z0 − V_BE)/R_E", ()))
    _start(c, s, exponential)


def build_diode_string(c):
    """The diode-string-referenced source."""
    s, (top, bottom) = _source(c)
    d1 = c.add(DIODE, "D1", a=top, k=bottom, typical=DIODE_TYPICAL | {"count": 2.0})
    slope, r_feed, v_cc = _slope(d1), s["r_feed"], c.voltages["cc"]
    unloaded = junction_behind_resistor(v_cc, r_feed, slope, d1["I_S"])
    exponential = _forms(c, s, v_cc - r_feed * unloaded, parallel(r_feed, slope / unloaded),
                         d1.small_signal["r_d"], d1["N"] * s["v_on"],
                         ("stiff string, each drop V_BE(on): α(N_D − 1)V_BE(on)/R_E", ()), linearised=True)
    _start(c, s, exponential)


def build_zener_diode(c):
    """The zener-plus-diode-referenced source: NPN B -D2-> M -D1-> 0, PNP V_CC -D1-> M -D2-> B."""
    s, (top, bottom) = _source(c)
    c.node("m")
    if c.sense == "n":
        d2 = c.add(DIODE, "D2", a=top, k="m", typical=DIODE_TYPICAL)
        d1 = c.add(ZENER, "D1", k="m", a=bottom, typical=PAIRED_ZENER_TYPICAL)
    else:
        d1 = c.add(ZENER, "D1", k=top, a="m", typical=PAIRED_ZENER_TYPICAL)
        d2 = c.add(DIODE, "D2", a="m", k=bottom, typical=DIODE_TYPICAL)
    v_z0, r_z, r_feed, v_cc = d1["V_Z0"], d1["r_z"], s["r_feed"], c.voltages["cc"]
    slope = _slope(d2)
    unloaded = junction_behind_resistor(v_cc - v_z0, r_feed + r_z, slope, d2["I_S"])
    # Stiff: each diode drops V_BE(on) and one of them cancels Q1's, which needs both at one temperature.
    stiff = ("stiff reference, diode cancels V_BE: α(V_Z0 + (N_D − 1)V_BE(on))/R_E, αV_Z0/R_E for one diode",
             (ISOTHERMAL.key,))
    exponential = _forms(c, s, v_cc - r_feed * unloaded, parallel(r_feed, r_z + slope / unloaded),
                         d1.small_signal["r_z"] + d2.small_signal["r_d"], v_z0 + d2["N"] * s["v_on"], stiff,
                         linearised=True)
    v_b = _start(c, s, exponential)
    # The diode carries the feed current less Q1's base current.
    feed = (v_cc - v_b) / r_feed if c.sense == "n" else v_b / r_feed
    v_d = DIODE.start(d2.sense, positive_or(feed - exponential / s["q1"]["beta"]), d2.symbols)
    c.start("m", v_b - v_d if c.sense == "n" else v_b + v_d)


# --- schematics --------------------------------------------------------------------

DIODE_LENGTH = 1.5  # schemdraw units; a string of up to 8 stays on the page


def _draw(sheet, d, reference):
    """Schematic with present values; ``reference()`` draws the reference leg downwards."""
    import schemdraw.elements as elm

    npn = sheet.sink
    rail = elm.Vdd().label(sheet.supply())
    elm.Line().right(UNIT_WIDTH)
    elm.Line().left(UNIT_WIDTH).at(rail.start)
    if npn:
        elm.Resistor().down().label(sheet.label("r_feed", "R_Z"))
    else:
        reference()
    d.push()
    elm.Line().right(1.0)
    if npn:
        q = elm.BjtNpn(circle=True).anchor("base").label("Q1", loc="right")
        elm.Resistor().down().at(q.emitter).label(sheet.label("r_e", "R_E"), loc="bottom")
        elm.Ground()
        elm.Line().up(0.8).at(q.collector)
        elm.Dot(open=True).label("load (sink)", loc="right")
    else:
        q = elm.BjtPnp(circle=True).anchor("base").label("Q1", loc="right")
        elm.Resistor().up().at(q.emitter).toy(rail.start).label(sheet.label("r_e", "R_E"), loc="bottom")
        elm.Line().down(0.8).at(q.collector)
        elm.Dot(open=True).label("load (source)", loc="right")
    d.pop()
    if npn:
        reference()
    else:
        elm.Resistor().down().label(sheet.label("r_feed", "R_Z"))
    elm.Ground()


def _labelled(d, part, text):
    """Place ``part`` downwards with ``text`` on its left, and make room for the text."""
    placed = part.down().label(text)
    end = placed.end
    make_room(placed.center, "left", text)
    d.here = end  # make_room moved the cursor
    return placed


def _draw_zener(sheet, d):
    import schemdraw.elements as elm

    # Drawn cathode up: in breakdown the zener conducts from the upper node downwards.
    _labelled(d, elm.Zener().reverse(), f"D1\n{sheet.text('D1.v_z0')}\nr_z {sheet.text('D1.r_z')}")


def _draw_diodes(sheet, d, name):
    """Every diode of the string ``name``, one label for them all."""
    import schemdraw.elements as elm

    count = int(round(sheet[f"{name}.count"]))
    text = (f"{name if count == 1 else f'{name} ×{count}'}\n"
            f"I_S {sheet.text(f'{name}.i_s')}\nn {sheet[f'{name}.n']:g}")
    _labelled(d, elm.Diode().length(DIODE_LENGTH), text)
    for _ in range(count - 1):
        elm.Diode().down().length(DIODE_LENGTH)


def draw_zener(sheet, d):
    """Schematic of the zener-referenced source."""
    _draw(sheet, d, lambda: _draw_zener(sheet, d))


def draw_diode_string(sheet, d):
    """Schematic of the diode-string-referenced source (every diode drawn)."""
    _draw(sheet, d, lambda: _draw_diodes(sheet, d, "D1"))


def draw_zener_diode(sheet, d):
    """Schematic of the zener-plus-diode-referenced source (the diode next to the base)."""
    def reference():
        if sheet.sink:
            _draw_diodes(sheet, d, "D2")
            _draw_zener(sheet, d)
        else:
            _draw_zener(sheet, d)
            _draw_diodes(sheet, d, "D2")

    _draw(sheet, d, reference)


# --- the topologies ------------------------------------------------------------------

ZENER_NOTES = (
    "Check the zener and R_Z dissipation at the highest supply: P_Z = V_Z I_Z, P_RZ = (V_CC - V_Z)^2/R_Z.",
    "Zener avalanche noise is far above resistor noise; RC-filter the base for low-noise work.",
    "The PWL zener law holds above its knee current only (D1.i_z_min); compliance ends where I_Z falls "
    "below it.",
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
        # default: a 3.3 mA sink from 15 V, 5.6 V zener (illustrative values of our own)
        values=_values(2.7e3, 1.5e3, 15.0, 7.5),
        build=build_zener,
        draw=draw_zener,
        notes=ZENER_NOTES + common.SAFETY_NOTES,
    ),
    Topology(
        key="diode_string_source",
        order=21,
        title="Diode-string-referenced emitter-degenerated source",
        description=("One transistor with an emitter resistor, its base held by a string of forward "
                     "diodes fed through R_Z (exponential diode law with its own temperature law). "
                     "NPN sinks, PNP sources."),
        # default: about 2 mA from 12 V with two diodes
        values=_values(10e3, 330.0, 12.0, 6.0),
        build=build_diode_string,
        draw=draw_diode_string,
        notes=DIODE_NOTES + common.SAFETY_NOTES,
    ),
    Topology(
        key="zener_diode_source",
        order=22,
        title="Zener-plus-diode-referenced emitter-degenerated source",
        description=("One transistor with an emitter resistor, its base held by a zener in series "
                     "with one forward diode, fed through R_Z: the diode's drift cancels V_BE's to "
                     "first order. NPN sinks, PNP sources."),
        # default: about 2 mA from 24 V, a 5.6 V zener plus one diode
        values=_values(3.3e3, 2.7e3, 24.0, 12.0),
        build=build_zener_diode,
        draw=draw_zener_diode,
        notes=ZENER_NOTES + (
            "First-order V_BE cancellation needs the diode and Q1 at the same temperature; "
            "mount them together.",) + common.SAFETY_NOTES,
    ),
)
