"""The plots a printed review shows, drawn for paper (no toolbar, legends below the frame).

Each function takes the kit's results and returns one Bokeh figure; the
numbers come from :func:`kit.analysis.evaluation.sweep` (one batched exact
solve per figure), nothing is computed here but ranges and scales.

* :func:`load_figure` -- I_out against load voltage over the working region,
  both compliance edges marked and named, the spec's load range shaded, at
  nominal and at the spec's gain and temperature extremes;
* :func:`dissipation_figure` -- each part's dissipation against load voltage
  with a transistor's allowance derated to the hottest ambient (linear to
  T_J(max) through θ_JA) and a resistor's rating;
* :func:`tempco_figure` -- the tempco budget as bars, one per mechanism;
* :func:`budget_figure` -- the worst case's error budget, each factor alone;
* :func:`histogram_figure` -- the Monte Carlo spread against the spec limits,
  with the yield.

Examples
--------
>>> import kit
>>> d = kit.design("divider_source")
>>> fig = load_figure(d, kit.evaluate(d), points=20)
>>> fig.toolbar_location is None, fig.yaxis[0].axis_label
(True, 'I_out (µA)')
"""

from __future__ import annotations

import numpy as np

from kit.quantities import format_quantity, format_temperature

WIDTH = 640
FRAME_HEIGHT = 240
POINTS = 240
PAD = 0.05  # fraction of the working region drawn beyond each edge


def _figure(title, x_label, y_label, **kwargs):
    from bokeh.plotting import figure

    from kit.panels.theme import style_figure

    kwargs.setdefault("frame_height", FRAME_HEIGHT)
    return style_figure(figure(width=WIDTH, title=title, x_axis_label=x_label, y_axis_label=y_label,
                               toolbar_location=None, **kwargs))


def _legend_below(fig):
    from kit.panels.theme import style_legend

    style_legend(fig)
    if fig.legend:
        fig.legend[0].click_policy = "none"  # paper: nothing to click
        fig.add_layout(fig.legend[0], "below")  # long names never cover the curves
    return fig


def load_axis(evaluation, points=POINTS):
    """Load voltages over the working region and :data:`PAD` of it beyond each edge."""
    low, high = evaluation.compliance.low.voltage, evaluation.compliance.high.voltage
    pad = PAD * max(high - low, 0.2)
    return np.linspace(low - pad, high + pad, points)


def _cases(design, spec):
    """``[(label, overrides)]``: nominal, then the spec's gain and temperature extremes."""
    cases = [("nominal", {})]
    if spec is None:
        return cases
    gains = {}
    for name, model in design.devices.items():
        bounds = spec.beta.get(name) or spec.beta.get(model.polarity)
        if bounds is not None and "beta_f" in model.values:
            gains[name] = bounds
    if gains:
        cases += [("β_F low (" + ", ".join(f"{n} {b[0]:g}" for n, b in gains.items()) + ")",
                   {f"{n}.beta_f": b[0] for n, b in gains.items()}),
                  ("β_F high (" + ", ".join(f"{n} {b[1]:g}" for n, b in gains.items()) + ")",
                   {f"{n}.beta_f": b[1] for n, b in gains.items()})]
    if spec.temp is not None:
        cases += [(f"ambient {format_temperature(t)}", {"temp": t}) for t in spec.temp]
    return cases


def _sweep_cases(design, v_load, cases):
    """One batched solve of every case along ``v_load``: ``[current array with gaps]``."""
    from kit.analysis.evaluation import sweep

    n = len(v_load)
    params = design.parameters()
    names = sorted({k for _, changes in cases for k in changes})
    overrides = {k: np.concatenate([np.full(n, changes.get(k, params[k])) for _, changes in cases])
                 for k in names}
    points = sweep(design, "v_load", np.tile(v_load, len(cases)), **overrides)
    return points, [slice(k * n, (k + 1) * n) for k in range(len(cases))]


