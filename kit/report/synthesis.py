"""A synthesis result in words: plain text and HTML.

Both say, with the ranking, what the analysis assumed where nobody wrote a
number (resistor tolerance and TCR, how the TCR box is centred,
self-heating, the E-series), which values were searched and which held,
where each held value came from, which held values are ideal, and which
spec entries did not apply to a topology.
"""

from __future__ import annotations

from kit.quantities import format_quantity
from kit.report import tables

SOURCE_WORDS = {"record": "from the record", "default": "topology default", "spec": "middle of the spec's range",
                "typical": "typical part"}
IDEAL_WORDS = {"reference current": "ideal reference current (from outside the circuit)",
               "reference voltage": "ideal set voltage (from outside the circuit)",
               "zero tolerance": "exact value (zero tolerance)",
               "zero drift": "no drift at all (zero temperature coefficient)"}
APPLIED_WORDS = {"absolute": "absolute, as written", "relative": "relative, moved with the chosen value",
                 "offset": "as an offset about the chosen value"}


def value_text(design, name):
    unit = design.topology.value(name).unit
    return format_quantity(design.values[name], unit, 3) if unit else f"{design.values[name]:g}"


def bound_text(design, bound):
    """``-2 mV … 2 mV``: a spec bound in its parameter's unit (bare numbers when it has none)."""
    words = design.vocabulary
    unit = words[bound["name"]].unit if bound["name"] in words else ""
    if unit in ("", "1"):
        return f"{bound['low']:g} … {bound['high']:g}"
    return f"{format_quantity(bound['low'], unit)} … {format_quantity(bound['high'], unit)}"


def _percent(fraction):
    return f"±{fraction * 100:.3g} %"


def default_lines(result):
    """``(what, whether written)`` per default the analysis applied."""
    lines = []
    for d in result.defaults:
        mark = "as written" if d["given"] else "DEFAULT, not written"
        name, value = d["name"], d["value"]
        if name == "resistor_tolerance":
            text = f"resistor tolerance {_percent(value)} (every resistor without its own)"
        elif name == "resistor_tcr":
            text = f"resistor TCR ±{value * 1e6:.3g} ppm/K, sign unknown (every resistor without its own)"
        elif name == "tcr_centre":
            own = ", ".join(f"{r} {v * 1e6:+.3g} ppm/K" for r, v in value.items() if v)
            text = ("TCR box centred on each resistor's own TCR: " + own + ", others 0" if own
                    else "TCR box centred on 0 ppm/K (no resistor's own TCR given)")
            mark = "from the record" if d["given"] else "DEFAULT, not written"
        elif name == "self_heating":
            text = ("self-heating: junction = ambient + θ_JA × dissipation" if value
                    else "no self-heating: junctions at ambient")
        elif name == "series":
            text = f"standard values from {value}" + ("" if d["given"] else
                                                       f" (customary for {_percent(result.tolerance)} parts)")
        else:
            text = f"{name} = {value}"
        lines.append((text, mark))
    return lines


def _held_text(c):
    by = {}
    for name, (_, source) in c.held.items():
        by.setdefault(source, []).append(name)
    for name, source in c.parts.items():
        by.setdefault(source, []).append(name)
    return "; ".join(f"{SOURCE_WORDS.get(s, s)}: {', '.join(names)}" for s, names in by.items())


def _candidate_lines(rank, c):
    values = ", ".join(f"{k}={value_text(c.design, k)}" for k in c.design.values)
    lines = [f"{rank:2}. {c.design.topology.key} ({c.design.polarity}) margin {c.margin:+.2%} "
             f"{'PASS' if c.passed else 'FAIL'}  [{values}]",
             f"      searched: {', '.join(c.searched)}",
             f"      held: {_held_text(c)}"]
    for name, why in c.ideal:
        lines.append(f"      IDEAL {name}: {IDEAL_WORDS.get(why, why)}")
    for b in c.bounds:
        lines.append(f"      bound {b['name']}: {bound_text(c.design, b)} ({APPLIED_WORDS[b['applied']]})")
    return lines


def text(result):
    lines = [f"standard values from {result.series}, resistors {_percent(result.tolerance)}; "
             "ranked by extreme-value margin", "assumed:"]
    lines += [f"  {what} [{mark}]" for what, mark in default_lines(result)]
    if result.self_contained:
        lines.append("self-contained:")
    elif not result.referenced:
        lines.append("no candidate meets the spec")
    for rank, c in enumerate(result.self_contained, 1):
        lines += _candidate_lines(rank, c)
    if result.referenced:
        lines.append("needing an external (ideal) reference, ranked apart:")
        for rank, c in enumerate(result.referenced, 1):
            lines += _candidate_lines(rank, c)
    for key, reasons in result.infeasible.items():
        lines.append(f"  cannot meet: {key}: {'; '.join(reasons)}")
    for key, entries in result.skipped.items():
        lines.append(f"  skipped for {key}: " + "; ".join(f"{e} ({why})" for e, why in entries))
    return "\n".join(lines)


def _rows(group):
    return [[rank, c.design.topology.title, c.design.polarity.upper(),
             ", ".join(f"{k} {value_text(c.design, k)}" for k in c.design.values),
             format_quantity(c.nominal, "A", 4), f"{format_quantity(c.low, 'A', 4)} … {format_quantity(c.high, 'A', 4)}",
             f"{c.margin:+.2%}",
             tables.Raw(f'<span class="{"bb-ok" if c.passed else "bb-bad"}">{"pass" if c.passed else "fail"}</span>'),
             ", ".join(c.searched), _held_text(c),
             "; ".join(f"{n}: {IDEAL_WORDS.get(w, w)}" for n, w in c.ideal)]
            for rank, c in enumerate(group, 1)]


def html(result):
    headers = ["#", "topology", "polarity", "values", "nominal", "worst case", "margin", "", "searched", "held",
               "ideal"]
    assumed = tables.table(["applied", ""], [list(line) for line in default_lines(result)])
    body = tables.section("Assumed", assumed)
    body += tables.section(f"Synthesis ({result.series} values, resistors {_percent(result.tolerance)})",
                           tables.table(headers, _rows(result.self_contained), numeric=(4, 5, 6)))
    if result.referenced:
        body += tables.section("Needing an external (ideal) reference",
                               tables.table(headers, _rows(result.referenced), numeric=(4, 5, 6)))
    if result.infeasible:
        bad = tables.table(["topology", "why it cannot meet the spec"],
                           [[k, "; ".join(v)] for k, v in result.infeasible.items()])
        body += tables.section("Cannot meet the spec", bad)
    if result.skipped:
        skipped = tables.table(["topology", "spec entry", "why it does not apply"],
                               [[k, e, why] for k, v in result.skipped.items() for e, why in v])
        body += tables.section("Spec entries skipped", skipped)
    return tables.wrap(body)
