"""Evaluate a design: the exact operating point and everything a review asks of it.

:func:`evaluate` solves the exact equations at the design point and returns
an :class:`Evaluation`: output current, compliance range with its limiting
transistor at each end, exact output resistance beside the hybrid-π form,
sensitivities to every parameter (absolute and normalised), the tempco and
its budget, transistor dissipation across the compliance range, and the
ledger — each named simplification's closed form, its value and its error
against the exact solution.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from kit import display
from kit.compliance import cause_text, check_edge, find_compliance, worst_margin
from kit.derive import compile_model
from kit.devices import KINDS
from kit.errors import OperatingPointError
from kit.quantities import format_quantity, format_temperature
from kit.solve import solve_points
from kit.topologies.base import ASSUMPTIONS

DISSIPATION_POINTS = 101
PPM = 1e6


def model_of(design):
    """The compiled exact model of a design's topology and polarity."""
    return compile_model(design.spec, design.polarity)


def sweep(design, name, values, **fixed):
    """Exact operating points with parameter ``name`` swept over ``values``.

    Other parameters may be overridden by keyword (flat names, e.g.
    ``**{"Q1.beta_f": 150}``).  Returns :class:`kit.solve.OperatingPoints`.

    Examples
    --------
    >>> import kit
    >>> d = kit.design("divider_source")
    >>> pts = sweep(d, "v_load", [4.0, 8.0])
    >>> bool(pts.converged.all()), bool(pts.i_out[1] > pts.i_out[0])
    (True, True)
    """
    from kit.designs import check_parameter_values

    changes = fixed | {name: values}
    for key, value in changes.items():
        check_parameter_values(design.spec, key, value)
    model = model_of(design)
    params = design.parameters() | {k: np.asarray(v, dtype=float) for k, v in changes.items()}
    return solve_points(model, params)


@dataclass(frozen=True)
class Sensitivity:
    """dI_out/dp of one parameter at the design point."""

    parameter: str
    value: float
    unit: str
    derivative: float  # A per unit of the parameter
    normalised: float  # (p / I) dI/dp; for temperature, (1/I) dI/dT in 1/K

    def to_dict(self):
        return dict(self.__dict__)


@dataclass(frozen=True)
class LedgerEntry:
    """One named simplification weighed against the exact solution."""

    key: str
    label: str
    assumptions: tuple
    source: str
    latex: str
    value: float
    error: float  # (closed form - exact) / exact
    sensitivities: dict  # parameter -> closed-form dI/dp
    tempco: float  # closed-form (1/I) dI/dT, 1/K

    def to_dict(self):
        out = dict(self.__dict__)
        out["assumptions"] = list(self.assumptions)
        return out


def _unit_of(design, name):
    spec = design.spec
    if name in {v.name for v in spec.values}:
        return spec.value_spec(name).unit
    if name == "temp":
        return "K"
    device, _, key = name.partition(".")
    return KINDS[spec.kind_of(device)].SENSITIVITY_PARAMETERS.get(key, "")


