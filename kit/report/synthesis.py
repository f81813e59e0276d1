"""A synthesis result in words: plain text and HTML."""

from __future__ import annotations

from kit.quantities import format_quantity
from kit.report import tables


def value_text(design, name):
    unit = design.topology.value(name).unit
    return format_quantity(design.values[name], unit, 3) if unit else f"{design.values[name]:g}"


def text(result):
    lines = [f"standard values from {result.series}; ranked by extreme-value margin"]
    for rank, c in enumerate(result.candidates, 1):
        values = ", ".join(f"{k}={value_text(c.design, k)}" for k in c.design.values)
        lines.append(f"{rank:2}. {c.design.topology.key} ({c.design.polarity}) margin {c.margin:+.2%} "
                     f"{'PASS' if c.passed else 'FAIL'}  [{values}]")
    for key, reasons in result.infeasible.items():
        lines.append(f"  cannot meet: {key}: {'; '.join(reasons)}")
    return "\n".join(lines)


def html(result):
    rows = [[rank, c.design.topology.title, c.design.polarity.upper(),
             ", ".join(f"{k} {value_text(c.design, k)}" for k in c.design.values),
             format_quantity(c.nominal, "A", 4), f"{format_quantity(c.low, 'A', 4)} … {format_quantity(c.high, 'A', 4)}",
             f"{c.margin:+.2%}",
             tables.Raw(f'<span class="{"bb-ok" if c.passed else "bb-bad"}">{"pass" if c.passed else "fail"}</span>')]
            for rank, c in enumerate(result.candidates, 1)]
    table = tables.table(["#", "topology", "polarity", "values", "nominal", "worst case", "margin", ""],
                         rows, numeric=(4, 5, 6))
    bad = tables.table(["topology", "why it cannot meet the spec"],
                       [[k, "; ".join(v)] for k, v in result.infeasible.items()])
    return tables.wrap(tables.section(f"Synthesis ({result.series} values)", table)
                       + (tables.section("Cannot meet the spec", bad) if result.infeasible else ""))
