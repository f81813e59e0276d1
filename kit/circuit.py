"""Write a topology's exact equations as a small list of parts between nodes.

A topology module describes its circuit with a :class:`Circuit`: rails and
imposed voltages, unknown nodes, resistors (with TCR), transistors and
current sources.  :meth:`Circuit.equations` then forms Kirchhoff's current
law at every unknown node — the exact residuals ``F(x, q) = 0`` — together
with the map from the designer's parameters ``p`` (values at the reference
temperature) to the operating values ``q`` at the temperature of the point.

Everything here is symbolic (SymPy); nothing numeric happens until
:mod:`kit.derive` compiles the result.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import sympy as sp

from kit.devices import bjt


@dataclass
class Equations:
    """The exact large-signal equations of one topology and polarity.

    Attributes
    ----------
    unknowns : list of sympy.Symbol
        Node voltages solved for (``x``).
    residuals : list of sympy.Expr
        KCL at each unknown node (currents leaving, A); zero at a solution.
    scales : list of sympy.Expr
        Sum of the magnitudes of the currents at each node, to judge
        convergence relative to what flows there.
    operating : dict
        Operating symbol ``q`` -> expression in the parameter symbols ``p``.
    parameters : list of sympy.Symbol
        Parameter symbols, named exactly as the public parameter names.
    output : sympy.Expr
        Output current in ``x`` and ``q``, positive in the topology's sense
        (into the output of a sink, out of the output of a source).
    load : sympy.Symbol
        Operating symbol of the load voltage (for ``R_out``).
    output_sign : int
        +1 for a sink (current rises with load voltage), -1 for a source.
    transistors : dict
        Name -> dict of the device's exported quantities (for a BJT the
        normalised ``v_be, v_bc, v_ce, i_c, i_b``).
    kinds : dict
        Name -> kind of device (a key of :data:`kit.devices.KINDS`).
    extras : dict
        Further named expressions in ``x`` and ``q`` (small-signal forms).
    closed_forms : dict
        Simplification key -> explicit output-current expression in ``q``.
    """

    unknowns: list
    residuals: list
    scales: list
    operating: dict
    parameters: list
    output: sp.Expr
    load: sp.Symbol
    output_sign: int
    transistors: dict
    kinds: dict
    extras: dict = field(default_factory=dict)
    closed_forms: dict = field(default_factory=dict)


class Circuit:
    """Builder of :class:`Equations` from parts between named nodes.

    Parameters
    ----------
    polarity : {"npn", "pnp"}
        The topology's polarity (its transistors may still mix polarities).

    Examples
    --------
    A resistor from a 5 V rail into one unknown node held by a second
    resistor to 0 V gives one KCL residual:

    >>> c = Circuit("npn")
    >>> c.rail("cc", c.parameter("v_supply"))
    >>> c.rail("0", 0)
    >>> _ = c.node("m")
    >>> _ = c.resistor("R1", "cc", "m", "r1")
    >>> _ = c.resistor("R2", "m", "0", "r2")
    >>> c.kcl["m"]
    [-(V_CC - V_m)/R1, V_m/R2]
    """

    def __init__(self, polarity):
        self.polarity = polarity
        self.voltages = {}
        self.kcl = {}
        self.operating = {}
        self.parameters = {}
        self.transistors = {}
        self.kinds = {}
        self.driven = {}
        self.temp = self.parameter("temp")
        self.t_ref = self.parameter("t_ref")
        self.v_t = sp.Symbol("V_T", positive=True)
        self.operating[self.v_t] = bjt.BOLTZMANN_OVER_CHARGE * self.temp

    # -- parameters -------------------------------------------------------
    def parameter(self, name):
        """The symbol of public parameter ``name`` (created once)."""
        if name not in self.parameters:
            self.parameters[name] = sp.Symbol(name, real=True)
        return self.parameters[name]

    def operating_value(self, symbol_name, expression):
        """An operating symbol ``symbol_name`` defined by ``expression`` in parameters."""
        symbol = sp.Symbol(symbol_name, real=True)
        self.operating[symbol] = expression
        return symbol

    # -- nodes ------------------------------------------------------------
    def rail(self, node, voltage):
        """A node held at ``voltage`` (a parameter-derived expression or a number).

        A parameter expression becomes an operating symbol named after the node
        (``vcc`` -> ``V_CC``) so sensitivities to it are reported.
        """
        if isinstance(voltage, (int, float)):
            self.voltages[node] = sp.Integer(voltage) if voltage == int(voltage) else sp.Float(voltage)
        else:
            self.voltages[node] = self.operating_value(f"V_{node.upper()}", voltage)

    def node(self, node):
        """An unknown node; its voltage is solved for."""
        symbol = sp.Symbol(f"V_{node}", real=True)
        self.voltages[node] = symbol
        self.kcl[node] = []
        return symbol

    def driven_node(self, node, expression):
        """An unknown node whose voltage is set by ``expression`` (an ideal driver).

        Its residual is ``V_node - expression`` instead of KCL: the driver (an
        op-amp output, say) supplies whatever current the node needs, so the
        parts' currents at this node are not summed.
        """
        symbol = sp.Symbol(f"V_{node}", real=True)
        self.voltages[node] = symbol
        self.driven[node] = (symbol, expression)
        return symbol

    def _leaving(self, node, current):
        if node in self.kcl:
            self.kcl[node].append(current)
        elif node == self._output_node:
            self._output_terms.append(current)

    _output_node = None
    _output_terms: list

    def output(self, node, sign):
        """Declare ``node`` the output port (already a rail, held at the load voltage).

        ``sign`` is +1 when the circuit sinks the output current, -1 when it
        sources it.  Call before adding the parts that touch the node.
        """
        self._output_node = node
        self._output_terms = []
        self._output_sign = sign
        self._load = self.voltages[node]

    # -- parts ------------------------------------------------------------
    def resistor(self, label, a, b, parameter, tcr_parameter=None):
        """Resistor ``label`` between nodes ``a`` and ``b``.

        Its value is parameter ``parameter`` at the reference temperature;
        at the operating temperature ``R (1 + TCR (T - T_ref))`` with the TCR
        parameter ``tcr_<parameter>`` (or ``tcr_parameter``).
        """
        r_ref = self.parameter(parameter)
        tcr = self.parameter(tcr_parameter or f"tcr_{parameter}")
        resistance = sp.Symbol(label, positive=True)
        self.operating[resistance] = r_ref * (1 + tcr * (self.temp - self.t_ref))
        current = (self.voltages[a] - self.voltages[b]) / resistance
        self._leaving(a, current)
        self._leaving(b, -current)
        return resistance

    def current_source(self, a, b, current):
        """A current ``current`` (expression in operating symbols) flowing a -> b."""
        self._leaving(a, current)
        self._leaving(b, -current)

    def transistor(self, name, polarity, base, collector, emitter, area=1):
        """Bipolar transistor ``name``; ``area`` scales its I_S (area ratio N)."""
        symbols = bjt.operating_symbols(name)
        mapping, _ = bjt.temperature_map(name, self.temp, self.t_ref, area)
        for reference in mapping.values():
            for symbol in reference.free_symbols:
                self.parameters.setdefault(symbol.name, symbol)
        self.operating.update(mapping)
        law = bjt.junction_laws(polarity, self.voltages[base], self.voltages[collector],
                                self.voltages[emitter], symbols, symbols["V_T"])
        self._leaving(collector, law["into_c"])
        self._leaving(base, law["into_b"])
        self._leaving(emitter, law["into_e"])
        self.add_device(name, bjt.KIND, {k: law[k] for k in bjt.QUANTITIES})
        return symbols

    def mosfet(self, name, polarity, gate, drain, source, scale=1):
        """MOSFET ``name`` (square law, :mod:`kit.devices.mosfet`); ``scale`` multiplies its W/L.

        ``polarity`` is ``"npn"`` for an NMOS, ``"pnp"`` for a PMOS.  The gate
        draws no current, so it adds nothing to the KCL of its node.
        """
        from kit.devices import mosfet

        symbols = mosfet.operating_symbols(name)
        mapping, _ = mosfet.temperature_map(name, self.temp, self.t_ref, scale)
        for reference in mapping.values():
            for symbol in reference.free_symbols:
                self.parameters.setdefault(symbol.name, symbol)
        self.operating.update(mapping)
        law = mosfet.channel_laws(polarity, self.voltages[gate], self.voltages[drain],
                                  self.voltages[source], symbols, symbols["V_T"])
        self._leaving(drain, law["into_d"])
        self._leaving(source, law["into_s"])
        self.add_device(name, mosfet.KIND, {k: law[k] for k in mosfet.QUANTITIES})
        return symbols

    def small_signal(self, name):
        """Hybrid-π g_m, r_π, r_o and β = I_C/I_B of BJT ``name`` at the exact point.

        Same model as the exact equations (forward Early factor on the
        transport current), each with the transistor's own junction V_T:
        ``g_m = I_C/V_T``, ``r_π = V_T/I_B``, ``r_o = (V_A + V_CE)/I_C``.
        """
        j = self.transistors[name]
        v_t = sp.Symbol(f"V_T_{name}", positive=True)
        v_a = sp.Symbol(f"V_A_{name}", positive=True)
        return {"g_m": j["i_c"] / v_t, "r_pi": v_t / j["i_b"], "r_o": (v_a + j["v_ce"]) / j["i_c"],
                "beta": j["i_c"] / j["i_b"]}

    def add_device(self, name, kind, quantities):
        """Register a device's exported quantities (for device kinds added elsewhere)."""
        if name in self.transistors:
            raise ValueError(f"device {name} added twice")
        self.transistors[name] = quantities
        self.kinds[name] = kind

    # -- result -----------------------------------------------------------
    def equations(self, *, extras=None, closed_forms=None, hand_parameters=()):
        """Collect the :class:`Equations`.

        ``hand_parameters`` names parameters used only by closed forms (a
        hand-analysis V_BE, say), so they are part of the parameter vector.
        """
        for name in hand_parameters:
            self.parameter(name)
        residuals = [sp.Add(*terms) for terms in self.kcl.values()]
        scales = [sp.Add(*[sp.Abs(t) for t in terms]) for terms in self.kcl.values()]
        for symbol, expression in self.driven.values():
            residuals.append(symbol - expression)
            # Term by term: a large gain times a small difference rounds at the
            # size of each term, not of their sum.
            terms = sp.Add.make_args(sp.expand(expression))
            scales.append(sp.Abs(symbol) + sp.Add(*[sp.Abs(t) for t in terms]))
        # Unknowns in the order of their residuals, so the Jacobian stays diagonal-heavy.
        order = [self.voltages[n] for n in self.kcl] + [s for s, _ in self.driven.values()]
        return Equations(
            unknowns=order,
            residuals=residuals,
            scales=scales,
            operating=dict(self.operating),
            parameters=list(self.parameters.values()),
            output=self._output_sign * sp.Add(*self._output_terms),
            load=self._load,
            output_sign=self._output_sign,
            transistors=dict(self.transistors),
            kinds=dict(self.kinds),
            extras=dict(extras or {}),
            closed_forms=dict(closed_forms or {}),
        )


def degenerated_output_resistance(r_o, beta, r_pi, r_e, r_b):
    """``r_o [1 + β R_E/(R_E + r_π + R_B)] + R_E || (r_π + R_B)``: R_out of a degenerated stage.

    Exact for the hybrid-π model (no r_μ) with the base returned through R_B
    and the emitter through R_E; for ``R_B = 0`` it is Sedra & Smith's
    ``r_o [1 + g_m (R_E||r_π)] + R_E||r_π`` (*Microelectronic Circuits*, from
    memory; UC Berkeley EE105 notes on emitter degeneration).

    Examples
    --------
    >>> round(degenerated_output_resistance(1e5, 100.0, 2500.0, 1e3, 0.0) / 1e6, 4)
    2.9579
    """
    return r_o * (1 + beta * r_e / (r_e + r_pi + r_b)) + r_e * (r_pi + r_b) / (r_e + r_pi + r_b)
