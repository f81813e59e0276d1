"""An evaluation in words: headline, plain text, HTML and LaTeX.

Every number comes from :class:`kit.analysis.evaluation.Evaluation`; this
module only chooses units, digits and words.  Each kind of part speaks its
own words (regions, what limits it); MOSFET designs never read bipolar ones.
"""

from __future__ import annotations

import math

from kit.quantities import format_quantity, format_temperature
from kit.report import tables
from kit.report.units import format_with_unit, per


def title(design):
    """``"Divider-biased emitter-degenerated source (NPN) — bridge excitation"``."""
    name = f"{design.topology.title} ({design.polarity.upper()})"
    return f"{name} — {design.title}" if design.title else name


def resistance(value, digits=3):
    """An output resistance as text; an ideal (infinite) one as ∞."""
    return "∞ Ω" if math.isinf(value) else format_quantity(value, "Ω", digits)


def headline(evaluation):
    """Label -> formatted text of the numbers a reviewer reads first."""
    c = evaluation.compliance
    part, watts, at = evaluation.max_dissipation
    output = evaluation.design.structure.output_part
    now = evaluation.parts[output].dissipation if output in evaluation.parts else None
    dissipation = f"{format_quantity(watts, 'W')} max ({part} at {format_quantity(at, 'V')})"
    if now is not None:
        dissipation = f"{format_quantity(now, 'W')} now, " + dissipation
    return {
        "I_out": format_quantity(evaluation.i_out, "A", 4),
        "compliance": f"{format_quantity(c.low.voltage, 'V')} … {format_quantity(c.high.voltage, 'V')}",
        "R_out": resistance(evaluation.r_out),
        "tempco": format_quantity(evaluation.tempco, "ppm/K"),
        "dissipation": dissipation,
    }


def tempco_by_mechanism(budget):
    """The tempco budget summed per mechanism: ``(mechanism, parts, contribution in 1/K)``.

    Matched parts' terms of one mechanism (a mirror's two saturation
    currents, ±140 000 ppm/K each) cancel; the reader sees what is left.

    Examples
    --------
    >>> tempco_by_mechanism([("saturation current I_S of Q2", 0.14), ("saturation current I_S of Q1", -0.14),
    ...                      ("TCR of r_e", -4e-5), ("set voltage V_SET", 2e-5)])
    [('saturation current I_S', 'Q2, Q1', 0.0), ('TCR', 'r_e', -4e-05), ('set voltage V_SET', '', 2e-05)]
    """
    groups = {}
    for label, value in budget:
        mechanism, of, part = label.rpartition(" of ")
        if not of:
            mechanism, part = label, ""
        parts, total = groups.get(mechanism, ([], 0.0))
        groups[mechanism] = (parts + ([part] if part else []), total + value)
    return [(mechanism, ", ".join(parts), total) for mechanism, (parts, total) in groups.items()]


def _value(evaluation, s):
    if s.parameter == "temp":
        return format_temperature(s.value)
    if not math.isfinite(s.value):
        return "∞"
    return format_quantity(s.value, s.unit) if s.unit else f"{s.value:g}"


def _derivative(s):
    # A current over a current (a mirror's ratio) keeps its A/A rather than reading as a bare number.
    unit = per("A", "K" if s.parameter == "temp" else s.unit) or (f"A/{s.unit}" if s.unit else "")
    # A unit with a power gets no prefix: "-415 mV²" would read as (mV)², a million times too small.
    return format_with_unit(s.derivative, unit, 3) if unit else f"{s.derivative:.4g}"


def _normalised(s):
    return format_quantity(s.normalised, "ppm/K") if s.parameter == "temp" else f"{s.normalised:+.4f}"


def _electrical_range(evaluation):
    """Words for the range self-heating cut, or "" when it cut nothing."""
    electrical = getattr(evaluation, "electrical_compliance", None)
    c = evaluation.compliance
    if electrical is None or electrical == c:
        return ""
    return (f"electrically {format_quantity(electrical.low.voltage, 'V')} … "
            f"{format_quantity(electrical.high.voltage, 'V')} ({electrical.low.describe()}; "
            f"{electrical.high.describe()}); thermal runaway ends it sooner")


def _electrical_rows(evaluation):
    """The table row of the range before self-heating cut it (none when it cut nothing)."""
    electrical = getattr(evaluation, "electrical_compliance", None)
    if not _electrical_range(evaluation):
        return []
    return [["without self-heating", f"{format_quantity(electrical.low.voltage, 'V')} … "
             f"{format_quantity(electrical.high.voltage, 'V')}",
             f"{electrical.low.describe()}; {electrical.high.describe()}"]]


def _describe_part(evaluation, name):
    part = evaluation.design.structure.part(name)
    return part.kind.describe(evaluation.parts[name].quantities)


