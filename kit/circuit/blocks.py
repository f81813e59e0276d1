"""Pieces several circuits share, written once: drives, loops, closed-form laws, R_out forms.

* :func:`hand_vbe` — the hand-analysis ``V_BE(on)`` and its drift;
* :func:`reference_current` — an ideal reference current with its drift, as a part;
* :func:`divider_drive` — the Thevenin equivalent of a resistive divider;
* :func:`junction_behind_resistor` — the current of a junction (or string)
  in series with a resistor across a voltage, in Wright-ω form;
* :func:`degenerated_output_resistance` — R_out of an emitter-degenerated stage;
* :func:`nodal_output_resistance` — the exact small-signal R_out of a
  circuit by nodal analysis of its parts' small-signal models;
* :func:`positive_or` — a closed-form current made safe for a logarithm in a
  starting point.

All symbolic (SymPy); the code generator compiles what a circuit uses.
"""

from __future__ import annotations

from functools import lru_cache


# --- functions the code generator prints specially --------------------------------

@lru_cache(maxsize=1)
def wright_omega():
    """The Wright omega function ``ω(x) = W0(e^x)`` as a SymPy function class (created once).

    It avoids the overflow of ``e^x`` in Lambert-W forms (Corless & Jeffrey,
    "The Wright ω function", 2002); the generated code calls SciPy's.
    """
    import sympy as sp

    class wright_omega(sp.Function):  # noqa: N801 - reads like the math
        """Wright omega, ``ω(x) = W0(e^x)``."""

        def fdiff(self, argindex=1):
            w = self.func(*self.args)
            return w / (1 + w)

        def _latex(self, printer):
            return r"\omega\left(%s\right)" % printer._print(self.args[0])

    return wright_omega


@lru_cache(maxsize=1)
def _positive_or_class():
    import sympy as sp

    class positive_or(sp.Function):  # noqa: N801
        """``x`` where it is finite and positive, else ``fallback`` (starting points only)."""

        nargs = 2

    return positive_or


def positive_or(expression, fallback=1e-9):
    """A current made safe for a logarithm: itself where finite and positive, else ``fallback``.

    For starting points of the solve only (far outside compliance a closed
    form may be negative or undefined).
    """
    import sympy as sp

    return _positive_or_class()(expression, sp.Float(fallback))


# --- drives and laws ---------------------------------------------------------------------

def hand_vbe(c):
    """The hand-analysis ``V_BE(on)`` with its drift, ``v_be_on + v_be_tc (T - T0)`` (closed forms only)."""
    law = c.parameter("v_be_on") + c.parameter("v_be_tc") * (c.temp - c.t_ref)
    return c.operating_value("V_BE_on", law, latex="V_{BE(on)}", budget="hand-analysis V_BE(on)")


def reference_current(c, into, *, sink=True, name="I_REF", supply="cc"):
    """An ideal reference current ``i_ref (1 + i_ref_tc (T - T0))`` as a part.

    A sinking circuit is fed from the supply rail ``supply`` into node
    ``into``; a sourcing one draws the current out of ``into`` to 0 V.
    """
    current = c.drifting(name, "i_ref", latex="I_{REF}", budget="reference current I_REF")
    rail = supply if sink else "0"
    ends = (rail, into) if sink else (into, rail)
    c.current_source(name, *ends, current)
    return current


def divider_drive(v_top, r_top, r_bottom, *, across_bottom=True):
    """``(V_TH, R_TH)`` of a divider fed by ``v_top``.

    ``V_TH`` is the voltage across the bottom leg (``v_top R_bottom/(R_top +
    R_bottom)``) or, with ``across_bottom=False``, across the top leg — the
    drive of a PNP stage measured from the supply.  ``R_TH = R_top ‖ R_bottom``.
    """
    drive = v_top * (r_bottom if across_bottom else r_top) / (r_top + r_bottom)
    return drive, r_top * r_bottom / (r_top + r_bottom)


def parallel(a, b):
    """``a ‖ b``."""
    return a * b / (a + b)


