"""Write a circuit's exact equations as parts between nodes.

A topology's ``build`` describes its circuit with a :class:`Circuit`: rails
and the load voltage, unknown nodes, and parts of any kind
(:mod:`kit.devices`): resistors, transistors, diodes, zeners, op-amps,
reference currents.  Every kind is added the same way, with
:meth:`Circuit.add`.  The circuit forms Kirchhoff's current law at every
unknown node — the exact residuals ``F(x, q) = 0`` — and the map from the
designer's parameters ``p`` (values at the reference temperature) to the
operating values ``q`` at the temperature of the point.

Beside the equations the circuit records what is derived from them
elsewhere: its parts (kind, polarity, terminals), the named closed forms
with the assumptions each makes, the small-signal forms, how every
operating symbol is written in equations and named in the tempco budget,
optional starting points for the solve, and the condition that picks the
valid branch of a self-biased cell.  Nothing is declared twice: a
topology's metadata is read off its circuit.

Everything here is symbolic (SymPy); nothing numeric happens until
:mod:`kit.model.codegen` compiles the result.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from kit.devices.base import BOLTZMANN_OVER_CHARGE
from kit.devices.resistor import RESISTOR, SOURCE
from kit.words import ASSUMPTIONS

if TYPE_CHECKING:  # SymPy loads only when a circuit is built (a cold cache)
    import sympy as sp


@dataclass
class Part:
    """One part placed in a circuit.

    ``symbols`` are its operating symbols by role (``part["beta"]``),
    ``q`` its exported quantities (``part.q["i_c"]``), ``nodes`` its
    terminals' nodes and ``params`` its flat parameter names by key.
    """

    name: str
    kind: object
    sense: str
    nodes: dict
    symbols: dict
    q: dict
    params: dict
    typical: dict = field(default_factory=dict)
    value: str | None = None  # the design value behind a resistor (``r_e``)

    def __getitem__(self, role):
        return self.symbols[role]

    @property
    def small_signal(self):
        """Small-signal parameters at the exact point (see the kind's ``small_signal``)."""
        return self.kind.small_signal(self.q, self.symbols)


@dataclass(frozen=True)
class ClosedForm:
    """A named simplification: the closed form a designer writes by hand, and what it assumes."""

    key: str
    expression: object
    label: str
    assumptions: tuple
    source: str


@dataclass
class Equations:
    """Everything a circuit says, collected for the code generator (see the module docstring)."""

    polarity: str
    unknowns: list
    residuals: list
    scales: list
    operating: dict
    parameters: list
    output: sp.Expr
    load: sp.Symbol
    output_sign: int
    output_part: str | None
    parts: dict
    closed_forms: list
    extras: dict
    extra_labels: dict
    labels: dict
    starts: dict
    valid: object
    sources: list


class Circuit:
    """Builder of :class:`Equations` from parts between named nodes.

    Parameters
    ----------
    polarity : str
        The design's polarity word (``"npn"``, ``"nmos"``, ...).
    sense : {"n", "p"}
        Whether the design's main parts are of the sinking (``n``) or the
        sourcing (``p``) kind; parts take it unless told otherwise.

    Examples
    --------
    A resistor from a 5 V rail into one unknown node held by a second
    resistor to 0 V gives one KCL residual:

    >>> c = Circuit("npn", "n")
    >>> c.rail("cc", c.parameter("v_supply"))
    >>> c.rail("0", 0)
    >>> _ = c.node("m")
    >>> _ = c.resistor("R1", "cc", "m", "r1")
    >>> _ = c.resistor("R2", "m", "0", "r2")
    >>> c.kcl["m"]
    [-(V_CC - V_m)/R1, V_m/R2]
    """

    def __init__(self, polarity, sense):
        self.polarity = polarity
        self.sense = sense
        self.voltages = {}
        self.kcl = {}
        self.operating = {}
        self.parameters = {}
        self.parts = {}
        self.driven = {}
        self.labels = {}  # operating symbol name -> (LaTeX, tempco-budget words)
        self.closed_forms = []
        self.extras = {}
        self.extra_labels = {}
        self.starts = {}
        self.valid = None
        self._output = None
        self._role_latex = {}
        self.sources = []  # operating symbols of rail voltages and reference currents
        self.temp = self.parameter("temp")
        self.t_ref = self.parameter("t_ref")
        self.v_t = self.operating_value("V_T", BOLTZMANN_OVER_CHARGE * self.temp, latex="V_T",
                                        budget="thermal voltage V_T = kT/q", positive=True)

    # -- parameters and operating values -------------------------------------
    def parameter(self, name):
        """The symbol of public parameter ``name`` (created once)."""
        import sympy as sp

        if name not in self.parameters:
            self.parameters[name] = sp.Symbol(name, real=True)
        return self.parameters[name]

    def operating_value(self, name, expression, *, latex=None, budget=None, positive=False):
        """An operating symbol ``name`` defined by ``expression`` in parameters.

        ``latex`` is how equations write it, ``budget`` how the tempco budget
        names it when it has a temperature law.
        """
        import sympy as sp

        symbol = sp.Symbol(name, positive=True) if positive else sp.Symbol(name, real=True)
        self.operating[symbol] = expression
        self.labels[name] = (latex or _default_latex(name), budget or "")
        return symbol

    def drifting(self, name, value, *, latex=None, budget=None):
        """Operating value ``name`` = parameter ``value`` × (1 + ``value``_tc (T − T0)).

        The common law of a set voltage or a reference current with a
        relative temperature coefficient.
        """
        law = self.parameter(value) * (1 + self.parameter(f"{value}_tc") * (self.temp - self.t_ref))
        return self.operating_value(name, law, latex=latex, budget=budget)

    # -- nodes --------------------------------------------------------------------
    def rail(self, node, voltage):
        """A node held at ``voltage`` (a parameter expression or a number).

        A parameter expression becomes an operating symbol named after the
        node (``cc`` -> ``V_CC``) so sensitivities to it are reported.
        """
        import sympy as sp

        if isinstance(voltage, (int, float)):
            self.voltages[node] = sp.Integer(voltage) if voltage == int(voltage) else sp.Float(voltage)
        else:
            self.voltages[node] = self.operating_value(f"V_{node.upper()}", voltage)
            self.sources.append(self.voltages[node])

    def supply_and_load(self, supply="cc", *, sinks=None):
        """Ground, the supply rail and the load rail; declare the load rail the output.

        The supply rail (``supply``, held at ``v_supply``) and the output rail
        ``out`` (held at ``v_load``) are what every current source here shares.
        ``sinks`` says whether the circuit sinks the output current; by default
        an n-sense circuit (NPN, NMOS) sinks it and a p-sense one sources it.
        Returns ``True`` for the n sense, which most builds branch on.

        Examples
        --------
        >>> c = Circuit("npn", "n")
        >>> c.supply_and_load()
        True
        >>> sorted(c.voltages)
        ['0', 'cc', 'out']
        """
        n_sense = self.sense == "n"
        self.rail("0", 0)
        self.rail(supply, self.parameter("v_supply"))
        self.rail("out", self.parameter("v_load"))
        self.output("out", 1 if (n_sense if sinks is None else sinks) else -1)
        return n_sense

    def node(self, node):
        """An unknown node; its voltage is solved for."""
        import sympy as sp

        symbol = sp.Symbol(f"V_{node}", real=True)
        self.voltages[node] = symbol
        self.kcl[node] = []
        self.labels[symbol.name] = (f"V_{{{node}}}", "")
        return symbol

    def output(self, node, sign, part=None):
        """Declare ``node`` (a rail held at the load voltage) the output port.

        ``sign`` is +1 when the circuit sinks the output current, -1 when it
        sources it.  ``part`` names the part whose dissipation the headline
        quotes (default: the transistor whose terminal is the output).
        Call before adding the parts that touch the node.
        """
        self._output = {"node": node, "sign": sign, "terms": [], "part": part}

    def _leaving(self, node, current):
        """A current (or a tuple of terms of one current) leaving ``node`` into a part."""
        terms = current if isinstance(current, tuple) else (current,)
        if node in self.kcl:
            self.kcl[node].extend(terms)
        elif self._output is not None and node == self._output["node"]:
            self._output["terms"].extend(terms)

    # -- parts -------------------------------------------------------------------
    def add(self, kind, name, *, sense=None, scale=1, typical=None, **terminals):
        """Place part ``name`` of ``kind`` with its terminals on nodes; return its :class:`Part`.

        ``sense`` defaults to the circuit's; ``"opposite"`` takes the other
        (the PNP mirror of an NPN core).  ``scale`` multiplies the part's
        size (an emitter-area or W/L ratio: a number or a parameter symbol).
        ``typical`` overrides the kind's typical values for this part in
        this topology (its defaults in new designs).

        Examples
        --------
        >>> from kit.devices import KINDS
        >>> c = Circuit("npn", "n")
        >>> c.rail("0", 0)
        >>> _ = c.node("b")
        >>> q = c.add(KINDS["bjt"], "Q1", b="b", c="b", e="0")
        >>> sorted(q.q)
        ['i_b', 'i_c', 'v_bc', 'v_be', 'v_ce']
        """
        if name in self.parts:
            raise ValueError(f"part {name} added twice")
        if sorted(terminals) != sorted(kind.terminals):
            raise ValueError(f"{name}: a {kind.title} has terminals {kind.terminals}, got {tuple(terminals)}")
        sense = {None: self.sense, "opposite": "p" if self.sense == "n" else "n"}.get(sense, sense)
        params = {p.name: self.parameter(f"{name}.{p.name}") for p in kind.params}
        rise = self.parameter(f"{name}.t_rise")
        symbols = kind.operating_symbols(name)
        mapping = kind.temperature_map(name, params, self.temp + rise, self.t_ref, scale)
        self.operating.update(mapping)
        for role, (prefix, latex, budget) in kind.symbol_roles.items():
            # The part's name joins the subscript only where two parts share the symbol
            # (settled in equations()).
            self._role_latex[f"{prefix}{name}"] = (prefix, latex, name)
            self.labels[f"{prefix}{name}"] = (latex, f"{budget} of {name}")
        currents, quantities = kind.stamp(sense, {t: self.voltages[n] for t, n in terminals.items()}, symbols)
        for terminal, current in currents.items():
            if isinstance(current, tuple) and current and current[0] == "drive":
                self._drive(terminals[terminal], current[1])
            else:
                self._leaving(terminals[terminal], current)
        part = Part(name, kind, sense, dict(terminals), symbols, quantities,
                    {p.name: f"{name}.{p.name}" for p in kind.params} | {"t_rise": f"{name}.t_rise"},
                    dict(typical or {}))
        self.parts[name] = part
        return part

    def _drive(self, node, expression):
        """``node`` is set by an ideal driver (an op-amp output): its residual is ``V - expression``."""
        if node not in self.kcl:
            raise ValueError(f"a driven node must be an unknown node: {node}")
        if self.kcl.pop(node):
            raise ValueError(f"node {node} is driven but other parts were added to it first")
        self.driven[node] = (self.voltages[node], expression)

    def resistor(self, label, a, b, value):
        """Resistor ``label`` between nodes ``a`` and ``b``, its value the design value ``value``.

        At the operating temperature it is ``R (1 + TCR (T - T_ref))`` with the
        TCR parameter ``tcr_<value>``; its power rating is ``p_rated_<value>``.
        Returns the operating symbol of its resistance.
        """
        import sympy as sp

        r_ref = self.parameter(value)
        params = {p.name: self.parameter(RESISTOR.flat_name(value, p.name)) for p in RESISTOR.params}
        resistance = sp.Symbol(label, positive=True)
        self.operating[resistance] = r_ref * (1 + params["tcr"] * (self.temp - self.t_ref))
        self.labels[label] = (_default_latex(label), f"TCR of {label}")
        across = self.voltages[a] - self.voltages[b]
        current = across / resistance
        self._leaving(a, current)
        self._leaving(b, -current)
        self.parts[label] = Part(label, RESISTOR, self.sense, {"a": a, "b": b}, {"R": resistance},
                                 {"v_r": across, "i_r": current},
                                 {p.name: RESISTOR.flat_name(value, p.name) for p in RESISTOR.params},
                                 value=value)
        return resistance

    def current_source(self, name, a, b, current):
        """An ideal reference current ``current`` flowing from node ``a`` to node ``b``.

        A part: it limits compliance when it runs out of headroom (``V_a < V_b``).
        """
        import sympy as sp

        self.current(a, b, current)
        if isinstance(current, sp.Symbol) and current in self.operating:
            self.sources.append(current)
        self.parts[name] = Part(name, SOURCE, self.sense, {"a": a, "b": b}, {"I": current},
                                {"v_across": self.voltages[a] - self.voltages[b]}, {})
        return current

    def current(self, a, b, current):
        """A current term ``current`` flowing a -> b that is no part of its own.

        For bookkeeping such as the base currents of further identical outputs.
        """
        self._leaving(a, current)
        self._leaving(b, -current)

    # -- what is derived from the equations --------------------------------------
    def closed_form(self, key, expression, label, assumes, source):
        """A named simplification: its output-current expression, assumptions and source.

        Each assumption must be registered (:func:`kit.words.assumption`) and
        the expression must not contain an operating symbol it excludes.
        """
        import sympy as sp

        for name in assumes:
            if name not in ASSUMPTIONS:
                raise ValueError(f"closed form {key}: unknown assumption {name!r}")
            names = {s.name for s in sp.sympify(expression).free_symbols}  # safe: our own expression
            problems = ASSUMPTIONS[name].problems(names)
            if problems:
                raise ValueError(f"closed form {key} assumes {name} but {'; '.join(problems)}")
        self.closed_forms.append(ClosedForm(key, expression, label, tuple(assumes), source))
        return expression

    def form(self, key):
        """The expression of closed form ``key`` declared earlier."""
        for form in self.closed_forms:
            if form.key == key:
                return form.expression
        raise KeyError(key)

    def extra(self, key, expression, label):
        """A further named expression at the exact point (a small-signal R_out form, say)."""
        self.extras[key] = expression
        self.extra_labels[key] = label
        return expression

    def start(self, node, expression):
        """Starting voltage of unknown ``node`` for the exact solve (an expression in ``q``)."""
        if node not in self.kcl and node not in self.driven:
            raise ValueError(f"start for {node}, which is not an unknown node")
        self.starts[node] = expression

    def valid_when(self, condition):
        """Points where ``condition`` (a SymPy boolean in ``x`` and ``q``) fails are refused.

        For self-biased cells that also solve at zero current.
        """
        self.valid = condition

    # -- result ----------------------------------------------------------------------
    def equations(self):
        """Collect the :class:`Equations`."""
        import sympy as sp

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
        out = self._output
        output_part = out["part"] or next(
            (p.name for p in self.parts.values() if p.kind.key not in ("resistor", "source")
             and out["node"] in p.nodes.values()), None)
        starts = {self.voltages[node].name: expression for node, expression in self.starts.items()}
        labels = dict(self.labels)
        sharing = {}
        for prefix, _, _ in self._role_latex.values():
            sharing[prefix] = sharing.get(prefix, 0) + 1
        for symbol, (prefix, latex, name) in self._role_latex.items():
            if sharing[prefix] > 1:
                labels[symbol] = (_subscripted(latex, name), labels[symbol][1])
        return Equations(
            polarity=self.polarity,
            unknowns=order,
            residuals=residuals,
            scales=scales,
            operating=dict(self.operating),
            parameters=list(self.parameters.values()),
            output=out["sign"] * sp.Add(*out["terms"]),
            load=self.voltages[out["node"]],
            output_sign=out["sign"],
            output_part=output_part,
            parts=dict(self.parts),
            closed_forms=list(self.closed_forms),
            extras=dict(self.extras),
            extra_labels=dict(self.extra_labels),
            labels=labels,
            starts=starts,
            valid=self.valid,
            sources=list(self.sources),
        )


def _subscripted(latex, name):
    """``I_{S}`` -> ``I_{S,Q2}``, ``\\beta`` -> ``\\beta_{Q2}``."""
    if latex.endswith("}") and "_{" in latex:
        return f"{latex[:-1]},{name}}}"
    return f"{latex}_{{{name}}}"


def _default_latex(name):
    """Textbook LaTeX of a circuit symbol name (``R_E`` -> ``R_{E}``, ``R1`` -> ``R_{1}``).

    Examples
    --------
    >>> _default_latex("R_E"), _default_latex("R1"), _default_latex("V_CC"), _default_latex("R")
    ('R_{E}', 'R_{1}', 'V_{CC}', 'R')
    """
    head, _, tail = name.partition("_")
    if not tail:
        letters = head.rstrip("0123456789")
        return f"{letters}_{{{head[len(letters):]}}}" if letters != head else head
    return f"{head}_{{{tail.upper() if head == 'V' else tail}}}"
