"""The four questions of a current source (:class:`kit.analysis.spread.Spread`) in words.

One table of rows ``(question, quantity, value, note)``, printed as aligned text
(to paste into a report) or as HTML; the budgets follow below it.
"""

from __future__ import annotations

from kit.quantities import format_quantity
from kit.report import tables
from kit.report.evaluation import tempco_by_mechanism, title


def _current(value):
    return format_quantity(value, "A", 4)


def _change(value, i_out):
    """A current change with its share of the nominal current."""
    return f"{format_quantity(value, 'A', 3)} ({value / i_out:+.3%})"


def _range(pair, unit, digits=4):
    return f"{format_quantity(pair[0], unit, digits)} … {format_quantity(pair[1], unit, digits)}"


def rows(result):
    """The table: ``[question, quantity, value, note]`` per row."""
    c, i = result.compliance, result.i_out
    table = [
        ["current", "I_out", _current(i), "exact solve at the design point"],
        ["compliance", "low edge", format_quantity(c.low.voltage, "V", 4), c.low.describe()],
        ["", "high edge", format_quantity(c.high.voltage, "V", 4), c.high.describe()],
    ]
    if result.beta_range is None:
        table.append(["gain spread", "β range", "—", result.beta_source])
    else:
        table += [
            ["gain spread", "β range", _range(result.beta_range, ""), f"{result.beta_source}; "
             f"every bipolar transistor ({', '.join(result.bipolar)}) at once"],
            ["", "base-current part", _change(result.base_current_part, i),
             "I_out(β high) − I_out(β low) at the design's load voltage"],
        ]
    table += [
        ["load voltage", "load range", _range(result.load_range, "V"), result.load_range_source],
        ["", "output-conductance part", _change(result.output_conductance_part, i),
         "I_out(high end) − I_out(low end) at nominal β"],
    ]
    if result.beta_range is None:
        table += [
            ["both together", "I_out range", _range(result.i_out_range, "A"), "over the load range"],
            ["temperature", "tempco", format_quantity(result.tempco_beta_constant, "ppm/K"),
             "(1/I) dI/dT, exact"],
        ]
    else:
        table += [
            ["both together", "I_out range", _range(result.i_out_range, "A"),
             "over the β range and the load range"],
            ["temperature", "tempco, β constant", format_quantity(result.tempco_beta_constant, "ppm/K"),
             "(1/I) dI/dT, exact"],
            ["", "tempco, β rising", format_quantity(result.tempco_beta_rising, "ppm/K"), result.beta_rise_law],
        ]
    if result.supply_range is not None:
        table.append(["supply", "supply part", _change(result.supply_part, i),
                      f"I_out at {_range(result.supply_range, 'V', 3)}, design's load voltage"])
    return table


def _budget_columns(result):
    return ("β constant", "β rising") if result.beta_range is not None else ("tempco",)


def _budget_rows(result):
    """``[mechanism, value per column]`` rows; one column when no gain is spread."""
    # Summed per mechanism (matched parts' ±140 000 ppm/K terms cancel), as in every other tempco table.
    constant, rising = ({f"{m} ({p})" if p else m: v for m, p, v in tempco_by_mechanism(b)}
                        for b in (result.budget_beta_constant, result.budget_beta_rising))
    labels = dict.fromkeys((*constant, *rising))
    columns = (constant, rising) if result.beta_range is not None else (constant,)
    return [[label, *(format_quantity(c.get(label, 0.0), "ppm/K") for c in columns)] for label in labels]


def text(result):
    """Aligned plain text: the table, then the tempco budgets."""
    table = rows(result)
    widths = [max(len(r[k]) for r in table) for k in range(3)]
    lines = [title(result.design), ""]
    for row in table:
        lines.append("  ".join(cell.ljust(w) for cell, w in zip(row[:3], widths)) + "  " + row[3])
    budget = _budget_rows(result)
    if budget:
        width = max(len(r[0]) for r in budget)
        lines += ["", f"{'tempco budget':<{width}}" + "".join(f"  {c:>12}" for c in _budget_columns(result))]
        lines += [f"{r[0]:<{width}}" + "".join(f"  {v:>12}" for v in r[1:]) for r in budget]
    return "\n".join(line.rstrip() for line in lines)


def html(result):
    """The same as HTML tables (record text escaped by the table helper)."""
    main = tables.table(["question", "quantity", "value", "how"], rows(result), numeric=(2,))
    parts = [tables.section(f"Spread — {title(result.design)}", main)]
    budget = _budget_rows(result)
    if budget:
        parts.append(tables.section("Tempco budget", tables.table(
            ["mechanism", *_budget_columns(result)], budget, numeric=(1, 2))))
    return tables.wrap("".join(parts))