def junction_behind_resistor(voltage, resistance, slope, saturation):
    """Current of ``R I + slope ln(I / I_S) = V``: a junction behind a resistor, in Wright-ω form.

    ``slope`` is ``n V_T`` of the junction (``count n V_T`` for a string);
    the solution ``I = (slope/R) ω(V/slope + ln(I_S R/slope))`` is exact for
    the exponential law without the "−1" (Banwell & Jayakumar, Electron.
    Lett. 36, 2000, for the diode with series resistance).

    Examples
    --------
    >>> import sympy as sp
    >>> v, r, s, i_s = sp.symbols("V R s I_S", positive=True)
    >>> i = junction_behind_resistor(v, r, s, i_s)
    >>> residual = (r * i + s * sp.log(i / i_s) - v).subs({v: 1, r: 1e3, s: 0.025, i_s: 1e-14})
    >>> abs(float(residual.replace(wright_omega(), lambda x: sp.LambertW(sp.exp(x))))) < 1e-12
    True
    """
    import sympy as sp

    omega = wright_omega()
    return slope / resistance * omega(voltage / slope + sp.log(saturation * resistance / slope))


def degenerated_output_resistance(r_o, beta, r_pi, r_e, r_b):
    """``r_o [1 + β R_E/(R_E + r_π + R_B)] + R_E ‖ (r_π + R_B)``: R_out of a degenerated stage.

    Exact for the hybrid-π model (no r_μ) with the base returned through R_B
    and the emitter through R_E; for ``R_B = 0`` it is Sedra & Smith's
    ``r_o [1 + g_m (R_E‖r_π)] + R_E‖r_π`` (*Microelectronic Circuits*, from
    memory; UC Berkeley EE105 notes on emitter degeneration).

    Examples
    --------
    >>> round(degenerated_output_resistance(1e5, 100.0, 2500.0, 1e3, 0.0) / 1e6, 4)
    2.9579
    """
    return r_o * (1 + beta * r_e / (r_e + r_pi + r_b)) + r_e * (r_pi + r_b) / (r_e + r_pi + r_b)


# --- small-signal nodal analysis -------------------------------------------------------

def nodal_output_resistance(c, parts=None):
    """Exact small-signal output resistance of circuit ``c`` at its exact point (SymPy).

    Each part contributes its kind's small-signal model (hybrid-π for a BJT:
    ``i_b = v_be/r_π``, ``i_c = g_m v_be + v_ce/r_o``; a conductance for a
    resistor, a zener or a diode; an op-amp output held at ``A (v_+ − v_−)``);
    rails are AC grounds and ideal current sources open circuits.  A test
    voltage drives the output node; the unknown nodes float.  The network is
    solved in placeholder symbols (fast), then the point's expressions are
    put in.

    Parameters
    ----------
    c : Circuit
    parts : iterable of str, optional
        The parts to include (default: all).
    """
    import sympy as sp

    names = list(c.parts) if parts is None else list(parts)
    floating = list(c.kcl) + list(c.driven)
    output = c._output["node"]
    index = {n: k for k, n in enumerate(floating)}
    size = len(floating)
    matrix = sp.zeros(size, size)
    rhs = sp.zeros(size, 1)
    test_current = []  # (node or None for the output itself, coefficient)
    placeholders = {}
    driven_rows = set()

    def placeholder(value):
        symbol = sp.Symbol(f"_ss{len(placeholders)}", positive=True)
        placeholders[symbol] = value
        return symbol

    def transconductance(a, b, ctrl_plus, ctrl_minus, g):
        """A current g (v_ctrl+ - v_ctrl-) leaving node a and entering node b."""
        for node, sign in ((a, 1), (b, -1)):
            for ctrl, csign in ((ctrl_plus, 1), (ctrl_minus, -1)):
                value = sign * csign * g
                if node in index and index[node] not in driven_rows:
                    if ctrl in index:
                        matrix[index[node], index[ctrl]] += value
                    elif ctrl == output:
                        rhs[index[node]] -= value
                elif node == output and (ctrl in index or ctrl == output):
                    test_current.append((ctrl if ctrl in index else None, value))

    elements = []
    for name in names:
        part = c.parts[name]
        for element in part.kind.small_signal_stamp(part.q, part.symbols):
            where = {t: part.nodes[t] for t in part.kind.terminals}
            elements.append((element, where))
    # Driven nodes first, so that their rows hold the driver's law alone.
    for (element, where) in elements:
        if element[0] == "vcvs":
            _, out, plus, minus, gain = element
            row = index[where[out]]
            driven_rows.add(row)
            gain = placeholder(gain)
            matrix[row, row] += 1
            for ctrl, sign in ((where[plus], -1), (where[minus], 1)):
                if ctrl in index:
                    matrix[row, index[ctrl]] += sign * gain
                elif ctrl == output:
                    rhs[row] -= sign * gain
    for (element, where) in elements:
        if element[0] == "g":
            _, a, b, g = element
            g = placeholder(g)
            transconductance(where[a], where[b], where[a], where[b], g)
        elif element[0] == "gm":
            _, a, b, ctrl_plus, ctrl_minus, g = element
            transconductance(where[a], where[b], where[ctrl_plus], where[ctrl_minus], placeholder(g))
    voltages = matrix.LUsolve(rhs) if size else []
    current = sum((value * (1 if ctrl is None else voltages[index[ctrl]]) for ctrl, value in test_current),
                  sp.Integer(0))
    return (1 / current).xreplace(placeholders)