def _edges(fig, evaluation, top):
    from bokeh.models import Label, Span

    from kit.panels.theme import EDGE

    c = evaluation.compliance
    for voltage, edge, align, y in ((c.low.voltage, c.low, "left", 0.04), (c.high.voltage, c.high, "right", 0.16)):
        fig.add_layout(Span(location=voltage, dimension="height", line_dash="dotted", line_color=EDGE))
        fig.add_layout(Label(x=voltage, y=y * top, x_offset=4 if align == "left" else -4, text_align=align,
                             text=f"{format_quantity(voltage, 'V', 3)}: {edge.describe()}",
                             text_font_size="10px", background_fill_color="white", background_fill_alpha=0.8))


def _spec_load(fig, spec, top):
    from bokeh.models import BoxAnnotation, Label

    from kit.panels.theme import SPEC_BAND

    if spec is None or spec.v_load is None:
        return
    fig.add_layout(BoxAnnotation(left=spec.v_load[0], right=spec.v_load[1], fill_alpha=0.6, fill_color=SPEC_BAND))
    fig.add_layout(Label(x=spec.v_load[0], y=top, x_offset=3, y_offset=-14, text="spec load range",
                         text_font_size="10px"))


def load_figure(design, evaluation, spec=None, *, points=POINTS):
    """I_out against load voltage over the working region, at nominal and the spec's extremes.

    Parameters
    ----------
    design : kit.model.design.Design
    evaluation : kit.analysis.evaluation.Evaluation
        ``kit.evaluate(design)``: its compliance edges bound the axis.
    spec : kit.analysis.spec.Spec, optional
        Adds curves at its gain (β_F) and ambient-temperature extremes and shades its load range.
    points : int
        Points per curve.
    """
    from bokeh.models import Range1d

    from kit.panels.theme import DASHES, FORMS, INK, current_scale

    v_load = load_axis(evaluation, points)
    cases = _cases(design, spec)
    swept, blocks = _sweep_cases(design, v_load, cases)
    scale, unit = current_scale(evaluation.i_out)
    low, high = evaluation.compliance.low.voltage, evaluation.compliance.high.voltage
    inside = (v_load >= low) & (v_load <= high)
    curves = [np.where(swept.converged[b], swept.i_out[b], np.nan) / scale for b in blocks]  # gaps, not junk
    top = max(float(np.nanmax(np.where(inside, c, np.nan))) for c in curves if np.any(np.isfinite(c[inside])))
    fig = _figure("I_out across compliance" + (" at the spec's extremes" if len(cases) > 1 else ""),
                  "load voltage V_load (V)", f"I_out ({unit})",
                  x_range=Range1d(v_load[0], v_load[-1]), y_range=Range1d(0, 1.1 * top))
    _spec_load(fig, spec, 1.1 * top)
    _edges(fig, evaluation, 1.1 * top)
    for k, ((label, _), y) in enumerate(zip(cases, curves)):
        named = {"legend_label": label} if len(cases) > 1 else {}  # one curve needs no legend
        fig.line(v_load, y, line_width=2.5 if k == 0 else 1.8, color=INK if k == 0 else FORMS[(k - 1) % len(FORMS)],
                 line_dash="solid" if k == 0 else DASHES[(k - 1) % len(DASHES)], **named)
    return _legend_below(fig)


def _allowances(design, spec):
    """``{part: (watts, words)}``: a transistor's allowance at the hottest ambient, a resistor's rating."""
    params = design.parameters()
    hottest = max(spec.temp) if spec is not None and spec.temp is not None else design.temp
    out = {}
    for name in design.devices:
        t_max, theta = params.get(f"{name}.t_j_max"), params.get(f"{name}.theta_ja")
        if t_max is not None and theta:
            out[name] = ((t_max - hottest) / theta,
                         f"{name} allowance at {format_temperature(hottest)} ambient")
    for name in design.topology.resistors:
        rated = params.get(f"p_rated_{name}")
        if rated and np.isfinite(rated):  # no rating given: infinite
            out[name] = (rated, f"{name} rating")
    return out


