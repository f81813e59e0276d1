"""The symbolic side of a topology, for reading in a notebook.

:func:`derivation` returns a :class:`Derivation`: the exact KCL residuals,
how the exact sensitivities follow from them (implicit function theorem),
every named simplification with its closed form, and closed-form
sensitivities differentiated by SymPy.  It is the twin of
:func:`kit.evaluate`, which evaluates the same expressions numerically; reports
render it (:mod:`kit.report`).

Examples
--------
>>> import kit
>>> from kit.analysis.derivation import derivation
>>> der = derivation(kit.design("divider_source"))
>>> der.closed_form("stiff_divider")
(R2*V_CC/(R1 + R2) - V_BE_on)/R_E
>>> der.sensitivity("stiff_divider", "beta_Q1")
0
"""

from __future__ import annotations

from functools import lru_cache

from kit.errors import ParameterError
from kit.model.codegen import latex
from kit.model.structure import structure


@lru_cache(maxsize=None)
def _equations(topology_key, polarity):
    from kit import topologies

    return topologies.get(topology_key).equations(polarity)


class Derivation:
    """Exact equations, closed forms and their symbolic sensitivities of one topology."""

    def __init__(self, topology, polarity):
        self.topology = topology
        self.polarity = polarity
        self.equations = _equations(topology.key, polarity)
        self.structure = structure(topology, polarity)

    def latex(self, expression):
        """LaTeX of an expression with the circuit's own symbol names."""
        return latex(expression, self.equations.labels)

    @property
    def unknowns_latex(self):
        return [self.latex(u) for u in self.equations.unknowns]

    def named_currents(self):
        """``[(symbol, LaTeX name, expression)]`` of every part current that is a case split.

        A MOSFET's drain current (both directions, above and below threshold,
        triode and saturation) nests four cases; written inside a node's
        current balance it makes a line no page can hold.  The balances name
        it (``I_{D,M1}``) and :attr:`laws_latex` writes it out once.
        """
        import sympy as sp

        out = []
        for name, part in self.equations.parts.items():
            for key, expression in part.q.items():
                if key.startswith("i_") and isinstance(expression, sp.Piecewise):
                    out.append((sp.Symbol(f"_named_{key}_{name}"), f"I_{{{key[2:].upper()},{name}}}", expression))
        return out

    @property
    def residuals_latex(self):
        """The exact KCL residuals, one LaTeX line per unknown node (case-split currents by name)."""
        named = self.named_currents()
        labels = dict(self.equations.labels) | {symbol.name: (text,) for symbol, text, _ in named}
        swap = {expression: symbol for symbol, _, expression in named}
        return [latex(r.subs(swap), labels) + " = 0" for r in self.equations.residuals]

    @property
    def laws_latex(self):
        """``I_{D,M1} = ...``: each part current the residuals name, written out in full."""
        return [f"{text} = {self.latex(expression)}" for _, text, expression in self.named_currents()]

    def closed_form(self, key):
        """SymPy expression of closed form ``key``."""
        for form in self.equations.closed_forms:
            if form.key == key:
                return form.expression
        raise ParameterError("no such closed form", parameter="key", value=key,
                             valid=", ".join(f.key for f in self.equations.closed_forms))

    def symbol(self, name):
        """The operating symbol called ``name`` (``"beta_Q1"``, ``"R_E"``, ``"V_T"``)."""
        for symbol in self.equations.operating:
            if symbol.name == name:
                return symbol
        raise ParameterError("no such operating symbol", parameter="name", value=name,
                             valid=", ".join(sorted(s.name for s in self.equations.operating)))

    def sensitivity(self, key, name):
        """d(closed form)/d(operating symbol), put over one denominator and factored."""
        import sympy as sp

        return sp.factor(sp.cancel(sp.diff(self.closed_form(key), self.symbol(name))))

    def forms_latex(self):
        """``[(FormInfo, LaTeX of I_out)]`` for every named simplification."""
        return [(self.structure.form(f.key), self.latex(f.expression)) for f in self.equations.closed_forms]


def derivation(design_or_topology, polarity=None):
    """The :class:`Derivation` of a design (or of a topology and polarity)."""
    if hasattr(design_or_topology, "structure") and hasattr(design_or_topology, "values"):
        return Derivation(design_or_topology.topology, design_or_topology.polarity)
    design_or_topology.check_polarity(polarity)
    return Derivation(design_or_topology, polarity)