def text(evaluation):
    """A plain-text report (the CLI prints it)."""
    design = evaluation.design
    lines = [title(design), f"at {format_temperature(design.temp)}"]
    for label, value in headline(evaluation).items():
        lines.append(f"  {label:<12} {value}")
    c = evaluation.compliance
    lines.append(f"  low edge     {c.low.describe()}; high edge {c.high.describe()}")
    cut = _electrical_range(evaluation)
    if cut:
        lines.append(f"  {'':<12} {cut}")
    structure = design.structure
    for key, value in evaluation.r_out_forms.items():  # beside the exact R_out above
        lines.append(f"  {'':<12} {resistance(value)}: {structure.extra_label(key)}")
    lines.append("parts")
    for name, p in evaluation.parts.items():
        lines.append(f"  {name}: {p.region}, {_describe_part(evaluation, name)}")
    lines.append(f"{'sensitivities':<17}{'dI/dp':>16}  S = (p/I) dI/dp")  # over the columns below
    for s in evaluation.sensitivities:
        lines.append(f"  {s.parameter:<14} {_derivative(s):>16}  {_normalised(s)}")
    # Summed per mechanism as in the notebook's table: matched parts' terms
    # (±34 000 ppm/K from two saturation currents) cancel before the reader sees them.
    lines.append("tempco budget by mechanism")
    for mechanism, parts, value in tempco_by_mechanism(evaluation.tempco_budget):
        label = f"{mechanism} ({parts})" if parts else mechanism
        lines.append(f"  {label:<40} {format_quantity(value, 'ppm/K'):>12}")
    lines.append(f"  {'total':<40} {format_quantity(evaluation.tempco, 'ppm/K'):>12}")
    lines.append("ledger (closed form vs exact)")
    for e in evaluation.ledger:
        lines.append(f"  {e.label:<48} {format_quantity(e.value, 'A', 4):>10}  error {e.error:+.3%}")
    for label, why in evaluation.ledger_undefined:
        lines.append(f"  {label:<48} {why}")
    for note in design.topology.notes:
        lines.append(f"note: {note}")
    return "\n".join(lines)


def html(evaluation):
    """The rich display of an evaluation in a notebook."""
    design = evaluation.design
    structure = design.structure
    head = tables.table(["quantity", "value"], list(headline(evaluation).items()), numeric=(1,))
    c = evaluation.compliance
    edges = tables.table(["edge", "load voltage", "limited by"], [
        ["low", format_quantity(c.low.voltage, "V"), c.low.describe()],
        ["high", format_quantity(c.high.voltage, "V"), c.high.describe()],
    ] + _electrical_rows(evaluation), numeric=(1,))
    forms = tables.table(["output resistance", "value"],
                         [["exact (from dI/dV_load)", resistance(evaluation.r_out, 5)]]
                         + [[structure.extra_label(k), resistance(v, 5)]
                            for k, v in evaluation.r_out_forms.items()], numeric=(1,))
    parts = tables.table(
        ["part", "region", "operating point", "P_D"],
        [[n, p.region, _describe_part(evaluation, n), format_quantity(p.dissipation, "W")]
         for n, p in evaluation.parts.items()], numeric=(3,))
    sens = tables.table(
        ["parameter", "value", "dI/dp", "S = (p/I)·dI/dp"],
        [[s.parameter, _value(evaluation, s), _derivative(s), _normalised(s)]
         for s in sorted(evaluation.sensitivities, key=lambda s: -abs(s.normalised))], numeric=(1, 2, 3))
    budget = tables.table(["mechanism", "parts", "tempco"],
                          [[m, parts, format_quantity(v, "ppm/K")]
                           for m, parts, v in tempco_by_mechanism(evaluation.tempco_budget)]
                          + [["total", "", format_quantity(evaluation.tempco, "ppm/K")]], numeric=(2,))
    ledger = tables.table(
        ["simplification", "closed form", "value", "error vs exact", "tempco", "assumes"],
        [[e.label, tables.Raw(f"$${e.latex}$$"), format_quantity(e.value, "A", 4), f"{e.error:+.3%}",
          format_quantity(e.tempco, "ppm/K"), "; ".join(e.assumptions)] for e in evaluation.ledger],
        numeric=(2, 3, 4))
    if evaluation.ledger_undefined:
        ledger += "".join(f"<p>{tables.escape(label)}: {tables.escape(why)}.</p>"
                          for label, why in evaluation.ledger_undefined)
    body = (tables.section(title(design), head) + tables.section("Compliance", edges)
            + tables.section("Output resistance", forms) + tables.section("Parts", parts)
            + tables.section("Sensitivities (exact, implicit function theorem)", sens)
            + tables.section("Tempco budget by mechanism", budget)
            + tables.section("Ledger: simplifications against the exact solution", ledger))
    if design.topology.notes:
        body += tables.section("Design notes", "".join(f"<p>{tables.escape(n)}</p>" for n in design.topology.notes))
    return tables.wrap(body)


def latex(evaluation):
    """The ledger as one aligned LaTeX block."""
    from kit.safety import latex_text

    rows = []
    for e in evaluation.ledger:
        error = f"{e.error:+.3%}".replace("%", r"\%")
        rows.append(rf"\text{{{latex_text(e.label)}}}: & {e.latex} & \text{{error }} {error} \\")
    return r"$$\begin{aligned}" + "\n".join(rows) + r"\end{aligned}$$"