def dissipation_figure(design, evaluation, spec=None, *, points=POINTS):
    """Each part's dissipation against load voltage, with its derated allowance or rating.

    Parts that dissipate less than a thousandth of the largest are left out
    (a bias resistor next to a pass device would lie flat on the axis).
    """
    from bokeh.models import Range1d

    from kit.panels.theme import DASHES, FORMS, INK

    v_load = load_axis(evaluation, points)
    swept, _ = _sweep_cases(design, v_load, [("nominal", {})])
    powers = {name: np.where(swept.converged, p, np.nan) for name, p in swept.dissipation.items()}
    peak = max((float(np.nanmax(p)) for p in powers.values() if np.any(np.isfinite(p))), default=0.0)
    shown = {n: p for n, p in powers.items() if np.any(np.isfinite(p)) and np.nanmax(p) >= 1e-3 * peak}
    scale, unit = (1e-3, "mW") if peak < 1.0 else (1.0, "W")
    allowances = {n: a for n, a in _allowances(design, spec).items() if n in shown}
    # Show an allowance only where it is within reach of the curves (a 250 mW rating over µW is noise).
    near = {n: a for n, a in allowances.items() if 0 < a[0] <= 4 * max(peak, 1e-12)}
    top = max([peak] + [a[0] for a in near.values()]) / scale
    fig = _figure(f"Dissipation across compliance (ambient {format_temperature(design.temp)})",
                  "load voltage V_load (V)", f"power ({unit})",
                  x_range=Range1d(v_load[0], v_load[-1]), y_range=Range1d(0, 1.12 * top if top > 0 else 1))
    _spec_load(fig, spec, 1.12 * top)
    colours = (INK,) + FORMS
    for k, (name, p) in enumerate(sorted(shown.items(), key=lambda item: -np.nanmax(item[1]))):
        colour = colours[k % len(colours)]
        label = name
        if name in allowances and name not in near:  # said, though far above the curve
            watts, words = allowances[name]
            label += f" ({words}: {format_quantity(watts, 'W', 3)}, off the scale)"
        fig.line(v_load, p / scale, line_width=2.2, color=colour, legend_label=label)
        if name in near:
            watts, words = near[name]
            fig.line([v_load[0], v_load[-1]], [watts / scale] * 2, color=colour, line_width=1.5,
                     line_dash=DASHES[k % len(DASHES)], legend_label=f"{words}: {format_quantity(watts, 'W', 3)}")
    return _legend_below(fig)


def histogram_figure(worst):
    """The Monte Carlo spread of a worst case against the spec limits, with the yield in the title."""
    from bokeh.models import Label, Span

    from kit.panels.theme import LIMIT, current_scale
    from kit.panels.worst import histogram_columns

    carlo = worst.methods["Monte Carlo"]
    scale, unit = current_scale(worst.spec.i_target)
    bars = histogram_columns(worst, scale)
    fig = _figure(f"Monte Carlo: {carlo.detail['samples']} samples, yield {carlo.detail['yield']:.1%}",
                  f"I_out ({unit})", "samples")
    fig.quad(left=bars["left"], right=bars["right"], bottom=0, top=bars["top"], fill_color=bars["colour"],
             line_color="white")
    tallest = max(bars["top"], default=1)
    for limit, name in zip(worst.spec.limits, ("low limit", "high limit")):
        fig.add_layout(Span(location=limit / scale, dimension="height", line_dash="dashed", line_color=LIMIT))
        fig.add_layout(Label(x=limit / scale, y=tallest, y_offset=-14, x_offset=3 if name == "low limit" else -3,
                             text_align="left" if name == "low limit" else "right",
                             text=f"{name} {format_quantity(limit, 'A', 4)}", text_font_size="10px",
                             text_color=LIMIT))
    # The axis holds both spec limits whatever the spread.
    edges = list(bars["left"]) + list(bars["right"]) + [x / scale for x in worst.spec.limits]
    pad = 0.05 * (max(edges) - min(edges))
    fig.x_range.start, fig.x_range.end = min(edges) - pad, max(edges) + pad
    fig.y_range.start = 0
    return fig