__all__ = ["wright_omega", "positive_or", "hand_vbe", "reference_current", "divider_drive", "parallel",
           "junction_behind_resistor", "degenerated_output_resistance", "nodal_output_resistance"]


def held_node(c, node, voltage, *, ramped=()):
    """Node ``node`` held at ``voltage``, an expression of operating values.

    A rail (:meth:`kit.circuit.Circuit.rail`) holds a node at an expression
    of parameters; this holds one at an expression of operating values that
    the circuit already defines — the + input of an op-amp at a drifting set
    voltage, or at that voltage below the supply.  The node has no unknown
    and no Kirchhoff equation, and it is an AC ground for
    :func:`nodal_output_resistance`, as a rail is.

    ``ramped`` names the operating values in ``voltage`` that are sources of
    the circuit (a set voltage): the solve's source stepping ramps them up
    with the rails, so that the node never starts above a stepped supply.

    Examples
    --------
    >>> from kit.circuit import Circuit
    >>> c = Circuit("npn", "n")
    >>> c.rail("cc", c.parameter("v_supply"))
    >>> v_set = c.drifting("V_SET", "v_set")
    >>> held_node(c, "plus", c.voltages["cc"] - v_set, ramped=(v_set,))
    >>> c.voltages["plus"], c.sources
    (V_CC - V_SET, [V_CC, V_SET])
    """
    c.voltages[node] = voltage
    c.sources.extend(ramped)


__all__ += ["held_node"]


# --- starting points ---------------------------------------------------------------------

def start_from_rail(c, rail, heights):
    """Declare starting voltages as heights from the emitter rail ``rail``, toward the other rail.

    ``heights`` maps unknown nodes to SymPy expressions (volts, positive
    toward the far rail): above 0 V for a sinking (``n``) circuit, below
    V_CC for its sourcing (``p``) mirror image, so one set of heights serves
    both polarities.

    Examples
    --------
    >>> from kit.circuit import Circuit
    >>> c = Circuit("pnp", "p")
    >>> c.rail("cc", c.parameter("v_supply"))
    >>> _ = c.node("b")
    >>> start_from_rail(c, "cc", {"b": 0.6})
    >>> c.starts["b"]
    V_CC - 0.6
    """
    sign = 1 if c.sense == "n" else -1
    for node, height in heights.items():
        c.start(node, c.voltages[rail] + sign * height)


__all__.append("start_from_rail")