class Evaluation:
    """Everything :func:`evaluate` finds at one design point (see the module docstring).

    Attributes
    ----------
    design : kit.designs.Design
    points : kit.solve.OperatingPoints
        The exact operating point (one point).
    compliance : kit.compliance.Compliance
    """

    def __init__(self, design, points, compliance, edge):
        self.design = design
        self.points = points
        self.compliance = compliance
        self.edge = edge
        self.model = points.model

    # -- headline numbers ----------------------------------------------------
    @property
    def i_out(self):
        """Output current in A (exact)."""
        return float(self.points.i_out[0])

    @property
    def r_out(self):
        """Exact small-signal output resistance in Ω."""
        return float(self.points.r_out[0])

    @cached_property
    def r_out_forms(self):
        """Named small-signal forms of R_out evaluated at the exact operating point."""
        extras = self.model.extras(self.points.x, self.points.q)
        return {k: float(v[0]) for k, v in extras.items() if k.startswith("r_out")}

    @cached_property
    def regions(self):
        return {n: str(r[0]) for n, r in self.points.regions(self.edge, self.design.devices).items()}

    @cached_property
    def transistors(self):
        """Name -> dict of V_BE, V_CE, I_C, I_B, measured beta I_C/I_B and dissipation."""
        out = {}
        for name, j in self.points.junctions.items():
            values = {k: float(v[0]) for k, v in j.items()}
            if "i_b" in values:
                values["beta_measured"] = values["i_c"] / values["i_b"]
            values["dissipation"] = float(self.points.dissipation[name][0])
            out[name] = values
        return out

    def _kind(self, name):
        return KINDS[self.design.spec.kind_of(name)]

    # -- sensitivities -------------------------------------------------------
    @cached_property
    def _gradient(self):
        names = self.model.parameter_names
        return dict(zip(names, (float(v) for v in self.points.di_dp[:, 0])))

    def derivative(self, name):
        """Exact dI_out/dp of flat parameter ``name``."""
        return self._gradient[name]

    @cached_property
    def sensitivities(self):
        """Sensitivities to the values, supply, each transistor's beta_F and V_A, and temperature."""
        params = self.design.parameters()
        names = [v.name for v in self.design.spec.values if v.kind != "load"]
        for transistor in self.design.spec.transistors:
            kind = KINDS[self.design.spec.kind_of(transistor)]
            names += [f"{transistor}.{key}" for key in kind.SENSITIVITY_PARAMETERS]
        names.append("temp")
        out = []
        for name in names:
            d = self._gradient[name]
            scale = 1.0 if name == "temp" else params[name]
            normalised = scale * d / self.i_out if np.isfinite(scale) else 0.0
            out.append(Sensitivity(name, params[name], _unit_of(self.design, name), d, normalised))
        return out

    @property
    def tempco(self):
        """(1/I) dI/dT in 1/K (multiply by 1e6 for ppm/K)."""
        return self._gradient["temp"] / self.i_out

    @cached_property
    def tempco_budget(self):
        """The tempco split by mechanism: list of ``(label, contribution in 1/K)``."""
        temp_index = self.model.parameter_index["temp"]
        di_dq = self.points.di_dq[:, 0]
        dq_dt = self.points.dq_dp[:, temp_index, 0]
        out = []
        for name, a, b in zip(self.model.operating_names, di_dq, dq_dt):
            if b != 0 and a != 0:
                label = self.design.spec.budget_labels.get(name) or _budget_label(name)
                out.append((label, float(a * b / self.i_out)))
        return sorted(out, key=lambda item: -abs(item[1]))

    # -- ledger ----------------------------------------------------------------
    @cached_property
    def ledger(self):
        q = self.points.q
        values = self.model.closed_forms(q)
        grads = self.model.closed_form_gradients(q)
        dq_dp = self.points.dq_dp[..., 0]
        latex = self.model.manifest.get("latex", {})
        names = self.model.parameter_names
        wanted = [s.parameter for s in self.sensitivities]
        out = []
        for simplification in self.design.spec.simplifications:
            value = float(values[simplification.key][0])
            di_dp = grads[simplification.key][:, 0] @ dq_dp
            gradient = dict(zip(names, (float(v) for v in di_dp)))
            out.append(LedgerEntry(
                key=simplification.key, label=simplification.label,
                assumptions=tuple(ASSUMPTIONS[a] for a in simplification.assumptions),
                source=simplification.source, latex=latex.get(simplification.key, ""),
                value=value, error=(value - self.i_out) / self.i_out,
                sensitivities={n: gradient[n] for n in wanted},
                tempco=gradient["temp"] / value if value else 0.0,
            ))
        return out

    # -- dissipation -----------------------------------------------------------
    @cached_property
    def dissipation_sweep(self):
        """Load voltages across compliance and each transistor's dissipation there."""
        v_load = np.linspace(self.compliance.low.voltage, self.compliance.high.voltage,
                             DISSIPATION_POINTS)
        pts = sweep(self.design, "v_load", v_load)
        return v_load, {n: p for n, p in pts.dissipation.items()}

    @cached_property
    def max_dissipation(self):
        """``(transistor, watts, load voltage)`` of the largest dissipation across compliance."""
        v_load, power = self.dissipation_sweep
        best = max(power, key=lambda n: power[n].max())
        k = int(np.argmax(power[best]))
        return best, float(power[best][k]), float(v_load[k])

    # -- output ------------------------------------------------------------------
    def to_dict(self):
        transistor, watts, at = self.max_dissipation
        return {
            "design": self.design.to_dict(),
            "i_out": self.i_out,
            "compliance": self.compliance.to_dict(),
            "r_out": self.r_out,
            "r_out_forms": self.r_out_forms,
            "tempco_ppm_per_k": self.tempco * PPM,
            "tempco_budget_ppm_per_k": {label: v * PPM for label, v in self.tempco_budget},
            "sensitivities": [s.to_dict() for s in self.sensitivities],
            "transistors": {n: v | {"region": self.regions[n]} for n, v in self.transistors.items()},
            "max_dissipation": {"transistor": transistor, "watts": watts, "v_load": at},
            "ledger": [e.to_dict() for e in self.ledger],
            "node_voltages": dict(zip(self.model.unknowns, (float(v) for v in self.points.x[:, 0]))),
        }

    def headline(self):
        """Label -> formatted text of the numbers a reviewer reads first."""
        c = self.compliance
        transistor, watts, at = self.max_dissipation
        return {
            "I_out": format_quantity(self.i_out, "A", 4),
            "compliance": f"{format_quantity(c.low.voltage, 'V')} … {format_quantity(c.high.voltage, 'V')}",
            "R_out": _resistance(self.r_out),
            "tempco": format_quantity(self.tempco, "ppm/K"),
            "dissipation": f"{format_quantity(self.transistors[self.design.spec.output_transistor]['dissipation'], 'W')}"
                           f" now, {format_quantity(watts, 'W')} max ({transistor} at {format_quantity(at, 'V')})",
        }

    def text(self):
        """A plain-text report (the CLI prints it)."""
        lines = [f"{self.design.spec.title} ({self.design.spec.polarity_label(self.design.polarity)})"
                 + (f" — {self.design.title}" if self.design.title else ""),
                 f"at {format_temperature(self.design.temp)}"]
        for label, value in self.headline().items():
            lines.append(f"  {label:<12} {value}")
        c = self.compliance
        lines.append(f"  low edge     {c.low.describe()}; high edge {c.high.describe()}")
        for key, value in self.r_out_forms.items():
            lines.append(f"  {key:<12} {_resistance(value)}")
        lines.append("transistors")
        for name, t in self.transistors.items():
            lines.append(f"  {name}: {self.regions[name]}, {self._kind(name).describe(t)}")
        lines.append("sensitivities            dI/dp           S = (p/I) dI/dp")
        for s in self.sensitivities:
            unit = "A/K" if s.parameter == "temp" else (f"A/{s.unit}" if s.unit else "A")
            norm = format_quantity(s.normalised, "ppm/K") if s.parameter == "temp" else f"{s.normalised:+.4f}"
            lines.append(f"  {s.parameter:<14} {s.derivative:+.4e} {unit:<6} {norm}")
        lines.append("tempco budget")
        for label, value in self.tempco_budget:
            lines.append(f"  {label:<28} {format_quantity(value, 'ppm/K')}")
        lines.append("ledger (closed form vs exact)")
        for e in self.ledger:
            lines.append(f"  {e.label:<40} {format_quantity(e.value, 'A', 4):>10}  error {e.error:+.3%}")
        for note in self.design.spec.notes:
            lines.append(f"note: {note}")
        return "\n".join(lines)

    def _repr_html_(self):
        head = display.table(["quantity", "value"], list(self.headline().items()), numeric=(1,))
        c = self.compliance
        edges = display.table(["edge", "load voltage", "limited by"], [
            ["low", format_quantity(c.low.voltage, "V"), c.low.describe()],
            ["high", format_quantity(c.high.voltage, "V"), c.high.describe()],
        ], numeric=(1,))
        forms = display.table(["output resistance", "value"],
                              [["exact (from dI/dV_load)", _resistance(self.r_out, 5)]]
                              + [[self.design.spec.extras.get(k, k), _resistance(v, 5)]
                                 for k, v in self.r_out_forms.items()], numeric=(1,))
        transistors = display.table(
            ["transistor", "region", "operating point", "P_D"],
            [[n, self.regions[n], self._kind(n).describe(t), format_quantity(t["dissipation"], "W")]
             for n, t in self.transistors.items()], numeric=(3,))
        sens = display.table(
            ["parameter", "value", "dI/dp", "S = (p/I)·dI/dp"],
            [[s.parameter, _format_value(s), f"{s.derivative:.4g}",
              format_quantity(s.normalised, "ppm/K") if s.parameter == "temp" else f"{s.normalised:+.4f}"]
             for s in sorted(self.sensitivities, key=lambda s: -abs(s.normalised))], numeric=(1, 2, 3))
        budget = display.table(["mechanism", "tempco"],
                               [[label, format_quantity(v, "ppm/K")] for label, v in self.tempco_budget]
                               + [["total", format_quantity(self.tempco, "ppm/K")]], numeric=(1,))
        ledger = display.table(
            ["simplification", "closed form", "value", "error vs exact", "tempco", "assumes"],
            [[e.label, display.Raw(f"$${e.latex}$$"), format_quantity(e.value, "A", 4), f"{e.error:+.3%}",
              format_quantity(e.tempco, "ppm/K"), "; ".join(e.assumptions)] for e in self.ledger],
            numeric=(2, 3, 4))
        title = f"{self.design.spec.title} ({self.design.spec.polarity_label(self.design.polarity)})"
        if self.design.title:
            title = f"{self.design.title} — {title}"
        body = (display.section(title, head) + display.section("Compliance", edges)
                + display.section("Output resistance", forms) + display.section("Transistors", transistors)
                + display.section("Sensitivities (exact, implicit function theorem)", sens)
                + display.section("Tempco budget", budget)
                + display.section("Ledger: simplifications against the exact solution", ledger))
        if self.design.spec.notes:
            body += display.section("Design notes", "".join(f"<p>{display.escape(n)}</p>"
                                                            for n in self.design.spec.notes))
        return display.wrap(body)

    def _repr_latex_(self):
        rows = [rf"\text{{{e.label}}}: & {e.latex} & \text{{error }} {e.error:+.3%} \\".replace("%", r"\%")
                for e in self.ledger]
        return r"$$\begin{aligned}" + "\n".join(rows) + r"\end{aligned}$$"