def _bars(title, x_label, names, values, colours, texts):
    """Horizontal bars, largest at the top, each with its value written beside it."""
    from bokeh.models import ColumnDataSource, LabelSet, Range1d

    reach = max((abs(v) for v in values), default=1.0) or 1.0
    height = max(FRAME_HEIGHT // 2, 26 * len(names))
    fig = _figure(title, x_label, None, y_range=list(names), frame_height=height,
                  # room for the written values beside the bars; no empty negative side for swings
                  x_range=Range1d(min(0.0, min(values)) - (0.5 * reach if min(values) < 0 else 0.0),
                                  max(0.0, max(values)) + (0.7 * reach if max(values) > 0 else 0.0)))
    source = ColumnDataSource({"name": list(names), "value": list(values), "colour": list(colours),
                               "text": list(texts), "anchor": ["left" if v >= 0 else "right" for v in values],
                               "offset": [4 if v >= 0 else -4 for v in values]})
    fig.hbar(y="name", right="value", left=0, height=0.7, fill_color="colour", line_color=None, source=source)
    fig.add_layout(LabelSet(x="value", y="name", text="text", text_align="anchor", x_offset="offset",
                            y_offset=-5, text_font_size="10px", source=source))
    fig.ygrid.visible = False
    return fig


def tempco_figure(evaluation):
    """The tempco budget as bars, one per mechanism (matched parts' terms summed), the exact total on top.

    Examples
    --------
    >>> import kit
    >>> fig = tempco_figure(kit.evaluate(kit.design("divider_source")))
    >>> fig.y_range.factors[-1]
    'total (exact)'
    """
    from kit.panels.theme import LOWERS, RAISES, TOTAL
    from kit.report.evaluation import tempco_by_mechanism

    rows = sorted(((f"{m} ({p})" if p else m, v * 1e6) for m, p, v in tempco_by_mechanism(evaluation.tempco_budget)),
                  key=lambda row: abs(row[1]))
    rows.append(("total (exact)", evaluation.tempco * 1e6))
    names, values = [r[0] for r in rows], [r[1] for r in rows]
    colours = [RAISES if v >= 0 else LOWERS for v in values[:-1]] + [TOTAL]
    texts = [format_quantity(v * 1e-6, "ppm/K", 3) for v in values]
    return _bars(f"Tempco at {format_temperature(evaluation.design.temp)}, by mechanism",
                 "contribution to (1/I_out) dI_out/dT (ppm/K)", names, values, colours, texts)


def budget_figure(worst):
    """The worst case's error budget: what each factor alone does to the current (exact), largest at the top.

    Bars are coloured by kind (a part's spread, a condition of use, mismatch) and labelled with the swing
    and its share of the sum.
    """
    from kit.panels.theme import FORMS, INK, current_scale

    kinds = {"part": INK, "condition": FORMS[0], "mismatch": FORMS[2]}
    entries = sorted(worst.budget, key=lambda b: b.swing)
    scale, unit = current_scale(worst.spec.i_target)
    return _bars("Error budget: each factor alone, exact", f"largest change of I_out ({unit})",
                 [b.label for b in entries], [b.swing / scale for b in entries],
                 [kinds.get(b.kind, FORMS[1]) for b in entries],
                 [f"{format_quantity(b.swing, 'A', 3)} ({b.share:.0%}, {b.kind})" for b in entries])


def review_figures(design, evaluation, spec=None, worst=None):
    """The reviewer's plots in print order: load, dissipation, and the Monte Carlo spread if a worst case ran.

    Examples
    --------
    >>> import kit
    >>> d = kit.design("divider_source")
    >>> [f.title.text for f in review_figures(d, kit.evaluate(d))]
    ['I_out across compliance', 'Dissipation across compliance (ambient 25 °C)', 'Tempco at 25 °C, by mechanism']
    """
    figures = [load_figure(design, evaluation, spec), dissipation_figure(design, evaluation, spec),
               tempco_figure(evaluation)]
    if worst is not None and worst.budget:
        figures.append(budget_figure(worst))
    if worst is not None and "Monte Carlo" in worst.methods:
        figures.append(histogram_figure(worst))
    return figures


def show_review_figures(design, evaluation, spec=None, worst=None):
    """Show :func:`review_figures` in a notebook, one below the other."""
    from bokeh.io import show

    for fig in review_figures(design, evaluation, spec, worst):
        show(fig)