def _resistance(value, digits=3):
    """An output resistance as text; an ideal (infinite) one as ∞."""
    return "∞ Ω" if np.isinf(value) else format_quantity(value, "Ω", digits)


def _format_value(s):
    if s.parameter == "temp":
        return format_temperature(s.value)
    if not np.isfinite(s.value):
        return "∞"
    return format_quantity(s.value, s.unit) if s.unit else f"{s.value:g}"


def _budget_label(name):
    if name == "V_T":
        return "thermal voltage V_T = kT/q"
    for kind in KINDS.values():
        for prefix, text in kind.BUDGET_LABELS.items():
            if name.startswith(prefix):
                return f"{text} of {name[len(prefix):]}"
    return TEMPERATURE_LABELS.get(name, f"TCR of {name}")


# Operating values with a temperature law of their own (topologies add theirs here
# through Topology.budget_labels).
TEMPERATURE_LABELS = {"V_BE_on": "hand-analysis V_BE(on)"}


def evaluate(design, *, edge="vce_sat"):
    """Solve a design exactly and weigh everything a review asks of it.

    Parameters
    ----------
    design : kit.designs.Design
    edge : {"vce_sat", "vcb_zero"}
        Saturation criterion for regions and compliance.

    Returns
    -------
    Evaluation

    Raises
    ------
    kit.errors.OperatingPointError
        If the load voltage is outside compliance (``parameter="v_load"``) or the
        supply cannot turn the circuit on (``parameter="v_supply"``).
    kit.errors.ConvergenceError
        If the exact solve did not converge.
    """
    check_edge(edge)
    model = model_of(design)
    values = design.parameters()
    points = solve_points(model, values).require("design point")
    try:
        compliance = find_compliance(model, values, design.devices, edge=edge)
    except OperatingPointError as err:
        raise _supply_error(model, values, design, edge) from err
    v_load = values["v_load"]
    worst, keys = worst_margin(points, design.devices, edge)
    if worst[0] < 0 or not compliance.contains(v_load):
        transistor, cause = keys[0]
        raise OperatingPointError(
            f"load voltage outside compliance: {transistor} {cause_text(model, transistor, cause)} here",
            parameter="v_load", value=v_load,
            valid=f"{compliance.low.voltage:.4g} … {compliance.high.voltage:.4g} V")
    return Evaluation(design, points, compliance, edge)


def _supply_error(model, values, design, edge):
    """The error for a design no load voltage can serve, with the supply it would need."""
    spec = design.spec.value_spec("v_supply")
    trial = np.geomspace(max(values["v_supply"], spec.low), spec.high, 60)
    points = solve_points(model, values | {"v_supply": trial})
    worst, _ = worst_margin(points, design.devices, edge)
    good = np.flatnonzero(worst >= 0)
    if good.size:
        return OperatingPointError(
            "too low to bias the transistors in forward active", parameter="v_supply",
            value=values["v_supply"], valid=f"≥ {trial[good[0]]:.3g} V at v_load = {values['v_load']:.3g} V")
    return OperatingPointError(
        "no load voltage and no higher supply bias the transistors in forward active; "
        "check the bias resistors", parameter="v_supply", value=values["v_supply"],
        valid="a supply and bias that turn the circuit on")
